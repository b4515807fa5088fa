#!/usr/bin/env python3
"""Measure fieldgrid against the finite-element reference values in fem_values.json.

Runs the fieldgrid binary (one thread, whole process timed) on geometries/sensor_pad.toml and
geometries/microstrip.toml at several cells (a temporary copy of the design with its
`[grid] cell` replaced), and prints markdown tables: the relative error of every capacitance
entry (and of Z0 and eps_eff), the worst one, and the ratio of fieldgrid's printed error
estimate to the true error; then the whole-process time of `fem_reference.py --quick` in the
same conditions.

Usage:
  python3 measure_fieldgrid.py --fieldgrid target/release/fieldgrid [--repeat 3] [--no-fem]
      [--sensor-cells 0.04 0.02 ...] [--microstrip-cells 0 ...] [--fieldgrid-args "..."]
"""

import argparse
import json
import os
import re
import resource
import shlex
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))


def with_cell(design, cell, tmp):
    """A copy of the demo design with its cell replaced (0: the design's own cell)."""
    if cell == 0:
        return os.path.join(ROOT, "geometries", design)
    text = open(os.path.join(ROOT, "geometries", design)).read()
    new, n = re.subn(r"(?m)^cell\s*=\s*[^#\n]*", f"cell = {cell!r}   ", text)
    if n != 1:
        sys.exit(f"{design}: expected one `cell = ...` line, found {n}")
    path = os.path.join(tmp, f"{cell}_{design}")
    with open(path, "w") as f:
        f.write(new)
    return path


def run(args, repeat):
    """Whole-process wall time and CPU time (user + system; medians of `repeat` runs) and
    the summary of the last run."""
    times, cpus = [], []
    for _ in range(repeat):
        c0 = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        p = subprocess.run(args, capture_output=True, text=True)
        times.append(time.perf_counter() - t0)
        c1 = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(c1.ru_utime - c0.ru_utime + c1.ru_stime - c0.ru_stime)
        if p.returncode not in (0, 1):
            sys.exit(f"{' '.join(args)} exited {p.returncode}:\n{p.stderr}")
    out = args[args.index("--out") + 1]
    with open(os.path.join(out, "summary.json")) as f:
        return statistics.median(times), statistics.median(cpus), json.load(f)


def node_count(summary):
    g = summary.get("grid", {})
    return g["nx"] * g["ny"] if "nx" in g and "ny" in g else "?"


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--fieldgrid", required=True, help="path of the fieldgrid binary")
    ap.add_argument("--repeat", type=int, default=1, help="runs per case (median time)")
    ap.add_argument("--sensor-cells", type=float, nargs="+", default=[0.04, 0.02, 0.01, 0.005],
                    help="cells in mm (0: the design's own)")
    ap.add_argument("--microstrip-cells", type=float, nargs="+",
                    default=[0.03, 0.015, 0.0075, 0.00375])
    ap.add_argument("--fieldgrid-args", default="",
                    help="extra options for every fieldgrid run, e.g. \"--accuracy 1e-3\"")
    ap.add_argument("--no-fem", action="store_true",
                    help="do not time the finite-element script's cheap run")
    args = ap.parse_args()
    with open(os.path.join(HERE, "fem_values.json")) as f:
        ref = json.load(f)
    fg = os.path.abspath(args.fieldgrid)
    extra = shlex.split(args.fieldgrid_args)
    version = subprocess.run([fg, "--version"], capture_output=True, text=True).stdout.strip()
    print(f"fieldgrid: {version}; reference: {ref['library']}\n")

    with tempfile.TemporaryDirectory() as tmp:
        sp = ref["sensor_pad"]
        names = sp["conductors"]
        pairs = [(i, j) for i in range(3) for j in range(i, 3)]
        heads = [f"C[{names[i]},{names[j]}]" for i, j in pairs]
        print("sensor_pad: relative error of each entry, + too large in magnitude "
              "(estimate / true error)\n")
        print("| cell (mm) | nodes | wall (s) | cpu (s) | " + " | ".join(heads) + " | worst |")
        print("|---" * (len(heads) + 5) + "|")
        for cell in args.sensor_cells:
            design = with_cell("sensor_pad.toml", cell, tmp)
            out = os.path.join(tmp, f"sp_{cell}")
            t, cpu, s = run([fg, "solve", design, "--threads", "1", "--quiet", "--out", out]
                            + extra, args.repeat)
            m = s["capacitance"]["matrix"]
            est = s["capacitance"]["error_estimate"]
            cells, worst = [], 0.0
            for (i, j), key in zip(pairs, heads):
                r = sp["values"][key]
                # signed: + is too large in magnitude; the worst includes the mirror entry
                # (fieldgrid's matrix is symmetric to the solver's tolerance)
                e = (m[i][j] - r) / r
                worst = max(worst, abs(e), abs((m[j][i] - r) / r))
                ratio = est[i][j] / abs(m[i][j] - r) if m[i][j] != r else float("inf")
                cells.append(f"{100 * e:+.3f} % ({ratio:.2f})")
            nodes = node_count(s)
            print(f"| {cell or 'design'} | {nodes} | {t:.2f} | {cpu:.2f} | " + " | ".join(cells)
                  + f" | {100 * worst:.3f} % |", flush=True)

        ms = ref["microstrip"]["values"]
        print("\nmicrostrip (impedance --signal trace): relative error (estimate / true error)\n")
        print("| cell (mm) | nodes | wall (s) | cpu (s) | Z0 (ohm) | Z0 error | eps_eff "
              "| eps_eff error |")
        print("|---" * 8 + "|")
        for cell in args.microstrip_cells:
            design = with_cell("microstrip.toml", cell, tmp)
            out = os.path.join(tmp, f"ms_{cell}")
            t, cpu, s = run([fg, "impedance", design, "--signal", "trace", "--threads", "1",
                        "--quiet", "--out", out] + extra, args.repeat)
            line = s["line"]
            row = []
            for key in ("z0", "eps_eff"):
                v, r = line[key], ms[key]
                e = (v - r) / r
                ratio = line["error_estimate"][key] / abs(v - r)
                row += [f"{v:.5f}", f"{100 * e:+.3f} % ({ratio:.2f})"]
            nodes = node_count(s)
            print(f"| {cell or 'design'} | {nodes} | {t:.2f} | {cpu:.2f} | "
                  + " | ".join(row) + " |", flush=True)

    if not args.no_fem:
        # The finite-element script's cheap run (about 1e-4 on every value), same conditions.
        times, cpus = [], []
        for _ in range(args.repeat):
            c0 = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            p = subprocess.run([sys.executable, os.path.join(HERE, "fem_reference.py"),
                                "--quick"], capture_output=True, text=True)
            times.append(time.perf_counter() - t0)
            c1 = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpus.append(c1.ru_utime - c0.ru_utime + c1.ru_stime - c0.ru_stime)
            if p.returncode != 0:
                sys.exit(f"fem_reference.py --quick exited {p.returncode}:\n{p.stderr}")
        worst = [ln for ln in p.stdout.splitlines() if ln.startswith("worst")]
        print(f"\nfem_reference.py --quick (both designs): wall {statistics.median(times):.2f} s, "
              f"cpu {statistics.median(cpus):.2f} s; {worst[0] if worst else ''}")


if __name__ == "__main__":
    main()
