//! Hot spots at a sharp electrode tip: placed at the tip, flagged singular, growing with
//! refinement at the rate of the wedge singularity; a rounded tip lowers the peak and is not
//! singular. The design is the demo `geometries/hv_tip.toml`, varied through its parameters.

use fieldgrid_cli::design_file::read_design;
use fieldgrid_solver::solvers::Method;
use fieldgrid_solver::study::{self, Solution};
use fieldgrid_tests::cli::{expect_for, run, s, scratch, write};
use fieldgrid_tests::params;

const HV_TIP: &str = include_str!("../../geometries/hv_tip.toml");
/// Tip position in the demo, m.
const TIP: [f64; 2] = [10.0e-3, 2.0e-3];

fn tip(cell_mm: f64, round_mm: f64) -> Solution {
    let overrides = [
        ("cell".to_string(), cell_mm),
        ("tip_round".to_string(), round_mm),
    ];
    let src = read_design(HV_TIP, "hv_tip.toml", &overrides).expect("demo design reads");
    let s = study::run(&src.design, &params(Method::default())).expect("study runs");
    assert!(s.solve.converged, "{:?}", s.solve);
    s
}

fn distance(h: &fieldgrid_solver::post::Hotspot, p: [f64; 2]) -> f64 {
    (h.x - p[0]).hypot(h.y - p[1])
}

#[test]
fn sharp_tip_hot_spot_is_singular_and_grows_at_the_wedge_rate() {
    // Near a conducting wedge whose field region opens by beta, the potential goes like
    // r^(pi/beta) and the field like r^(pi/beta - 1) (J. D. Jackson, Classical
    // Electrodynamics, 3rd ed., 1998, sec. 2.11). A 30 degree tip leaves beta = 330 degrees,
    // so the field grows like r^(-5/11): the tip lies on a grid node at every cell size here,
    // the lattice around it is self-similar, and the node field next to it grows by
    // 2^(5/11) = 1.370 each time the cell is halved.
    let want = 2f64.powf(5.0 / 11.0);
    let cells = [0.2, 0.1, 0.05];
    let mut peaks = Vec::new();
    for &c in &cells {
        let s = tip(c, 0.0);
        let top = &s.hotspots[0];
        let h = c * 1e-3;
        println!(
            "cell {c} mm: top hot spot {:.4e} V/m at ({:.4e}, {:.4e}) m, singular {}, margin {:?}",
            top.magnitude, top.x, top.y, top.singular, top.margin
        );
        assert!(
            distance(top, TIP) <= 1.5 * h,
            "top hot spot at ({}, {}) is not at the tip",
            top.x,
            top.y
        );
        assert!(top.singular, "the tip's hot spot must be flagged singular");
        assert_eq!(top.material, "background");
        // Margin = strength / field with the air strength of the demo.
        assert_eq!(top.strength, Some(3.0e6));
        assert_eq!(top.margin, Some(3.0e6 / top.magnitude));
        assert_eq!(s.peak_field.as_ref().unwrap().magnitude, top.magnitude);
        // Distinct peaks: no two hot spots closer than the separation, ranked by field.
        let sep = fieldgrid_solver::post::HotspotParams::default().separation_cells * h;
        for (i, a) in s.hotspots.iter().enumerate() {
            for b in &s.hotspots[i + 1..] {
                assert!(a.magnitude >= b.magnitude);
                assert!(
                    (a.x - b.x).hypot(a.y - b.y) >= sep * (1.0 - 1e-9),
                    "two hot spots of one peak"
                );
            }
        }
        peaks.push(top.magnitude);
    }
    for k in 1..peaks.len() {
        let ratio = peaks[k] / peaks[k - 1];
        println!(
            "growth from cell {} to {} mm: {ratio:.4} (wedge rate {want:.4}, exponent {:.4} vs 5/11 = {:.4})",
            cells[k - 1],
            cells[k],
            ratio.log2(),
            5.0 / 11.0
        );
        assert!(
            (ratio / want - 1.0).abs() < 0.03,
            "growth {ratio} per halving, want about {want}"
        );
    }
    // The rate approaches the wedge's as the cell shrinks (the next term of the wedge
    // expansion fades with the cell).
    let first = (peaks[1] / peaks[0] / want - 1.0).abs();
    let last = (peaks[2] / peaks[1] / want - 1.0).abs();
    assert!(last < first, "growth rate does not approach the wedge rate");
}

