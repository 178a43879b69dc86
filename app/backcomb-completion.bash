# Bash completion for backcomb: the commands, each command's options, case
# files (*.prm) and folders, and the case-file entry paths after --set,
# --vary, --in-step, --uncertain and --fit, also inside an opened quote: --set "Absorber/<TAB>.
#
# Load it in a shell:  source app/backcomb-completion.bash
# or install it (cmake --install) to share/bash-completion/completions/.
# The entry paths come from the program itself (`backcomb template --paths`),
# so they always match the version that is called.

_backcomb_options()
{
  case $1 in
    template) echo "--paths --help" ;;
    mesh) echo "--set --out --quiet --help" ;;
    solve) echo "--set --out --quiet --log --help" ;;
    sweep) echo "--vary --in-step --uncertain --uncertain-from --samples --sampling --seed --band --set --out --quiet --task --of --retry-failed --help" ;;
    upgrade) echo "--help" ;;
    merge) echo "--quiet --help" ;;
    calibrate) echo "--data --fit --set --loss --iterations --out --quiet --help" ;;
  esac
}

# COMPREPLY: the entry paths that start with $1 (without the quote a user
# may have opened), each followed by "=".
_backcomb_entry_paths()
{
  local program=$1 cur=$2 quote=""
  if [[ $cur == \"* || $cur == \'* ]]; then
    quote=${cur:0:1}
    cur=${cur:1}
  fi
  local paths
  paths=$("$program" template --paths 2>/dev/null) || return
  local path
  COMPREPLY=()
  while IFS= read -r path; do
    if [[ $path == "$cur"* ]]; then
      if [[ -n $quote ]]; then
        COMPREPLY+=("$path=") # readline keeps the spaces inside the quote
      else
        COMPREPLY+=("$(printf '%q' "$path")=")
      fi
    fi
  done <<<"$paths"
  compopt -o nospace 2>/dev/null
}

_backcomb()
{
  local cur=${COMP_WORDS[COMP_CWORD]}
  local prev=""
  ((COMP_CWORD > 0)) && prev=${COMP_WORDS[COMP_CWORD - 1]}
  local commands="template mesh solve sweep upgrade merge calibrate"
  COMPREPLY=()
  if ((COMP_CWORD == 1)); then
    mapfile -t COMPREPLY < <(compgen -W "$commands --help --version" -- "$cur")
    return
  fi
  local command=${COMP_WORDS[1]}
  case $prev in
    --set | --vary | --in-step | --uncertain | --fit)
      _backcomb_entry_paths "${COMP_WORDS[0]}" "$cur"
      return
      ;;
    --out | --uncertain-from)
      mapfile -t COMPREPLY < <(compgen -d -- "$cur")
      return
      ;;
    --log | --data)
      mapfile -t COMPREPLY < <(compgen -f -- "$cur")
      return
      ;;
    --task | --of | --iterations | --samples | --seed | --band)
      return
      ;;
    --loss)
      mapfile -t COMPREPLY < <(compgen -W "none huber cauchy" -- "$cur")
      return
      ;;
    --sampling)
      mapfile -t COMPREPLY < <(compgen -W "sobol latin" -- "$cur")
      return
      ;;
  esac
  if [[ $cur == -* ]]; then
    mapfile -t COMPREPLY < <(compgen -W "$(_backcomb_options "$command")" -- "$cur")
    return
  fi
  case $command in
    merge)
      mapfile -t COMPREPLY < <(compgen -d -- "$cur")
      ;;
    mesh | solve | sweep | upgrade | calibrate)
      mapfile -t COMPREPLY < <(compgen -d -- "$cur"; compgen -f -X '!*.prm' -- "$cur")
      ;;
  esac
}

complete -F _backcomb backcomb
