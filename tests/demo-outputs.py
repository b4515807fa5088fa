#!/usr/bin/env python3
"""Runs every demo design through two builds of fieldgrid and compares what they wrote.

Usage: python3 tests/demo-outputs.py OLD NEW [--work DIR] [--quick] [--only DEMO...]

OLD and NEW are each a fieldgrid executable or a git revision of this repository (built
with `cargo build --release` in a temporary worktree; CARGO_TARGET_DIR, when set, is shared
by both builds, so the dependencies are built once). Both builds read the same designs, the
`geometries/` of the checkout this script sits in, from a scratch directory of their own
with the same relative paths, and run:

- `check DEMO --out ...` and `solve DEMO --out ...` (default options) for every demo;
- `solve DEMO --vtk --field-table --out ...` for every demo, for the files only options
  write (skipped with --quick);
- `impedance` for the line demos and `compare` for the revision pairs, as the README runs
  them.

Then every file either build wrote is compared: JSON files (summary.json, check.json, ...)
must be equal after dropping timing keys (`seconds`) and the keys that only the newer build
writes; every PNG must hold the same pixels (decoded; its bytes may differ when the encoder's
settings change, and the table gives both sizes); every other file (CSV, .cir, .vti, ...)
must be byte-identical; every exit code must be the same. A file only the newer build writes is listed as new. The table goes to
standard output; the exit code is 0 when nothing differs, 1 on a difference, 2 when a build
or the set-up fails. This is how a refactor shows that the demos' results did not move.
"""

import argparse
import json
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
DESIGNS = REPO / "geometries"

# Keys whose values are wall-clock times: never compared.
TIMING_KEYS = {"seconds"}

# The line demos as the README runs them (`fieldgrid impedance DESIGN --signal ...`).
IMPEDANCE = [("microstrip.toml", "trace"), ("coupled_stripline.toml", "p,n")]
# The revision pairs the README compares (`fieldgrid compare BASE NEW`).
COMPARE = [
    ("touch_pad_rev_a.toml", "touch_pad_rev_b.toml"),
    ("round_touch_pad_bare.toml", "round_touch_pad.toml"),
]


def fail(message):
    print(f"demo-outputs: {message}", file=sys.stderr)
    sys.exit(2)


def build(rev, work):
    """Builds revision `rev` in a temporary worktree; returns the path of its binary."""
    try:
        sha = subprocess.run(
            ["git", "-C", str(REPO), "rev-parse", "--verify", f"{rev}^{{commit}}"],
            check=True, capture_output=True, text=True,
        ).stdout.strip()
    except subprocess.CalledProcessError:
        fail(f"{rev} is neither an executable file nor a git revision")
    src = work / f"src-{sha[:12]}"
    binary = work / f"fieldgrid-{sha[:12]}"
    if binary.exists():
        return binary
    if src.exists():
        subprocess.run(["git", "-C", str(REPO), "worktree", "remove", "--force", str(src)])
    subprocess.run(
        ["git", "-C", str(REPO), "worktree", "add", "--quiet", "--detach", str(src), sha],
        check=True,
    )
    try:
        env = dict(os.environ)
        target = Path(env.get("CARGO_TARGET_DIR", work / "target"))
        env["CARGO_TARGET_DIR"] = str(target)
        print(f"building {rev} ({sha[:12]}) in {target} ...", file=sys.stderr)
        r = subprocess.run(
            ["cargo", "build", "--release", "--quiet", "-p", "fieldgrid-cli", "--bin",
             "fieldgrid"],
            cwd=src, env=env,
        )
        if r.returncode != 0:
            fail(f"building {rev} failed")
        shutil.copy2(target / "release" / "fieldgrid", binary)
    finally:
        subprocess.run(
            ["git", "-C", str(REPO), "worktree", "remove", "--force", str(src)], check=False
        )
    return binary


def binary_of(arg, work):
    p = Path(arg)
    if p.is_file() and os.access(p, os.X_OK):
        return p.resolve()
    return build(arg, work)


