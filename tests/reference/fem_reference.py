#!/usr/bin/env python3
"""Independent finite-element reference values for two demo designs.

Computes, with the general-purpose finite-element library NGSolve (meshes by Netgen), the
same boundary-value problems that fieldgrid solves for

* geometries/sensor_pad.toml: the 3x3 Maxwell capacitance matrix per metre (entry (i, j) is
  the charge on conductor i with conductor j at 1 V and every other conductor and every
  grounded side at 0 V; symmetry sides carry no flux; nothing is unfolded);
* geometries/microstrip.toml: Z0 and eps_eff of the trace as `fieldgrid impedance
  geometries/microstrip.toml --signal trace` defines them: two studies (as drawn, and with
  every permittivity 1), C and C0 of the whole line (the half model unfolded across its
  left symmetry side, so twice the half model's charge), Z0 = 1 / (c sqrt(C C0)),
  eps_eff = C / C0. The right and top sides are `open`: the same first-order far-field
  (Robin) condition fieldgrid applies there, d(phi)/dn + kappa phi = 0 (see README.md beside
  this script for kappa).

Method (common practice for singular electrostatic problems): continuous H1 elements of
order p on a triangular mesh that follows every material and copper edge exactly (the
geometry is rectilinear), refined geometrically (hp refinement, factor `--factor`) towards
every copper corner, the trace end, and every point where an interface or a change of side
condition meets another line. Capacitance from the energy (variational) form
C_ij = eps0 a(u_i, u_j), whose error is the square of the energy-norm error. The
convergence table varies p and the number of geometric refinement levels; the reported
values are the finest run, and the estimated relative error of each value is the largest
change against the runs one step coarser in p and in levels.

Usage:
  python3 fem_reference.py                 # full table, writes fem_values.json
  python3 fem_reference.py --quick         # one cheap run good to about 1e-4, writes nothing
  python3 fem_reference.py --box 2 4 10    # microstrip open sides farther (truncation)

The geometry is transcribed below from the design files and checked against them (their
parameters and literal coordinates) at start, so a change of a demo design stops the script
instead of silently producing stale values.
"""

import argparse
import json
import math
import os
import re
import sys
import time
import tomllib

import netgen
import ngsolve as ng
from netgen.geom2d import SplineGeometry

EPS0 = 8.8541878128e-12  # F/m, CODATA 2018
C_LIGHT = 299792458.0  # m/s, exact
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))

# ---------------------------------------------------------------------------------------------
# Geometry: rectilinear designs as regions on the tensor grid of their coordinates.
# Lengths are in mm throughout; a planar capacitance per unit length divided by eps0 does
# not depend on the length unit, so C per metre is eps0 * a(u_i, u_j) with coordinates in mm.


class Design:
    """A rectilinear 2-D design: box, sides, dielectric rectangles (later ones win),
    conductor rectangles (holes), zero-thickness straight conductor segments, and the points
    to refine geometrically towards."""

    def __init__(self, x, y, sides, background=1.0):
        self.x, self.y = x, y
        self.sides = sides  # {"left": "symmetry" | "ground" | "open", ...}
        self.background = background
        self.dielectrics = []  # (name, eps, (x0, x1), (y0, y1))
        self.conductors = []  # (name, (x0, x1), (y0, y1))
        self.slits = []  # (name, (xa, ya), (xb, yb)), axis-parallel
        self.extra_points = []  # points added to the grid lines (e.g. kinks of kappa)
        self.singular = []  # points of geometric refinement

    def lines(self):
        xs, ys = set(self.x), set(self.y)
        for _, _, rx, ry in self.dielectrics:
            xs.update(rx)
            ys.update(ry)
        for _, rx, ry in self.conductors:
            xs.update(rx)
            ys.update(ry)
        for _, a, b in self.slits:
            xs.update((a[0], b[0]))
            ys.update((a[1], b[1]))
        for p in self.extra_points:
            xs.add(p[0])
            ys.add(p[1])
        return sorted(xs), sorted(ys)

    def region(self, cx, cy):
        """Region of a point strictly inside a tensor cell: ('conductor', name) or
        ('material', index, eps)."""
        for name, rx, ry in self.conductors:
            if rx[0] < cx < rx[1] and ry[0] < cy < ry[1]:
                return ("conductor", name)
        eps, index = self.background, 0
        for k, (_, e, rx, ry) in enumerate(self.dielectrics):
            if rx[0] < cx < rx[1] and ry[0] < cy < ry[1]:
                eps, index = e, k + 1
        return ("material", index, eps)


