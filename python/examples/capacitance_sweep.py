"""Sweep one parameter of a design and plot its capacitances against it.

    python python/examples/capacitance_sweep.py geometries/sensor_pad.toml gap 0.5 2.0 7 \\
        --out gap_sweep.png

solves the design once per value (as `fieldgrid solve --set gap=VALUE` would), prints the
capacitance matrix entries of the first conductor and draws them, with their estimated
discretisation errors as error bars, into a PNG (matplotlib's Agg backend: no display
needed).
"""

from __future__ import annotations

import argparse
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

import fieldgrid  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("design", help="design file (TOML)")
    ap.add_argument("parameter", help="the parameter to vary, as named in [parameters]")
    ap.add_argument("start", type=float)
    ap.add_argument("stop", type=float)
    ap.add_argument("count", type=int)
    ap.add_argument("--out", default="sweep.png", help="PNG to write")
    ap.add_argument("--no-error-estimate", action="store_true", help="faster, no error bars")
    args = ap.parse_args()

    design = fieldgrid.Design.from_file(args.design)
    values = np.linspace(args.start, args.stop, args.count)
    rows, errors = [], []
    for v in values:
        r = fieldgrid.solve(
            design.with_parameters({args.parameter: v}),
            error_estimate=not args.no_error_estimate,
        )
        rows.append(r.capacitance[0])
        errors.append(None if r.capacitance_error is None else r.capacitance_error[0])
        cells = "  ".join(f"{c:11.4e}" for c in r.capacitance[0])
        print(f"{args.parameter} = {v:8.4g} {design.unit}:  {cells}  {r.units['capacitance']}")
    names, unit = r.names, r.units["capacitance"]
    caps = np.array(rows)

    fig, ax = plt.subplots(figsize=(7, 4.5))
    for k, name in enumerate(names):
        # Off-diagonal entries are couplings with a minus sign: plot their size.
        y = caps[:, k] if k == 0 else -caps[:, k]
        err = None if errors[0] is None else np.array(errors)[:, k]
        label = f"C({names[0]})" if k == 0 else f"-C({names[0]}, {name})"
        ax.errorbar(values, y * 1e12, yerr=None if err is None else err * 1e12,
                    marker="o", capsize=3, label=label)
    ax.set_xlabel(f"{args.parameter} ({design.unit})")
    ax.set_ylabel(f"capacitance (p{unit})")
    ax.set_title(f"{design.file}: capacitances of {names[0]}")
    ax.grid(True, alpha=0.3)
    ax.legend()
    fig.tight_layout()
    Path(args.out).parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(args.out, dpi=120)
    print(f"plot in {args.out}")


if __name__ == "__main__":
    main()
