//! Large sweep tables: resuming and merging read them as streams, and give what joining the
//! rows in memory gives. The tables are made from one real row with the point index and the
//! values changed, so tens of thousands of points cost no solves.

use std::collections::BTreeMap;
use std::path::Path;

use fieldgrid_tests::cli::{expect_for, run, s, scratch, write};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-sweep-streams";

/// One strip over a ground plane on a coarse lattice; its width varies.
const STRIP: &str = r#"
unit = "mm"
[parameters]
w = 1.0
[grid]
x = [0.0, 4.0]
y = [0.0, 2.0]
cell = 0.25
[[conductor]]
name = "pad"
potential = 1.0
rect = { x = [1.0, "1 + w"], y = [0.75, 1.25] }
"#;

/// A sweep's definition and one row of it, from a real two-point sweep of `design` that
/// varies `w` from 1 to 2.
fn template(dir: &Path, design: &str) -> (serde_json::Value, Vec<String>) {
    let out = dir.join("template");
    expect_for(
        run(&[
            "sweep",
            design,
            "--vary",
            "w=1:2:2",
            "--out",
            s(&out),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
        "template sweep",
    );
    let def = fieldgrid_tests::cli::read_json(&out.join("sweep.json"));
    let mut r = csv::Reader::from_path(out.join("sweep.csv")).unwrap();
    let row = r.records().next().unwrap().unwrap();
    (def, row.iter().map(str::to_string).collect())
}

/// The definition of the same sweep with `points` points (shard `shard`, if any).
fn definition(def: &serde_json::Value, points: usize, shard: Option<(usize, usize)>) -> String {
    let mut d = def.clone();
    d["vary"][0]["count"] = points.into();
    d["points"] = points.into();
    match shard {
        Some((index, count)) => d["shard"] = serde_json::json!({"index": index, "count": count}),
        None => {
            d.as_object_mut().unwrap().remove("shard");
        }
    }
    serde_json::to_string_pretty(&d).unwrap()
}

/// Point `p`'s row: the template with its index, its width and a value of its own.
fn row(template: &[String], p: usize, points: usize) -> Vec<String> {
    let mut r = template.to_vec();
    r[0] = p.to_string();
    r[1] = format!("{}", 1.0 + p as f64 / (points - 1) as f64);
    r[2] = format!("{}e-11", 1 + p % 97);
    r
}

/// Writes a sweep directory holding `points` of the sweep, in the order given.
fn table_dir(dir: &Path, def: &str, columns: &[String], rows: impl Iterator<Item = Vec<String>>) {
    std::fs::create_dir_all(dir).unwrap();
    std::fs::write(dir.join("sweep.json"), def).unwrap();
    let mut w = csv::Writer::from_path(dir.join("sweep.csv")).unwrap();
    w.write_record(columns).unwrap();
    for r in rows {
        w.write_record(&r).unwrap();
    }
    w.flush().unwrap();
}

fn columns(def: &serde_json::Value) -> Vec<String> {
    def["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap().to_string())
        .collect()
}

/// The table the rows of `dirs` make when read whole into memory and written in point
/// order.
fn joined_in_memory(dirs: &[&Path], columns: &[String]) -> Vec<u8> {
    let mut rows = BTreeMap::new();
    for d in dirs {
        let mut r = csv::Reader::from_path(d.join("sweep.csv")).unwrap();
        for rec in r.records() {
            let rec: Vec<String> = rec.unwrap().iter().map(str::to_string).collect();
            rows.insert(rec[0].parse::<usize>().unwrap(), rec);
        }
    }
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(columns).unwrap();
    for r in rows.values() {
        w.write_record(r).unwrap();
    }
    w.into_inner().unwrap()
}

#[test]
fn merging_large_shards_streams_the_table_that_joining_them_in_memory_gives() {
    let dir = scratch(SCRATCH, "merge");
    let design = write(&dir, "strip.toml", STRIP);
    let (def, template) = template(&dir, &design);
    let cols = columns(&def);
    const POINTS: usize = 30_000;
    let shard = |i: usize| dir.join(format!("shard-{i}"));
    for i in 0..3 {
        table_dir(
            &shard(i),
            &definition(&def, POINTS, Some((i, 3))),
            &cols,
            (i..POINTS).step_by(3).map(|p| row(&template, p, POINTS)),
        );
    }
    // A second copy of shard 1: the points it repeats agree exactly.
    let copy = dir.join("copy-of-1");
    table_dir(
        &copy,
        &definition(&def, POINTS, Some((1, 3))),
        &cols,
        (1..POINTS).step_by(3).map(|p| row(&template, p, POINTS)),
    );
    let parts = [shard(0), shard(1), shard(2), copy.clone()];
    let out = dir.join("merged");
    let mut args = vec!["sweep", "--merge"];
    args.extend(parts.iter().map(|p| s(p)));
    args.extend(["--out", s(&out), "--quiet"]);
    expect_for(run(&args), 0, "merge");
    let parts_ref: Vec<&Path> = parts.iter().map(|p| p.as_path()).collect();
    let merged = std::fs::read(out.join("sweep.csv")).unwrap();
    assert_eq!(merged.len(), joined_in_memory(&parts_ref, &cols).len());
    assert!(
        merged == joined_in_memory(&parts_ref, &cols),
        "the merged table differs"
    );
    let merged_def = fieldgrid_tests::cli::read_json(&out.join("sweep.json"));
    assert_eq!(merged_def["points"], POINTS);
    assert!(merged_def.get("shard").is_none());

    // A repeated point that disagrees, a missing point and rows out of order are refused,
    // and leave no --out.
    let refused = |what: &str, parts: &[&Path]| {
        let out = dir.join(format!("refused-{what}"));
        let mut args = vec!["sweep", "--merge"];
        args.extend(parts.iter().map(|p| s(p)));
        args.extend(["--out", s(&out), "--quiet"]);
        expect_for(run(&args), 2, what);
        assert!(!out.exists(), "{what}: --out was made");
    };
    let changed = dir.join("changed-copy");
    table_dir(
        &changed,
        &definition(&def, POINTS, Some((1, 3))),
        &cols,
        (1..POINTS).step_by(3).map(|p| {
            let mut r = row(&template, p, POINTS);
            if p == 20_002 {
                r[2] = "9e-11".into();
            }
            r
        }),
    );
    refused("disagreeing", &[&shard(0), &shard(1), &shard(2), &changed]);
    let short = dir.join("short-2");
    table_dir(
        &short,
        &definition(&def, POINTS, Some((2, 3))),
        &cols,
        (2..POINTS)
            .step_by(3)
            .filter(|&p| p != 29_999)
            .map(|p| row(&template, p, POINTS)),
    );
    refused("missing", &[&shard(0), &shard(1), &short]);
    let swapped = dir.join("swapped-2");
    let mut order: Vec<usize> = (2..POINTS).step_by(3).collect();
    order.swap(5000, 5001);
    table_dir(
        &swapped,
        &definition(&def, POINTS, Some((2, 3))),
        &cols,
        order.into_iter().map(|p| row(&template, p, POINTS)),
    );
    refused("unordered", &[&shard(0), &shard(1), &swapped]);
}

#[test]
fn resuming_a_large_table_keeps_its_rows_and_solves_only_the_missing_point() {
    let dir = scratch(SCRATCH, "resume");
    let design = write(&dir, "strip.toml", STRIP);
    let (def, template) = template(&dir, &design);
    let cols = columns(&def);
    const POINTS: usize = 20_000;
    let out = dir.join("out");
    // Every point but the last, as an interrupted run leaves them.
    table_dir(
        &out,
        &definition(&def, POINTS, None),
        &cols,
        (0..POINTS - 1).map(|p| row(&template, p, POINTS)),
    );
    let before = std::fs::read(out.join("sweep.csv")).unwrap();
    let vary = format!("w=1:2:{POINTS}");
    let args = [
        "sweep",
        &design,
        "--vary",
        &vary,
        "--out",
        s(&out),
        "--quiet",
        "--no-error-estimate",
    ];
    expect_for(run(&args), 0, "resume");
    let after = std::fs::read(out.join("sweep.csv")).unwrap();
    assert!(after.starts_with(&before), "the rows already there changed");
    let added: Vec<csv::StringRecord> = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(&after[before.len()..])
        .records()
        .map(Result::unwrap)
        .collect();
    assert_eq!(added.len(), 1, "exactly the missing point is solved");
    assert_eq!(&added[0][0], (POINTS - 1).to_string().as_str());
    // A table holding a point twice is refused, not resumed.
    let twice = dir.join("twice");
    table_dir(
        &twice,
        &definition(&def, POINTS, None),
        &cols,
        (0..10).chain([3]).map(|p| row(&template, p, POINTS)),
    );
    let args = [
        "sweep",
        &design,
        "--vary",
        &vary,
        "--out",
        s(&twice),
        "--quiet",
        "--no-error-estimate",
    ];
    expect_for(run(&args), 2, "a point twice");
}