def build_geometry(d, hp_points):
    """Netgen 2-D spline geometry of the design: one domain per material, a segment on every
    line where the region changes (or a slit lies), boundary names per side or conductor."""
    xs, ys = d.lines()
    nx, ny = len(xs) - 1, len(ys) - 1
    cell = {}
    for i in range(nx):
        for j in range(ny):
            cell[i, j] = d.region(0.5 * (xs[i] + xs[i + 1]), 0.5 * (ys[j] + ys[j + 1]))

    # Domain numbers: 1 + material index (0 = background); conductors and outside are 0.
    materials = {}

    def dom(i, j):
        if i < 0 or j < 0 or i >= nx or j >= ny:
            return 0, None
        r = cell[i, j]
        if r[0] == "conductor":
            return 0, r[1]
        materials[r[1] + 1] = r[2]
        return r[1] + 1, None

    def on_slit(a, b):
        for name, p, q in d.slits:
            if p[0] == q[0] == a[0] == b[0]:
                lo, hi = sorted((p[1], q[1]))
                if lo <= min(a[1], b[1]) and max(a[1], b[1]) <= hi:
                    return name
            if p[1] == q[1] == a[1] == b[1]:
                lo, hi = sorted((p[0], q[0]))
                if lo <= min(a[0], b[0]) and max(a[0], b[0]) <= hi:
                    return name
        return None

    geo = SplineGeometry()
    pid = {}
    singular = set(hp_points)

    def point(px, py):
        if (px, py) not in pid:
            pid[px, py] = geo.AppendPoint(px, py, hpref=1 if (px, py) in singular else 0)
        return pid[px, py]

    segments = []

    def segment(a, b, left, right):
        (dl, cl), (dr, cr) = left, right
        slit = on_slit(a, b)
        if dl == dr and slit is None and cl == cr:
            return
        if dl == 0 and dr == 0:
            return  # between conductor cells or outside: no unknowns
        if slit is not None:
            bc = slit
        elif cl is not None or cr is not None:
            bc = cl if cl is not None else cr
        elif dl == 0 or dr == 0:
            bc = side_of(a, b)
        else:
            bc = "interface"
        segments.append((a, b, dl, dr, bc))

    def side_of(a, b):
        if a[0] == b[0] == xs[0]:
            return "left"
        if a[0] == b[0] == xs[-1]:
            return "right"
        if a[1] == b[1] == ys[0]:
            return "bottom"
        if a[1] == b[1] == ys[-1]:
            return "top"
        raise ValueError(f"segment {a}-{b} is on no side")

    for i in range(nx + 1):  # vertical segments, walking up: left cell (i-1, j)
        for j in range(ny):
            segment((xs[i], ys[j]), (xs[i], ys[j + 1]), dom(i - 1, j), dom(i, j))
    for j in range(ny + 1):  # horizontal segments, walking right: left cell above (i, j)
        for i in range(nx):
            segment((xs[i], ys[j]), (xs[i + 1], ys[j]), dom(i, j), dom(i, j - 1))
    for a, b, dl, dr, bc in segments:
        geo.Append(["line", point(*a), point(*b)], leftdomain=dl, rightdomain=dr, bc=bc)
    for k, eps in materials.items():
        geo.SetMaterial(k, f"m{k}")
    return geo, {f"m{k}": eps for k, eps in materials.items()}


def make_mesh(d, hp_points, maxh, levels, factor):
    geo, eps_of = build_geometry(d, hp_points)
    mesh = ng.Mesh(geo.GenerateMesh(maxh=maxh))
    if levels > 0:
        mesh.RefineHP(levels=levels, factor=factor)
    return mesh, eps_of


