//! Every CSV of a solve reads back with the `csv` crate's default reader: a header row that
//! names units, the same number of fields on every row, numbers that parse.

use fieldgrid_tests::cli::{expect, run, s, scratch, write};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-csv";

// A strip over a dielectric layer with a strength, so every table has rows.
const STRIP: &str = fieldgrid_tests::mirror_box_4x2_mm!(
    r#"top = "open"
[background]
strength = 3.0e6
[[dielectric]]
name = "board"
permittivity = 4.0
strength = 2.0e7
rect = { x = [0.0, 4.0], y = [0.0, 0.5] }
[[conductor]]
name = "strip"
potential = 1.0
rect = { x = [1.5, 2.5], y = [0.5, 0.6] }
"#
);

/// Reads a CSV with default options; returns the header and the rows.
fn read(path: &std::path::Path) -> (Vec<String>, Vec<csv::StringRecord>) {
    let mut r = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{path:?}: {e}"));
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let rows: Vec<_> = r
        .records()
        .map(|x| x.unwrap_or_else(|e| panic!("{path:?}: {e}")))
        .collect();
    (header, rows)
}

fn column(header: &[String], name: &str) -> usize {
    header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name:?} in {header:?}"))
}

/// Each listed column parses as a finite number on every row.
fn numeric(file: &str, header: &[String], rows: &[csv::StringRecord], cols: &[&str]) {
    for c in cols {
        let k = column(header, c);
        for (n, row) in rows.iter().enumerate() {
            let v: f64 = row[k]
                .parse()
                .unwrap_or_else(|e| panic!("{file} row {n} {c}: {:?}: {e}", &row[k]));
            assert!(v.is_finite(), "{file} row {n} {c} = {v}");
        }
    }
}

#[test]
fn every_csv_reads_back_with_default_options() {
    let dir = scratch(SCRATCH, "strip");
    let design = write(&dir, "strip.toml", STRIP);
    let out = dir.join("out");
    expect(
        run(&[
            "solve",
            &design,
            "--out",
            s(&out),
            "--quiet",
            "--field-table",
        ]),
        0,
    );

    let (h, rows) = read(&out.join("capacitance.csv"));
    assert_eq!(h[0], "conductor");
    assert_eq!(rows.len(), 1);
    assert_eq!(&rows[0][0], "strip");
    let cap_col = &h[1];
    assert!(
        cap_col.starts_with("strip (") && cap_col.ends_with(')'),
        "{h:?}"
    );
    numeric("capacitance.csv", &h, &rows, &[cap_col.as_str()]);
    let c: f64 = rows[0][1].parse().unwrap();
    assert!(c > 0.0, "self capacitance {c}");

    let (h, rows) = read(&out.join("hotspots.csv"));
    assert!(!rows.is_empty());
    numeric(
        "hotspots.csv",
        &h,
        &rows,
        &[
            "rank",
            "x (m)",
            "y (m)",
            "field (V/m)",
            "strength (V/m)",
            "margin",
        ],
    );
    let singular = column(&h, "singular");
    assert!(rows.iter().all(|r| r[singular].parse::<bool>().is_ok()));

    let (h, rows) = read(&out.join("surface_charge.csv"));
    assert!(!rows.is_empty());
    numeric(
        "surface_charge.csv",
        &h,
        &rows,
        &[
            "x (m)",
            "y (m)",
            "surface charge (C/m^2)",
            "field (V/m)",
            "error estimate (C/m^2)",
        ],
    );
    assert!(rows.iter().all(|r| &r[0] == "strip"));
    // The columns kept where they were, the estimate after them; every estimate is a
    // magnitude; the samples integrate to the conductor's charge in summary.json.
    assert_eq!(
        &h[..6],
        [
            "conductor",
            "x (m)",
            "y (m)",
            "surface charge (C/m^2)",
            "field (V/m)",
            "area (m^2/m planar, m^2 axisymmetric)"
        ]
    );
    let (sigma, area, est) = (
        column(&h, "surface charge (C/m^2)"),
        column(&h, "area (m^2/m planar, m^2 axisymmetric)"),
        column(&h, "error estimate (C/m^2)"),
    );
    assert!(rows.iter().all(|r| r[est].parse::<f64>().unwrap() >= 0.0));
    let total: f64 = rows
        .iter()
        .map(|r| r[sigma].parse::<f64>().unwrap() * r[area].parse::<f64>().unwrap())
        .sum();
    let q = fieldgrid_tests::cli::summary(&out)["conductors"][0]["charge"]
        .as_f64()
        .unwrap();
    assert!(
        (total - q).abs() <= 1e-6 * q.abs(),
        "surface_charge.csv integrates to {total:e}, the charge is {q:e}"
    );

    let (h, rows) = read(&out.join("field.csv"));
    // One row per node.
    let grid = &fieldgrid_tests::cli::summary(&out)["grid"];
    let nodes = grid["nx"].as_u64().unwrap() * grid["ny"].as_u64().unwrap();
    assert_eq!(rows.len() as u64, nodes);
    numeric("field.csv", &h, &rows, &["x (m)", "y (m)", "potential (V)"]);
    // The field is left empty (a missing value to dataframe readers) only where it is not
    // defined: at nodes held at a fixed potential, inside the strip (x in [1.5, 2.5] mm,
    // y in [0.5, 0.6] mm) or on the grounded bottom side (y = 0).
    let (x, y) = (column(&h, "x (m)"), column(&h, "y (m)"));
    let (defined, undefined): (Vec<_>, Vec<_>) = rows
        .iter()
        .cloned()
        .partition(|r| !r[column(&h, "Ex (V/m)")].is_empty());
    numeric(
        "field.csv",
        &h,
        &defined,
        &["Ex (V/m)", "Ey (V/m)", "|E| (V/m)"],
    );
    assert!(defined.len() as u64 > nodes / 2);
    for r in &undefined {
        let (x, y): (f64, f64) = (r[x].parse().unwrap(), r[y].parse().unwrap());
        assert!(
            y == 0.0
                || ((1.5e-3 - 1e-9..=2.5e-3 + 1e-9).contains(&x)
                    && (0.5e-3 - 1e-9..=0.6e-3 + 1e-9).contains(&y)),
            "field missing at ({x}, {y}), outside the conductor"
        );
        assert!(r.iter().skip(3).all(str::is_empty), "{r:?}");
    }
    // Every header names its unit (or is a name, a count, a ratio or a flag).
    for file in [
        "capacitance.csv",
        "hotspots.csv",
        "surface_charge.csv",
        "field.csv",
    ] {
        let (h, _) = read(&out.join(file));
        for name in &h {
            let unitless = [
                "conductor",
                "rank",
                "material",
                "margin",
                "singular",
                "note",
            ];
            assert!(
                unitless.contains(&name.as_str()) || (name.contains('(') && name.ends_with(')')),
                "{file}: column {name:?} names no unit"
            );
        }
    }
}
