#!/usr/bin/env python3
"""Kill trials: `backcomb solve` and `backcomb sweep` killed with SIGKILL at
random (seeded) moments, then checked and run again.

After every kill the results folder must hold only complete files (JSON
that parses, CSV rows with every column and a final newline, .vtu/.vtp/.pvd
that end with </VTKFile>, a mesh that ends with its last section) that
agree with each other (the metrics in summary.json are those of the jv.csv
beside it, every sweep.csv/sweep.json row with numbers is that case's
summary.json); leftover temporary files carry ".tmp" in their name. The
rerun into the same folder must finish and give the results of an
uninterrupted reference run (relative difference below 1e-6), resuming a
solve from its checkpoint where there is one.

usage: kill_trials.py --binary BACKCOMB --case CASE.prm [--solve-trials N]
                      [--sweep-trials N] [--seed S]
"""
import argparse
import csv
import io
import json
import math
import os
import random
import re
import shutil
import signal
import struct
import subprocess
import sys
import tempfile
import time
import xml.etree.ElementTree as ET

TOLERANCE = 1e-6
TEMPORARY = re.compile(r"\.tmp")

# The solve case: the tiny sweep case with a dark J-V, fields and finer
# bias steps, so that a run writes every kind of file and spends most of
# its time in the J-V scans (where a kill must be resumable).
SOLVE_SETS = ["J-V scan/Dark scan=true", "Output/Write fields=true", "Output/Field biases=0,0.6"]
SWEEP_VARY = ["--vary", "Geometry/Strip length=0.5,1"]


class Failure(Exception):
    pass


def check(condition, message):
    if not condition:
        raise Failure(message)


def close(a, b, what, floor=1e-12):
    """Relative agreement; `floor` is the scale below which values count as
    equal to zero (a current at open circuit is zero to the Newton
    tolerance, not to 1e-6 of itself)."""
    if a is None or b is None:
        check(a is None and b is None, f"{what}: {a} vs {b}")
        return
    scale = max(abs(a), abs(b), floor)
    check(abs(a - b) <= TOLERANCE * scale, f"{what}: {a!r} vs {b!r} (relative {abs(a - b) / scale:.2e})")


def result_files(folder):
    for root, _, files in os.walk(folder):
        for f in files:
            yield os.path.join(root, f)


def read_text(path):
    with open(path, "rb") as f:
        return f.read().decode("utf-8")


def check_vtk_xml(path):
    text = read_text(path)
    check(text.rstrip().endswith("</VTKFile>"), f"{path} is truncated")
    if path.endswith(".pvd"):
        root = ET.fromstring(text)
        for d in root.iter("DataSet"):
            ref = os.path.join(os.path.dirname(path), d.get("file"))
            check(os.path.isfile(ref), f"{path} names {ref}, which does not exist")


def read_csv(path):
    """Comment lines, header and rows; every row complete."""
    text = read_text(path)
    check(text.endswith("\n"), f"{path} does not end with a newline (truncated)")
    lines = [l for l in text.splitlines() if not l.startswith("#")]
    rows = list(csv.reader(io.StringIO("\n".join(lines))))
    check(len(rows) >= 1, f"{path} has no header")
    for r in rows[1:]:
        check(len(r) == len(rows[0]), f"{path}: incomplete row {r}")
    return rows[0], rows[1:]


def fnv1a(data, h=14695981039346656037):
    for b in data:
        h = ((h ^ b) * 1099511628211) & 0xFFFFFFFFFFFFFFFF
    return h


def check_checkpoint_point(path):
    """Magic line, 64-bit FNV-1a checksum of everything before it."""
    with open(path, "rb") as f:
        data = f.read()
    check(data.startswith(b"backcomb checkpoint point 1\n"), f"{path}: not a checkpoint point")
    (stored,) = struct.unpack("<Q", data[-8:])
    check(stored == fnv1a(data[:-8]), f"{path}: checksum mismatch (damaged)")


def number(text):
    return None if text in ("", "failed") else float(text)


