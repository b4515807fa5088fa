#!/usr/bin/env bash
# Draws the README's pictures (docs/pictures/*.png) from the demo designs in geometries/.
# Run from anywhere after changing the renderer or a demo: bash docs/make-pictures.sh
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
fieldgrid=${CARGO_TARGET_DIR:-target}/release/fieldgrid
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
# 900 px keeps each picture legible on a README page and small in the repository.
opts=(--picture-width 900 --quiet)

"$fieldgrid" check geometries/sensor_pad.toml --out "$work/check" "${opts[@]}"
"$fieldgrid" solve geometries/sensor_pad.toml --out "$work/sensor_pad" "${opts[@]}"
"$fieldgrid" solve geometries/hv_tip.toml --out "$work/tip_sharp" "${opts[@]}"
"$fieldgrid" solve geometries/hv_tip.toml --set tip_round=0.5 --out "$work/tip_round" "${opts[@]}"
"$fieldgrid" impedance geometries/microstrip.toml --signal trace --out "$work/microstrip" "${opts[@]}"
# compare exits 1: the revisions differ, which is what the picture shows.
"$fieldgrid" compare geometries/touch_pad_rev_a.toml geometries/touch_pad_rev_b.toml \
    --out "$work/compare" "${opts[@]}" || [ $? -eq 1 ]
"$fieldgrid" solve geometries/hv_electrode.toml --out "$work/hv_electrode" "${opts[@]}"

out=docs/pictures
mkdir -p "$out"
cp "$work/check/preview.png"          "$out/sensor_pad_preview.png"
cp "$work/sensor_pad/potential.png"   "$out/sensor_pad_potential.png"
cp "$work/sensor_pad/field.png"       "$out/sensor_pad_field.png"
cp "$work/tip_sharp/field.png"        "$out/hv_tip_sharp_field.png"
cp "$work/tip_round/field.png"        "$out/hv_tip_round_field.png"
cp "$work/microstrip/potential.png"   "$out/microstrip_potential.png"
cp "$work/compare/field_change.png"   "$out/touch_pad_field_change.png"
cp "$work/hv_electrode/potential.png" "$out/hv_electrode_potential.png"
cp "$work/hv_electrode/field.png"     "$out/hv_electrode_field.png"
cp "$work/hv_electrode/margin.png"    "$out/hv_electrode_margin.png"
ls -l "$out"