# ---------------------------------------------------------------------------------------------
# The two designs, transcribed (mm). `check_design` compares them with the TOML files.


def sensor_pad():
    board, copper, pad_w, gap, overlay = 1.6, 0.035, 4.0, 1.0, 2.0
    top = board + copper
    d = Design(
        (0.0, 20.0),
        (0.0, 9.6),
        {"left": "symmetry", "right": "symmetry", "bottom": "ground", "top": "ground"},
    )
    d.dielectrics = [
        ("board", 4.4, (0.0, 20.0), (0.0, board)),
        ("overlay", 2.9, (0.0, 20.0), (top, top + overlay)),
    ]
    d.conductors = [
        ("sense", (6.0, 6.0 + pad_w), (board, top)),
        ("neighbour", (6.0 + pad_w + gap, 6.0 + 2 * pad_w + gap), (board, top)),
        ("guard", (2.0, 4.0), (board, top)),
    ]
    for _, rx, ry in d.conductors:
        d.singular += [(px, py) for px in rx for py in ry]
    return d


def microstrip(box=1.0):
    """Half model; `box` scales the distance from the trace to the open sides ("room")."""
    h, w, room = 0.6, 1.35, 4.2 * box
    x1, y1 = w / 2 + room, h + room
    d = Design(
        (0.0, x1),
        (0.0, y1),
        {"left": "symmetry", "right": "open", "bottom": "ground", "top": "open"},
    )
    d.dielectrics = [("laminate", 3.5, (0.0, x1), (0.0, h))]
    d.slits = [("trace", (0.0, h), (w / 2, h))]
    # The top side's kappa is clamped at zero beyond x = y1 (where the model's flux would
    # enter the box); a grid point there keeps the kink on an element edge.
    if y1 < x1:
        d.extra_points.append((y1, y1))
    d.singular = [(w / 2, h), (x1, h), (x1, 0.0), (x1, y1), (0.0, y1)]
    if y1 < x1:
        d.singular.append((y1, y1))
    return d


def check_design(path, expect):
    """Compare a demo design file with the transcription: parameters and every key the
    transcription depends on. Expressions are evaluated over the parameters (arithmetic
    only)."""
    with open(path, "rb") as f:
        t = tomllib.load(f)
    params = dict(t.get("parameters", {}))

    def val(v):
        if isinstance(v, str):
            if not re.fullmatch(r"[\w\s.+\-*/()]+", v):
                raise ValueError(f"{path}: unexpected expression {v!r}")
            return float(eval(v, {"__builtins__": {}}, params))
        return float(v)

    assert t.get("unit") == "mm", f"{path}: unit {t.get('unit')}"
    got = {
        "x": tuple(val(v) for v in t["grid"]["x"]),
        "y": tuple(val(v) for v in t["grid"]["y"]),
        "sides": dict(t["sides"]),
        "background": float(t.get("background", {}).get("permittivity", 1.0)),
        "dielectrics": [
            (e["name"], val(e["permittivity"]), tuple(map(val, e["rect"]["x"])),
             tuple(map(val, e["rect"]["y"])))
            for e in t.get("dielectric", [])
        ],
        "conductors": [],
        "slits": [],
    }
    for c in t.get("conductor", []):
        if "rect" in c:
            got["conductors"].append(
                (c["name"], tuple(map(val, c["rect"]["x"])), tuple(map(val, c["rect"]["y"])))
            )
        else:
            pts = [tuple(map(val, p)) for p in c["polyline"]]
            assert len(pts) == 2, f"{path}: polyline of {len(pts)} points"
            got["slits"].append((c["name"], pts[0], pts[1]))
    want = {
        "x": expect.x,
        "y": expect.y,
        "sides": expect.sides,
        "background": expect.background,
        "dielectrics": expect.dielectrics,
        "conductors": expect.conductors,
        "slits": expect.slits,
    }

    def close(a, b):
        if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
            return len(a) == len(b) and all(close(p, q) for p, q in zip(a, b))
        if isinstance(a, dict) and isinstance(b, dict):
            return a.keys() == b.keys() and all(close(a[k], b[k]) for k in a)
        if isinstance(a, float) or isinstance(b, float):
            return abs(float(a) - float(b)) <= 1e-12 * max(1.0, abs(float(a)))
        return a == b

    for k in want:
        if not close(got[k], want[k]):
            sys.exit(f"{path}: {k} is {got[k]}, the transcription has {want[k]}: update the script")
    return t