def runs(quick, only):
    """(label, arguments) of every run; outputs go to out/LABEL. `only`, when not empty,
    keeps the runs that read one of the demos it names."""
    out = []
    for design in sorted(DESIGNS.glob("*.toml")):
        demo = f"geometries/{design.name}"
        stem = design.stem
        out.append((f"check/{stem}", ["check", demo]))
        out.append((f"solve/{stem}", ["solve", demo]))
        if not quick:
            out.append((f"files/{stem}", ["solve", demo, "--vtk", "--field-table"]))
    for design, signals in IMPEDANCE:
        out.append((f"impedance/{Path(design).stem}",
                    ["impedance", f"geometries/{design}", "--signal", signals]))
    for base, new in COMPARE:
        out.append((f"compare/{Path(base).stem}--{Path(new).stem}",
                    ["compare", f"geometries/{base}", f"geometries/{new}"]))
    if only:
        names = {Path(n).stem for n in only}
        out = [r for r in out if any(Path(a).stem in names for a in r[1][1:])]
    return out


def run_all(binary, scratch, quick, only):
    """Runs every command with `binary` in `scratch`; returns {label: exit code}."""
    scratch.mkdir(parents=True)
    (scratch / "geometries").symlink_to(DESIGNS)
    codes = {}
    for label, args in runs(quick, only):
        full = [str(binary), *args, "--out", f"out/{label}", "--quiet"]
        r = subprocess.run(full, cwd=scratch, capture_output=True, text=True)
        codes[label] = r.returncode
        if r.returncode not in (0, 1):
            print(f"{binary.name} {' '.join(args)}: exit {r.returncode}\n{r.stderr}",
                  file=sys.stderr)
    return codes


def normalised(old, new, path="$"):
    """`new` without timing keys and keys `old` lacks (recursively), and `old` without
    timing keys; lists are compared element by element."""
    if isinstance(old, dict) and isinstance(new, dict):
        o = {k: v for k, v in old.items() if k not in TIMING_KEYS}
        n = {k: v for k, v in new.items() if k not in TIMING_KEYS and k in old}
        for k in o:
            if k in n:
                o[k], n[k] = normalised(o[k], n[k], f"{path}.{k}")
        return o, n
    if isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
        pairs = [normalised(a, b, f"{path}[{i}]") for i, (a, b) in enumerate(zip(old, new))]
        return [a for a, _ in pairs], [b for _, b in pairs]
    return old, new


def first_difference(a, b, path="$"):
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k not in b:
                return f"{path}.{k} missing"
            d = first_difference(a[k], b[k], f"{path}.{k}")
            if d:
                return d
        return None
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return f"{path}: {len(a)} items, now {len(b)}"
        for i, (x, y) in enumerate(zip(a, b)):
            d = first_difference(x, y, f"{path}[{i}]")
            if d:
                return d
        return None
    return None if a == b and type(a) is type(b) else f"{path}: {a!r} -> {b!r}"