def jv_table(path):
    header, rows = read_csv(path)
    check(header == ["voltage_V", "J_light_mA_per_cm2", "J_dark_mA_per_cm2"], f"{path}: header {header}")
    return [(float(r[0]), r[1], r[2]) for r in rows]


LEFTOVERS = set()


def check_solve_folder(folder):
    """Every file complete; summary.json consistent with jv.csv and fields."""
    for path in result_files(folder):
        name = os.path.basename(path)
        if TEMPORARY.search(name):
            LEFTOVERS.add(path)  # a temporary of a killed run: recognisable, ignored
            continue
        if name.endswith(".json"):
            json.loads(read_text(path))
        elif name.endswith(".csv"):
            read_csv(path)
        elif name.endswith((".vtu", ".vtp", ".pvd")):
            check_vtk_xml(path)
        elif name.endswith(".msh"):
            check(read_text(path).rstrip().split("\n")[-1].startswith("$End"), f"{path} is truncated")
        elif name.endswith(".bin"):
            check_checkpoint_point(path)
    summary_path = os.path.join(folder, "summary.json")
    if not os.path.exists(summary_path):
        return None
    s = json.loads(read_text(summary_path))
    jv = jv_table(os.path.join(folder, "jv.csv"))
    light = [(v, float(j)) for v, j, _ in jv if j not in ("", "failed")]
    # Jsc and Voc recomputed from the table the summary came with.
    jsc = next(a[1] + (0 - a[0]) / (b[0] - a[0]) * (b[1] - a[1])
               for a, b in zip(light, light[1:]) if a[0] <= 0 <= b[0])
    voc = next(a[0] + a[1] / (a[1] - b[1]) * (b[0] - a[0])
               for a, b in zip(light, light[1:]) if a[1] > 0 >= b[1])
    close(s["metrics"]["Jsc_mA_per_cm2"], jsc, f"{folder}: Jsc of summary.json vs jv.csv")
    close(s["metrics"]["Voc_V"], voc, f"{folder}: Voc of summary.json vs jv.csv")
    # Every point of the summary is the row of jv.csv at its bias.
    table = {round(v, 7): (l, d) for v, l, d in jv}
    for p in s["points"]:
        row = table[round(p["voltage_V"], 7)]
        cell = row[0] if p["sweep"] == "light" else row[1]
        close(p["current_mA_per_cm2"], number(cell), f"{folder}: {p['sweep']} point at {p['voltage_V']} V")
    for f in s["fields"]:
        check(os.path.isfile(os.path.join(folder, f["file"])), f"{folder}: field file {f['file']} missing")
    return s


def check_sweep_folder(folder):
    """Every case folder as above; every table row with numbers is its case."""
    cases = os.path.join(folder, "cases")
    summaries = {}
    if os.path.isdir(cases):
        for c in os.listdir(cases):
            summaries[c] = check_solve_folder(os.path.join(cases, c))
            failed = os.path.join(cases, c, "failed.json")
            if os.path.exists(failed):
                json.loads(read_text(failed))
    for path in result_files(folder):
        name = os.path.basename(path)
        if os.path.dirname(path) != folder or TEMPORARY.search(name):
            continue
        if name.endswith(".json"):
            json.loads(read_text(path))
        elif name.endswith(".pvd"):
            check_vtk_xml(path)
    rows = []
    if os.path.exists(os.path.join(folder, "sweep.csv")):
        header, body = read_csv(os.path.join(folder, "sweep.csv"))
        rows += [dict(zip(header, r)) for r in body]
    if os.path.exists(os.path.join(folder, "sweep.json")):
        rows += [{"case": r["id"], "status": r["status"], "PCE_percent": r["PCE_percent"]}
                 for r in json.loads(read_text(os.path.join(folder, "sweep.json")))["cases"]]
    for r in rows:
        if r["status"] in ("converged", "partial"):
            s = summaries.get(r["case"])
            check(s is not None, f"{folder}: row {r['case']} has numbers but its case has no summary.json")
            close(float(r["PCE_percent"]), s["metrics"]["PCE_percent"], f"{folder}: PCE of {r['case']}")
    return rows