# ---------------------------------------------------------------------------------------------
# Solves.


def far_field_kappa(d):
    """The Robin coefficient fieldgrid uses on this design's open sides (solver/src/open.rs):
    the far field of a dipole normal to the grounded bottom side, unfolded across the
    symmetry side on the left, phi ~ y / |r|^2 about the centre (0, 0) (the centre is
    moved onto both mirrors), kappa = -(dphi/dn)/phi = 2 (r.n)/|r|^2 - n_y / y, clamped at 0.
    Right side (n = +x): kappa = 2x/|r|^2. Top side (n = +y): kappa = (y^2 - x^2)/(y |r|^2)."""
    assert d.sides == {"left": "symmetry", "right": "open", "bottom": "ground", "top": "open"}
    x, y = ng.x, ng.y
    r2 = x * x + y * y
    right = 2 * x / r2
    top_raw = (y * y - x * x) / (y * r2)
    top = ng.IfPos(top_raw, top_raw, 0)
    return {"right": right, "top": top}


def energy_matrix(mesh, eps_of, d, order, conductors, kappa=None, eps_one=False):
    """Maxwell matrix a(u_i, u_j) / 1 (dimensionless, multiply by eps0 for F/m) for the
    conductors `conductors` (boundary names), with every other Dirichlet boundary at 0."""
    ground = [s for s, c in d.sides.items() if c == "ground"]
    dirichlet = "|".join(conductors + ground)
    fes = ng.H1(mesh, order=order, dirichlet=dirichlet)
    u, v = fes.TnT()
    eps = ng.CF(1.0) if eps_one else mesh.MaterialCF(eps_of, default=1.0)
    a = ng.BilinearForm(fes, symmetric=True)
    a += eps * ng.grad(u) * ng.grad(v) * ng.dx
    if kappa:
        for side, k in kappa.items():
            a += ng.BoundaryFromVolumeCF(eps) * k * u * v * ng.ds(side)
    a.Assemble()
    inv = a.mat.Inverse(fes.FreeDofs(), inverse="sparsecholesky")
    sols = []
    for name in conductors:
        g = ng.GridFunction(fes)
        g.Set(1.0, definedon=mesh.Boundaries(name))
        r = g.vec.CreateVector()
        r.data = -1.0 * (a.mat * g.vec)
        g.vec.data += inv * r
        sols.append(g)
    n = len(conductors)
    m = [[0.0] * n for _ in range(n)]
    tmp = sols[0].vec.CreateVector()
    for i in range(n):
        tmp.data = a.mat * sols[i].vec
        for j in range(n):
            m[i][j] = ng.InnerProduct(tmp, sols[j].vec)
    return m, fes.ndof


def run_sensor_pad(d, order, levels, factor, maxh):
    mesh, eps_of = make_mesh(d, d.singular, maxh, levels, factor)
    names = [c[0] for c in d.conductors]
    m, ndof = energy_matrix(mesh, eps_of, d, order, names)
    cmat = [[EPS0 * m[i][j] for j in range(3)] for i in range(3)]
    return {"C": cmat, "ndof": ndof, "elements": mesh.ne}


def run_microstrip(d, order, levels, factor, maxh):
    mesh, eps_of = make_mesh(d, d.singular, maxh, levels, factor)
    kappa = far_field_kappa(d)
    m, ndof = energy_matrix(mesh, eps_of, d, order, ["trace"], kappa)
    m0, _ = energy_matrix(mesh, eps_of, d, order, ["trace"], kappa, eps_one=True)
    c = 2.0 * EPS0 * m[0][0]  # whole line: the half model unfolded across the left side
    c0 = 2.0 * EPS0 * m0[0][0]
    return {
        "C": c,
        "C0": c0,
        "z0": 1.0 / (C_LIGHT * math.sqrt(c * c0)),
        "eps_eff": c / c0,
        "ndof": ndof,
        "elements": mesh.ne,
    }