def png_pixels(path):
    """(width, height, colour type, bit depth, rows of unfiltered bytes) of a PNG that is
    not interlaced, decoded with zlib alone (PIL, when installed, gives the same rows
    faster)."""
    data = path.read_bytes()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG")
    pos, idat, head = 8, [], None
    while pos < len(data):
        (n,), kind = struct.unpack(">I", data[pos:pos + 4]), data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + n]
        pos += 12 + n
        if kind == b"IHDR":
            head = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
    w, h, depth, colour, _, _, interlace = head
    if interlace:
        raise ValueError("interlaced")
    try:
        from PIL import Image
        with Image.open(path) as im:
            raw = im.tobytes()
        stride = len(raw) // h
        return w, h, colour, depth, [raw[k * stride:(k + 1) * stride] for k in range(h)]
    except ImportError:
        pass
    channels = {0: 1, 2: 3, 3: 1, 4: 2, 6: 4}[colour]
    bpp = max(1, channels * depth // 8)
    stride = (w * channels * depth + 7) // 8
    raw = zlib.decompress(b"".join(idat))
    rows, prev = [], bytearray(stride)
    for k in range(h):
        f, line = raw[k * (stride + 1)], bytearray(raw[k * (stride + 1) + 1:(k + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - bpp] if i >= bpp else 0
            b, c = prev[i], prev[i - bpp] if i >= bpp else 0
            if f == 1:
                line[i] = (line[i] + a) & 255
            elif f == 2:
                line[i] = (line[i] + b) & 255
            elif f == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pred) & 255
        rows.append(bytes(line))
        prev = line
    return w, h, colour, depth, rows


def compare_file(old, new):
    """(equal, note) for one file both builds wrote."""
    if old.suffix == ".json":
        try:
            a, b = json.loads(old.read_text()), json.loads(new.read_text())
        except ValueError as e:
            return False, f"not JSON: {e}"
        a, b = normalised(a, b)
        d = first_difference(a, b)
        return d is None, d or "equal (JSON)"
    same = old.read_bytes() == new.read_bytes()
    sizes = f"{old.stat().st_size} -> {new.stat().st_size} B"
    if not same and old.suffix == ".png":
        try:
            a, b = png_pixels(old), png_pixels(new)
        except (ValueError, KeyError, TypeError, zlib.error, struct.error) as e:
            return False, f"bytes differ ({sizes}), not decoded: {e}"
        if a[:4] != b[:4]:
            return False, f"picture {a[:4]} -> {b[:4]}"
        for k, (x, y) in enumerate(zip(a[4], b[4])):
            if x != y:
                return False, f"pixels differ from row {k} ({sizes})"
        return True, f"same pixels ({sizes})"
    return same, "identical" if same else f"bytes differ ({sizes})"


def files(root):
    return {p.relative_to(root) for p in root.rglob("*") if p.is_file()}


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("old", help="fieldgrid executable or git revision (the reference)")
    ap.add_argument("new", help="fieldgrid executable or git revision (the one checked)")
    ap.add_argument("--work", help="directory for builds and outputs (kept; default: a "
                    "temporary directory, removed)")
    ap.add_argument("--quick", action="store_true",
                    help="skip the runs with --vtk --field-table")
    ap.add_argument("--only", nargs="+", metavar="DEMO", default=[],
                    help="only the runs that read these demos (file names or stems)")
    args = ap.parse_args()
    work = Path(args.work or tempfile.mkdtemp(prefix="demo-outputs-")).resolve()
    work.mkdir(parents=True, exist_ok=True)
    try:
        old_bin = binary_of(args.old, work)
        new_bin = binary_of(args.new, work)
        for d in ("run-old", "run-new"):
            shutil.rmtree(work / d, ignore_errors=True)
        old_codes = run_all(old_bin, work / "run-old", args.quick, args.only)
        new_codes = run_all(new_bin, work / "run-new", args.quick, args.only)
        old_out, new_out = work / "run-old" / "out", work / "run-new" / "out"
        rows, bad = [], 0
        for label in old_codes:
            same = old_codes[label] == new_codes[label]
            bad += not same
            rows.append((f"out/{label}", "exit code", "same" if same else "DIFFERENT",
                         f"{old_codes[label]} -> {new_codes[label]}"))
        of, nf = files(old_out), files(new_out)
        for rel in sorted(of | nf):
            if rel not in nf:
                bad += 1
                rows.append((str(rel.parent), rel.name, "MISSING", "only the old build wrote it"))
            elif rel not in of:
                rows.append((str(rel.parent), rel.name, "new", "only the new build writes it"))
            else:
                ok, note = compare_file(old_out / rel, new_out / rel)
                bad += not ok
                rows.append((str(rel.parent), rel.name, "same" if ok else "DIFFERENT", note))
        widths = [max(len(r[k]) for r in rows) for k in range(3)]
        print(f"old: {args.old}\nnew: {args.new}\n")
        for r in rows:
            print("  ".join(c.ljust(w) for c, w in zip(r, widths)) + "  " + r[3])
        compared = sum(1 for r in rows if r[1] != "exit code")
        pngs = [rel for rel in of & nf if rel.suffix == ".png"]
        size = lambda root: sum((root / rel).stat().st_size for rel in pngs)
        print(f"\n{len(pngs)} pictures: {size(old_out)} B, now {size(new_out)} B")
        print(f"{len(old_codes)} runs, {compared} files: "
              f"{'no difference' if bad == 0 else f'{bad} DIFFERENCES'}")
        return 1 if bad else 0
    finally:
        if not args.work:
            shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