#[test]
fn rounded_tip_lowers_the_peak_and_is_not_singular() {
    let sharp = tip(0.05, 0.0);
    let coarse = tip(0.1, 0.5);
    let fine = tip(0.05, 0.5);
    let (ps, pc, pf) = (
        sharp.hotspots[0].magnitude,
        coarse.hotspots[0].magnitude,
        fine.hotspots[0].magnitude,
    );
    println!("cell 0.05 mm: sharp tip {ps:.4e} V/m, tip rounded 0.5 mm {pf:.4e} V/m");
    println!(
        "rounded tip: {pc:.4e} V/m at cell 0.1 mm, {pf:.4e} at 0.05 mm (change {:.2} %)",
        100.0 * (pf / pc - 1.0)
    );
    assert!(pf < ps, "rounding must lower the peak: {pf} vs {ps}");
    for s in [&coarse, &fine] {
        let top = &s.hotspots[0];
        assert!(!top.singular, "a rounded tip is not singular");
        assert!(!s.peak_field.as_ref().unwrap().singular);
        // The peak sits on the fillet, within its radius (plus a cell) of the tip vertex.
        assert!(distance(top, TIP) < 0.5e-3 / (15f64.to_radians().sin()) + 0.1e-3);
    }
    // A smooth surface has a finite peak: refinement moves it by a few per cent at most, where
    // the sharp tip grows by 37 % per halving.
    assert!((pf / pc - 1.0).abs() < 0.05, "rounded peak {pc} -> {pf}");
}

#[test]
fn solve_reports_singular_hot_spots_and_enforces_min_margin() {
    let dir = scratch("fieldgrid-hotspots", "cli");
    let design = write(
        &dir,
        "tip.toml",
        &HV_TIP.replace("cell = 0.05", "cell = 0.2"),
    );
    let d = design.as_str();
    // 10 kV across 2 mm of air is above its 3 kV/mm strength even without the tip: margin < 1.
    let out = dir.join("out");
    let o = s(&out);
    expect_for(
        run(&["solve", d, "--out", o, "--quiet", "--min-margin", "1.0"]),
        1,
        "margin below 1",
    );
    let mut r = csv::Reader::from_path(out.join("hotspots.csv")).unwrap();
    let h = r.headers().unwrap().clone();
    assert_eq!(&h[7], "singular");
    assert_eq!(&h[8], "note");
    let first = r.records().next().unwrap().unwrap();
    assert_eq!(&first[7], "true");
    assert!(
        first[8].contains("grows") && first[8].contains("round = r"),
        "{}",
        &first[8]
    );
    let margin: f64 = first[6].parse().unwrap();
    assert!(margin < 1.0);
    // A margin the design meets everywhere: exit 0.
    expect_for(
        run(&["solve", d, "--out", o, "--quiet", "--min-margin", "0.01"]),
        0,
        "low bar",
    );
    // --min-margin without any strength in the design: refused before solving.
    let weak = write(
        &dir,
        "nostrength.toml",
        &HV_TIP.replace("strength = 3.0e6", ""),
    );
    let out2 = dir.join("out2");
    expect_for(
        run(&[
            "solve",
            &weak,
            "--out",
            s(&out2),
            "--quiet",
            "--min-margin",
            "1.0",
        ]),
        2,
        "no strength to check against",
    );
    assert!(!out2.exists());
}

/// Regression guard: the field sampled at the nodes next to a smooth, curved electrode
/// ripples with their distance to the surface, and every ripple is a local maximum. The demo
/// HV electrode's rounded rim (radius 10 mm about (r, z) = (20, 35) mm) is one hot region and
/// must be reported as one hot spot, not as a row of nearly equal ones.
#[test]
fn a_smooth_rounded_rim_is_one_hot_spot_not_a_row_of_ripples() {
    use fieldgrid_solver::post::HotspotParams;
    let src = read_design(
        include_str!("../../geometries/hv_electrode.toml"),
        "hv_electrode.toml",
        &[],
    )
    .expect("demo design reads");
    let on_rim = |s: &Solution| {
        s.hotspots
            .iter()
            .filter(|h| (h.x - 20e-3).hypot(h.y - 35e-3) < 12e-3)
            .count()
    };
    let mut every_maximum = params(Method::default());
    every_maximum.hotspots = HotspotParams {
        persistence: 0.0,
        ..HotspotParams::default()
    };
    let ripples = study::run(&src.design, &every_maximum).expect("study runs");
    let s = study::run(&src.design, &params(Method::default())).expect("study runs");
    println!(
        "maxima on the rim: {} in all, {} persistent",
        on_rim(&ripples),
        on_rim(&s)
    );
    assert!(on_rim(&ripples) > 1, "the sampled rim field has ripples");
    assert_eq!(on_rim(&s), 1, "{:?}", s.hotspots);
    assert!(!s.hotspots[0].singular);
    assert_eq!(s.hotspots[0].magnitude, ripples.hotspots[0].magnitude);
}