def values(name, r):
    if name == "sensor_pad":
        names = ["sense", "neighbour", "guard"]
        return {f"C[{names[i]},{names[j]}]": r["C"][i][j] for i in range(3) for j in range(i, 3)}
    return {"z0": r["z0"], "eps_eff": r["eps_eff"], "C": r["C"], "C0": r["C0"]}


def rel(a, b):
    return abs(a - b) / abs(b)


def study(name, d, run, orders, levels_list, factor, maxh, table):
    """Runs over (p, levels) at mesh size `maxh`, then the finest (p, levels) on a mesh of
    size maxh / 2. Returns the finest values and, per value, the estimated relative error:
    the largest change of the finest run against the run one order lower, the run with two
    geometric levels fewer, and the run on the mesh of half the size."""
    results = {}

    def one(p, lv, h):
        t0 = time.perf_counter()
        r = run(d, p, lv, factor, h)
        dt = time.perf_counter() - t0
        vals = values(name, r)
        table.append({"p": p, "levels": lv, "maxh_mm": h, "ndof": r["ndof"],
                      "elements": r["elements"], "seconds": round(dt, 3), "values": vals})
        text = "  ".join(f"{k}={v:.10g}" for k, v in vals.items())
        print(f"{name:10s} p={p:2d} levels={lv:2d} maxh={h:<5g} ndof={r['ndof']:7d} "
              f"{dt:6.2f}s  {text}", flush=True)
        return vals

    for lv in levels_list:
        for p in orders:
            results[p, lv, maxh] = one(p, lv, maxh)
    pf, lf = orders[-1], levels_list[-1]
    results[pf, lf, maxh / 2] = one(pf, lf, maxh / 2)
    best = results[pf, lf, maxh]
    neighbours = [results[pf, lf, maxh / 2]]
    if len(orders) > 1:
        neighbours.append(results[orders[-2], lf, maxh])
    if len(levels_list) > 1:
        neighbours.append(results[pf, levels_list[-2], maxh])
    est = {k: max(rel(n[k], best[k]) for n in neighbours) for k in best}
    return best, est, (pf, lf)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true",
                    help="one cheap run per design, good to about 1e-4; writes nothing")
    ap.add_argument("--box", type=float, nargs="+", default=None,
                    help="microstrip only: also solve with the distance to the open sides "
                         "scaled by these factors, and compare with the design's box")
    ap.add_argument("--factor", type=float, default=0.15, help="geometric refinement factor")
    ap.add_argument("--out", default=os.path.join(HERE, "fem_values.json"))
    args = ap.parse_args()
    t_start = time.perf_counter()
    ng.SetNumThreads(1)

    sp = sensor_pad()
    ms = microstrip()
    check_design(os.path.join(ROOT, "geometries", "sensor_pad.toml"), sp)
    check_design(os.path.join(ROOT, "geometries", "microstrip.toml"), ms)

    if args.box:
        # Truncation study: the same problem with the open sides `box` times as far from the
        # trace (same Robin condition), against the design's own box.
        base = None
        for box in [1.0] + args.box:
            d = microstrip(box)
            r = run_microstrip(d, 8, 10, args.factor, 0.5 * box)
            base = base or r
            print(f"microstrip open sides x{box:<5g} box {d.x[1]:7.3f} x {d.y[1]:7.3f} mm: "
                  f"z0={r['z0']:.8f} ohm ({r['z0'] / base['z0'] - 1:+.3e})  "
                  f"eps_eff={r['eps_eff']:.8f} ({r['eps_eff'] / base['eps_eff'] - 1:+.3e})",
                  flush=True)
        print(f"total {time.perf_counter() - t_start:.2f} s")
        return

    if args.quick:
        # One cheap run per design (p = 4, four geometric levels); compared with the
        # committed values when they are there.
        try:
            with open(args.out) as f:
                ref = json.load(f)
        except OSError:
            ref = None
        worst = 0.0
        for name, d, run, maxh in (("sensor_pad", sp, run_sensor_pad, 1.0),
                                   ("microstrip", ms, run_microstrip, 0.5)):
            r = run(d, 4, 4, args.factor, maxh)
            for k, v in values(name, r).items():
                line = f"{name} {k} = {v:.8g}"
                if ref is not None:
                    e = rel(v, ref[name]["values"][k])
                    worst = max(worst, e)
                    line += f"  (relative difference to committed value {e:.1e})"
                print(line)
        if ref is not None:
            print(f"worst relative difference to the committed values: {worst:.1e}")
        print(f"total {time.perf_counter() - t_start:.2f} s")
        return

    table = {"sensor_pad": [], "microstrip": []}
    orders = [2, 3, 4, 5, 6, 7, 8, 9, 10]
    levels = [4, 6, 8, 10, 12]
    sp_best, sp_est, sp_at = study("sensor_pad", sp, run_sensor_pad, orders, levels,
                                   args.factor, 1.0, table["sensor_pad"])
    ms_best, ms_est, ms_at = study("microstrip", ms, run_microstrip, orders, levels,
                                   args.factor, 0.5, table["microstrip"])
    # The same line with the open sides 16x as far (same condition): how much the design's
    # box moves the answer against the unbounded line.
    far = run_microstrip(microstrip(16.0), 8, 10, args.factor, 0.5 * 16.0)
    truncation = {
        "box_factor": 16.0,
        "box_mm": [microstrip(16.0).x[1], microstrip(16.0).y[1]],
        "order": 8, "levels": 10, "maxh_mm": 8.0,
        "z0": far["z0"], "eps_eff": far["eps_eff"],
        "design_box_relative_to_far": {k: ms_best[k] / far[k] - 1.0 for k in ("z0", "eps_eff")},
    }
    print(f"microstrip, open sides 16x as far: z0={far['z0']:.8f} eps_eff={far['eps_eff']:.8f}")
    out = {
        "about": "Finite-element reference values for geometries/sensor_pad.toml and "
                 "geometries/microstrip.toml, computed by tests/reference/fem_reference.py "
                 "(see README.md there). Capacitances in F/m (per metre of length), Z0 in ohm.",
        "library": {"ngsolve": ng.__version__, "netgen": netgen.__version__,
                    "python": sys.version.split()[0]},
        "constants": {"eps0": EPS0, "c": C_LIGHT},
        "method": {
            "elements": "continuous H1 (Lagrange-type hierarchical) triangles of order p",
            "mesh": "Netgen 2-D, edges of every material and copper region, geometric (hp) "
                    f"refinement factor {args.factor} towards the marked points",
            "capacitance": "energy form C_ij = eps0 a(u_i, u_j)",
            "estimate": "largest relative change of the finest run against one order lower, "
                        "two geometric levels fewer, and the initial mesh size halved",
        },
        "sensor_pad": {
            "conductors": ["sense", "neighbour", "guard"],
            "sides": sp.sides,
            "order": sp_at[0], "levels": sp_at[1], "maxh_mm": 1.0,
            "values": sp_best, "estimated_relative_error": sp_est,
        },
        "microstrip": {
            "signal": "trace",
            "sides": ms.sides,
            "open_sides": "d(phi)/dn + kappa phi = 0, right kappa = 2x/(x^2+y^2), top "
                          "kappa = max(0, (y^2-x^2)/(y (x^2+y^2))), lengths about the "
                          "corner (0, 0) of the symmetry and ground sides",
            "unfolded_across": ["left"],
            "order": ms_at[0], "levels": ms_at[1], "maxh_mm": 0.5,
            "values": ms_best, "estimated_relative_error": ms_est,
            "truncation": truncation,
        },
        "convergence": table,
    }
    with open(args.out, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"wrote {args.out}; total {time.perf_counter() - t_start:.1f} s")


if __name__ == "__main__":
    main()
