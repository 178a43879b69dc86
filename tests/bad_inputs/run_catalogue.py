#!/usr/bin/env python3
"""Runs the catalogue of bad inputs through the real backcomb binary.

Each row of catalogue.tsv names a command line (the arguments after
`backcomb`), the exit code it must end with and fragments that its standard
error must contain. For every row this driver

  * makes a fresh temporary folder, which is also the working directory of
    the run (so an output folder created by mistake under its default name
    is caught as well),
  * substitutes the placeholders in the arguments and in the fragments:
      {case}  this folder's ID.prm (the case file of the row),
      {out}   TMP/out, a path that does not exist before the run,
      {dir}   this folder (for the shared files in data/),
      {tmp}   the temporary folder,
      {case_copy}  "case.prm": ID.prm copied into the temporary folder and
                   named relative to it (for rows about the file's own name),
      {xNN}   the single byte with hexadecimal value NN (e.g. {xB5}, a
              Latin-1 micro sign) in an argument, for rows about bytes that
              are not UTF-8 (catalogue.tsv itself is UTF-8),
  * runs the binary with a time limit and checks: no crash (no signal, no
    "Segmentation fault", "Aborted" or "terminate called" on stderr), the
    exit code, every fragment (fragments are separated by "&&"), and, for
    usage and input errors (exit codes 1 and 2), that nothing at all was
    written: neither {out} nor anything else in the temporary folder.

A run may take at most 4 GiB of address space, so that an input that makes
the mesher or solver grow without bound fails here (as a crash) instead of
taking the memory of a shared machine. A binary built with AddressSanitizer
reserves terabytes of address space for its shadow memory and cannot start
under that limit: --no-memory-limit drops it (CMake passes it when
BACKCOMB_SANITIZE is on). Sanitizer reports on stderr count as crashes.

Rows whose fifth column starts with "known bug" document an expectation
that the program does not meet yet; they fail like any other row unless
--skip-known-bugs is given.

Rows run in parallel, two at a time by default (--jobs N; the machines
have two cores); the report keeps the catalogue's order.

Usage: run_catalogue.py --binary PATH [--only ID] [--skip-known-bugs]
                        [--no-memory-limit] [--jobs N] [-v]
Exit status: 0 if every row passed, 1 otherwise.
"""

import argparse
import concurrent.futures
import os
import re
import shlex
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
CRASH_MARKERS = ("Segmentation fault", "Aborted", "terminate called",
                 "ERROR: AddressSanitizer", "ERROR: LeakSanitizer", ": runtime error: ")
TIMEOUT_S = 60
MEMORY_LIMIT_BYTES = 4 << 30


def limit_memory():
    # Runs in the child before exec; the resource module exists on POSIX only.
    try:
        import resource
        resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT_BYTES, MEMORY_LIMIT_BYTES))
    except (ImportError, ValueError, OSError):
        pass


class Row:
    def __init__(self, fields, line):
        if len(fields) < 4:
            raise ValueError("catalogue.tsv:%d: expected at least 4 tab-separated columns" % line)
        self.id = fields[0]
        self.args = fields[1]
        self.exit_code = int(fields[2])
        self.fragments = [f for f in fields[3].split("&&") if f]
        self.note = fields[4] if len(fields) > 4 else ""

    @property
    def known_bug(self):
        return self.note.startswith("known bug")


def read_catalogue(path):
    rows = []
    with open(path, encoding="utf-8") as f:
        for number, line in enumerate(f, 1):
            line = line.rstrip("\n")
            if not line.strip() or line.startswith("#"):
                continue
            rows.append(Row(line.split("\t"), number))
    ids = [r.id for r in rows]
    duplicates = sorted({i for i in ids if ids.count(i) > 1})
    if duplicates:
        raise ValueError("catalogue.tsv: duplicate ids " + ", ".join(duplicates))
    return rows


def substitute(text, values):
    for key, value in values.items():
        text = text.replace("{" + key + "}", value)
    # A raw byte, passed to the program as that byte (os.fsdecode keeps it
    # as a surrogate escape, which subprocess encodes back).
    return re.sub(r"\{x([0-9A-Fa-f]{2})\}", lambda m: os.fsdecode(bytes([int(m.group(1), 16)])), text)


