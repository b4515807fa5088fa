#!/usr/bin/env python3
"""Runs the benchmark problem through fieldgrid's multigrid and through PyAMG in the
same run, on the same matrices, and prints the ratio of the times.

The Rust bench binary builds each operator, times its own setup and three unit-potential
solves (medians over --repeats), and exports the assembled matrix over the unknowns with the
three right-hand sides (format: see `write_csr` in benches/lib.rs). This script then solves
each exported system with PyAMG (Ruge-Stuben hierarchy, CG acceleration, relative residual
1e-8) and compares setup + three solves: wall time, and CPU time (all threads), which stays
comparable when other work shares the machine.

    pip install pyamg          # PyAMG 5.x, SciPy, NumPy
    python3 benches/pyamg_compare.py --sizes 256,512,1024,2048 [--repeats 3] [--threads 2]
"""

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
import scipy.sparse as sp

import pyamg


def read_problem(path):
    with open(path, "rb") as f:
        if f.read(8) != b"FGCSR001":
            sys.exit(f"{path}: not a fieldgrid CSR file")
        n, nnz, nrhs = np.frombuffer(f.read(24), dtype="<u8")
        indptr = np.frombuffer(f.read(8 * (n + 1)), dtype="<u8").astype(np.int64)
        indices = np.frombuffer(f.read(4 * nnz), dtype="<u4").astype(np.int32)
        data = np.frombuffer(f.read(8 * nnz), dtype="<f8")
        rhs = [np.frombuffer(f.read(8 * n), dtype="<f8").copy() for _ in range(nrhs)]
    return sp.csr_matrix((data, indices, indptr), shape=(n, n)), rhs


def pyamg_run(a, rhs, repeats):
    setups, solves, cpus, iters = [], [], [], []
    for _ in range(repeats):
        c0 = time.process_time()
        t0 = time.perf_counter()
        ml = pyamg.ruge_stuben_solver(a)
        t1 = time.perf_counter()
        its = []
        for b in rhs:
            res = []
            x = ml.solve(b, tol=1e-8, accel="cg", maxiter=500, residuals=res)
            rel = np.linalg.norm(b - a @ x) / np.linalg.norm(b)
            if rel > 1e-7:
                sys.exit(f"PyAMG did not converge: relative residual {rel:.2e}")
            its.append(len(res) - 1)
        t2 = time.perf_counter()
        cpus.append(time.process_time() - c0)
        setups.append(t1 - t0)
        solves.append(t2 - t1)
        iters = its
    return float(np.median(setups)), float(np.median(solves)), float(np.median(cpus)), iters


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", default="256,512,1024,2048")
    ap.add_argument("--repeats", type=int, default=3, help="repeats of the Rust runs")
    ap.add_argument("--pyamg-repeats", type=int, default=1)
    ap.add_argument("--threads", default="2", help="Rust thread count(s) to compare, e.g. 1,2")
    args = ap.parse_args()
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    with tempfile.TemporaryDirectory(prefix="fieldgrid-bench-") as tmp:
        out = os.path.join(tmp, "rust.json")
        cmd = ["cargo", "bench", "-q", "-p", "fieldgrid-benches", "--bench", "multigrid", "--",
               "--sizes", args.sizes, "--repeats", str(args.repeats), "--threads", args.threads,
               "--export", tmp, "--json", out]
        print("running:", " ".join(cmd), flush=True)
        subprocess.run(cmd, cwd=root, check=True)
        with open(out) as f:
            rust = json.load(f)
        print()
        print(f"{'N':>5} {'unknowns':>9} | {'PyAMG setup':>11} {'3 solves':>9} {'iters':>12} {'total':>8}"
              f" {'cpu':>8} | {'fieldgrid thr':>13} {'total':>8} {'cpu':>8} | {'ratio':>6} {'cpu ratio':>9}")
        for n in [int(s) for s in args.sizes.split(",")]:
            a, rhs = read_problem(os.path.join(tmp, f"problem_{n}.bin"))
            setup, solve3, cpu, iters = pyamg_run(a, rhs, args.pyamg_repeats)
            total = setup + solve3
            for r in [r for r in rust if r["n"] == n]:
                mine = r["setup"] + r["solve3"]
                mine_cpu = r["setup_cpu"] + r["cpu3"]
                print(f"{n:>5} {a.shape[0]:>9} | {setup:>11.3f} {solve3:>9.3f} {str(iters):>12} {total:>8.3f}"
                      f" {cpu:>8.2f} | {r['threads']:>13} {mine:>8.3f} {mine_cpu:>8.2f} |"
                      f" {mine / total:>6.3f} {mine_cpu / cpu:>9.3f}", flush=True)


if __name__ == "__main__":
    main()