def compare_solve(folder, reference):
    a, b = check_solve_folder(folder), check_solve_folder(reference)
    check(a is not None, f"{folder}: no summary.json after the rerun")
    for k, v in b["metrics"].items():
        if isinstance(v, (int, float)):
            close(a["metrics"][k], v, f"{folder}: {k} vs the uninterrupted run")
    # A resumed run reaches the points after the resume by another Newton
    # path (it starts without the factorisation the uninterrupted run
    # reuses), so each current agrees to the Newton tolerance: to 1e-6 of
    # itself or of the largest current of its curve, whichever is larger (a
    # current near V_oc is a small difference of two large ones).
    for label in ("light", "dark"):
        largest = max([abs(q["current_mA_per_cm2"]) for q in b["points"]
                       if q["sweep"] == label and q["current_mA_per_cm2"] is not None] + [0])
        for p, q in zip(a["points"], b["points"]):
            if q["sweep"] == label:
                close(p["current_mA_per_cm2"], q["current_mA_per_cm2"],
                      f"{folder}: {p['sweep']} J({p['voltage_V']})", floor=largest)
    check(len(a["points"]) == len(b["points"]), f"{folder}: {len(a['points'])} points, reference {len(b['points'])}")
    close(a["collection_efficiency"], b["collection_efficiency"], f"{folder}: collection efficiency")
    check(not os.path.exists(os.path.join(folder, "checkpoint")), f"{folder}: checkpoint left after success")


def compare_sweep(folder, reference):
    header, rows = read_csv(os.path.join(folder, "sweep.csv"))
    ref_header, ref_rows = read_csv(os.path.join(reference, "sweep.csv"))
    check(header == ref_header and len(rows) == len(ref_rows), f"{folder}: sweep.csv shape differs")
    for r, q in zip(rows, ref_rows):
        for h, x, y in zip(header, r, q):
            if h in ("newton_iterations", "step_halvings"):
                continue  # solver effort: a resumed case takes another Newton path
            try:
                # Loss terms in mW/cm^2 of an input of tens of mW/cm^2: they
                # agree to 1e-6 of themselves or to 1e-8 mW/cm^2 (1e-6 of a
                # 0.01 mW/cm^2 floor), the balance's accuracy at Newton tolerance.
                close(float(x), float(y), f"{folder}: sweep.csv {r[0]} {h}", floor=1e-2 if h.startswith("loss_") else 1e-12)
            except ValueError:
                check(x == y, f"{folder}: sweep.csv {r[0]} {h}: {x} vs {y}")


def run(command, **kw):
    return subprocess.run(command, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True, **kw)