def run_row(row, binary, memory_limit=True):
    """Returns (passed, list of problems, stderr text)."""
    tmp = tempfile.mkdtemp(prefix="backcomb-bad-")
    try:
        values = {
            "case": os.path.join(HERE, row.id + ".prm"),
            "out": os.path.join(tmp, "out"),
            "dir": HERE,
            "tmp": tmp,
            "case_copy": "case.prm",
        }
        uses_case = "{case}" in row.args or "{case_copy}" in row.args
        if uses_case and not os.path.isfile(values["case"]):
            return False, ["case file %s.prm is missing from the catalogue" % row.id], ""
        if "{case_copy}" in row.args:
            shutil.copyfile(values["case"], os.path.join(tmp, values["case_copy"]))
        args = [substitute(a, values) for a in shlex.split(row.args)]
        before = set(os.listdir(tmp))
        try:
            result = subprocess.run([binary] + args, cwd=tmp, capture_output=True,
                                    text=True, errors="replace", timeout=TIMEOUT_S,
                                    preexec_fn=limit_memory if memory_limit and os.name == "posix"
                                    else None)
        except subprocess.TimeoutExpired:
            return False, ["no answer within %d s" % TIMEOUT_S], ""

        problems = []
        stderr = result.stderr
        if result.returncode < 0:
            problems.append("killed by signal %d" % -result.returncode)
        for marker in CRASH_MARKERS:
            if marker in stderr:
                problems.append("crash marker '%s' on stderr" % marker)
        if result.returncode != row.exit_code:
            problems.append("exit code %d, expected %d" % (result.returncode, row.exit_code))
        for fragment in row.fragments:
            fragment = substitute(fragment, values)
            if fragment not in stderr:
                problems.append("stderr lacks '%s'" % fragment)
        if row.exit_code in (1, 2):
            if os.path.lexists(values["out"]):
                problems.append("output folder {out} was created")
            created = sorted(set(os.listdir(tmp)) - before - {"out"})
            if created:
                problems.append("files created in the working folder: " + ", ".join(created))
        return not problems, problems, stderr
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--binary", required=True, help="path of the backcomb executable")
    parser.add_argument("--catalogue", default=os.path.join(HERE, "catalogue.tsv"))
    parser.add_argument("--only", action="append", metavar="ID",
                        help="run only this row (the full id or its number; repeatable)")
    parser.add_argument("--skip-known-bugs", action="store_true",
                        help="do not count rows marked 'known bug' as failures")
    parser.add_argument("--no-memory-limit", action="store_true",
                        help="no address-space limit (for AddressSanitizer builds)")
    parser.add_argument("--jobs", type=int, default=2,
                        help="rows run at the same time (default 2)")
    parser.add_argument("-v", "--verbose", action="store_true",
                        help="print the standard error of failing rows")
    options = parser.parse_args()

    binary = os.path.abspath(options.binary)
    if not os.access(binary, os.X_OK):
        print("run_catalogue: %s is not an executable" % binary, file=sys.stderr)
        return 1
    rows = read_catalogue(options.catalogue)
    if options.only:
        wanted = set(options.only)
        rows = [r for r in rows if r.id in wanted or r.id.split("-", 1)[0] in wanted]
        if not rows:
            print("run_catalogue: no row matches --only %s" % " ".join(options.only),
                  file=sys.stderr)
            return 1

    failed, known = [], []
    # Threads suffice: each row waits for its own child process.
    with concurrent.futures.ThreadPoolExecutor(max_workers=max(1, options.jobs)) as pool:
        results = list(pool.map(lambda r: run_row(r, binary, not options.no_memory_limit), rows))
    for row, (passed, problems, stderr) in zip(rows, results):
        if passed:
            mark = "  (marked known bug: remove the mark)" if row.known_bug else ""
            print("PASS %s%s" % (row.id, mark))
            continue
        if row.known_bug and options.skip_known_bugs:
            known.append(row.id)
            print("SKIP %s: %s [%s]" % (row.id, "; ".join(problems), row.note))
            continue
        failed.append(row.id)
        note = " [%s]" % row.note if row.note else ""
        print("FAIL %s: %s%s" % (row.id, "; ".join(problems), note))
        if options.verbose and stderr:
            lines = stderr.strip().split("\n")
            if len(lines) > 12:
                lines = lines[:12] + ["... (%d more lines)" % (len(lines) - 12)]
            print("     stderr: " + "\n             ".join(lines))

    passed = len(rows) - len(failed) - len(known)
    print("%d entries: %d passed, %d failed%s" %
          (len(rows), passed, len(failed),
           ", %d known bugs skipped" % len(known) if known else ""))
    if failed:
        print("failed: " + " ".join(failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
