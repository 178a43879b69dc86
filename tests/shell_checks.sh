# Helpers sourced by the shell tests (sweep_cli.sh, disk_full.sh).

fail() {
  echo "FAIL: $*" >&2
  exit 1
}

# Runs a command (output to out.log) and checks its exit code.
expect_exit() {
  local want=$1
  shift
  local got=0
  "$@" >out.log 2>&1 || got=$?
  if ((got != want)); then
    cat out.log >&2
    fail "expected exit $want, got $got: $*"
  fi
}