def kill_at(command, seconds, poll=None):
    """Starts `command`, kills it with SIGKILL after `seconds` (or as soon
    as poll() is true); returns True if it was killed before finishing."""
    p = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    t0 = time.monotonic()
    while p.poll() is None and time.monotonic() - t0 < seconds:
        if poll and poll():
            break
        time.sleep(0.005)
    killed = p.poll() is None
    if killed:
        p.send_signal(signal.SIGKILL)
    p.wait()
    return killed


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--binary", required=True)
    ap.add_argument("--case", required=True)
    ap.add_argument("--solve-trials", type=int, default=12)
    ap.add_argument("--sweep-trials", type=int, default=8)
    ap.add_argument("--seed", type=int, default=6)
    a = ap.parse_args()
    rng = random.Random(a.seed)
    work = tempfile.mkdtemp(prefix="kill-trials-")
    sets = sum((["--set", s] for s in SOLVE_SETS), [])
    solve = lambda out: [a.binary, "solve", a.case, *sets, "--out", out]
    sweep = lambda out: [a.binary, "sweep", a.case, *SWEEP_VARY, "--out", out]
    failures, resumed, killed_count = 0, [], 0
    try:
        os.chdir(work)
        t0 = time.monotonic()
        r = run(solve("ref-solve"))
        check(r.returncode == 0, f"reference solve failed:\n{r.stdout}")
        t_solve = time.monotonic() - t0
        t0 = time.monotonic()
        r = run(sweep("ref-sweep"))
        check(r.returncode == 0, f"reference sweep failed:\n{r.stdout}")
        t_sweep = time.monotonic() - t0
        print(f"reference runs: solve {t_solve:.2f} s, sweep {t_sweep:.2f} s")

        trials = [("solve", i) for i in range(a.solve_trials)] + [("sweep", i) for i in range(a.sweep_trials)]
        for kind, i in trials:
            # The solve trials share one folder, so that every kill hits the
            # complete results of the previous trial. A sweep folder that
            # holds a finished sweep has nothing left to do: each sweep
            # trial starts afresh.
            folder = kind
            if kind == "sweep":
                shutil.rmtree(folder, ignore_errors=True)
            command = solve(folder) if kind == "solve" else sweep(folder)
            t_total = t_solve if kind == "solve" else t_sweep
            poll = None
            if kind == "solve" and i == 0:
                # One deterministic trial: killed once the checkpoint holds
                # three J-V points, so that the rerun must resume.
                ck = os.path.join(folder, "checkpoint")
                poll = lambda: os.path.isdir(ck) and sum(f.endswith(".bin") for f in os.listdir(ck)) >= 3
                moment = 10 * t_total
            else:
                moment = rng.uniform(0.05, 1.1) * t_total
            try:
                t0 = time.monotonic()
                killed = kill_at(command + ["--quiet"], moment, poll)
                moment = time.monotonic() - t0
                killed_count += killed
                (check_solve_folder if kind == "solve" else check_sweep_folder)(folder)
                r = run(command)
                check(r.returncode == 0, f"rerun ended with {r.returncode}:\n{r.stdout}")
                # The resumed points, as printed (a sweep sends each case's
                # messages to its solve.log) and as in summary.json.
                if kind == "solve":
                    compare_solve(folder, "ref-solve")
                    logs = [r.stdout]
                    summaries = [os.path.join(folder, "summary.json")]
                else:
                    check_sweep_folder(folder)
                    compare_sweep(folder, "ref-sweep")
                    cases = [os.path.join(folder, "cases", c) for c in os.listdir(os.path.join(folder, "cases"))]
                    logs = [read_text(os.path.join(c, "solve.log")) for c in cases]
                    summaries = [os.path.join(c, "summary.json") for c in cases]
                printed = sum(int(n) for t in logs for n in re.findall(r"resumed from (\d+) points", t))
                stored = sum(json.loads(read_text(f))["resumed_points"] for f in summaries)
                check(printed == stored, f"printed 'resumed from {printed} points', summary.json {stored}")
                if stored:
                    resumed.append(stored)
                print(f"{kind} trial {i}: {'killed' if killed else 'finished'} after {moment:.2f} s"
                      f"{f', resumed from {stored} points' if stored else ''}: ok")
            except (Failure, ValueError, KeyError, StopIteration) as e:
                # ValueError covers JSON that does not parse and numbers
                # that do not read; KeyError and StopIteration a summary or
                # table without what it must hold.
                failures += 1
                print(f"{kind} trial {i}: after {moment:.2f} s: FAIL: {type(e).__name__}: {e}")
        print(f"{len(trials)} trials, {killed_count} killed mid-run, {len(resumed)} resumed a J-V "
              f"({sum(resumed)} points in all), {len(LEFTOVERS)} leftover temporary files seen "
              f"({', '.join(sorted(set(re.sub(r'[0-9]+', 'N', os.path.basename(p)) for p in LEFTOVERS)))}), "
              f"{failures} failed")
        if not resumed:
            print("FAIL: no trial resumed from a checkpoint")
            failures += 1
        return 1 if failures else 0
    except Failure as e:
        print(f"FAIL: {e}")
        return 1
    finally:
        os.chdir("/")
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
