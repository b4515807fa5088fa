//! The fuzz targets' bodies, shared by the cargo-fuzz targets (`fuzz/fuzz_targets/`), the
//! stable-toolchain driver (`fuzz/src/bin/stable.rs`) and the regression tests in
//! `tests/cli/robustness/fuzz_findings.rs`, so that a finding replays in CI exactly as the fuzzer saw it.
//!
//! Each target takes arbitrary bytes, must never panic, hang or exhaust memory, and checks
//! the invariants the library documents on whatever it produced. It returns a short outcome
//! signature (which path the input took, digits and names stripped) that the stable driver
//! uses as cheap feedback: an input that reaches a new signature joins its corpus.
//!
//! Grids are capped: a design may ask for any cell size, and the reader accepts grids far
//! larger than a fuzzer can afford, so the design target rasterises on a lattice of at most
//! [`RASTER_NODES`] nodes (the cell grown by powers of two) and solves on one of at most
//! [`SOLVE_NODES`].

use fieldgrid_cli::design_file::{expr, read_design};
use fieldgrid_solver::design::{self, Design};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::operator;
use fieldgrid_solver::raster::{self, Raster, NO_CONDUCTOR};
use fieldgrid_solver::solvers::{Method, Params};
use fieldgrid_solver::study::{self, StudyParams};

/// Most nodes the design target rasterises and assembles.
pub const RASTER_NODES: usize = 1 << 16;
/// Most nodes the design target solves.
pub const SOLVE_NODES: usize = 1600;

/// The name the design target gives its input: a file in `fuzz/`, so that SVG imports
/// (`svg = { file = "svg/shapes.svg", ... }`) find the drawings kept there.
pub const DESIGN_FILE: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/../fuzz/fuzz.toml");

/// The lattice for `design` with the cell grown (by factors of two) until it has at most
/// `cap` nodes. `None` when the reader's grid cannot be fitted at all.
pub fn capped_grid(design: &Design, cap: usize) -> Option<Grid> {
    let d = &design.domain;
    let mut cell = d.cell;
    for _ in 0..2100 {
        match Grid::fit(d.x, d.y, cell) {
            Ok(g) if g.len() <= cap => return Some(g),
            _ => cell *= 2.0,
        }
        if !cell.is_finite() {
            break;
        }
    }
    None
}

/// A finite number, or a description of the offender.
fn finite(v: f64, what: &str) -> Result<(), String> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(format!("{what} is {v}"))
    }
}

/// The documented invariants of a raster (see `solver/src/raster.rs`).
pub fn check_raster(design: &Design, r: &Raster) -> Result<(), String> {
    let n = r.grid.len();
    let nc = design.conductors.len();
    let nd = design.dielectrics.len();
    if r.conductor.len() != n || r.material.len() != n {
        return Err("node arrays do not match the grid".into());
    }
    if let Some(p) =
        (0..n).find(|&p| r.conductor[p] != NO_CONDUCTOR && r.conductor[p] as usize >= nc)
    {
        return Err(format!("node {p} names conductor {}", r.conductor[p]));
    }
    if let Some(p) = (0..n).find(|&p| r.material[p] as usize > nd) {
        return Err(format!("node {p} names material {}", r.material[p]));
    }
    for w in r.cut_edges.windows(2) {
        if (w[0].node, w[0].axis) >= (w[1].node, w[1].axis) {
            return Err(format!("cut edges out of order at node {}", w[1].node));
        }
    }
    let nx = r.grid.nx;
    for c in &r.cut_edges {
        let a = c.node as usize;
        let b = match c.axis {
            raster::Axis::X => a + 1,
            raster::Axis::Y => a + nx,
        };
        if b >= n || (c.axis == raster::Axis::X && a % nx + 1 >= nx) {
            return Err(format!("cut edge from node {a} leaves the grid"));
        }
        for (end, half) in [(a, c.from_a), (b, c.from_b)] {
            let Some(h) = half else { continue };
            if r.conductor[end] != NO_CONDUCTOR {
                return Err(format!("half-link seen from conductor node {end}"));
            }
            if !(h.theta > 0.0 && h.theta <= 1.0) {
                return Err(format!("theta {} at node {end}", h.theta));
            }
            if !(h.eps.is_finite() && h.eps > 0.0) {
                return Err(format!("permittivity {} at node {end}", h.eps));
            }
            match h.ends_on {
                None if h.theta != 1.0 => {
                    return Err(format!(
                        "free stretch from node {end} has theta {}",
                        h.theta
                    ))
                }
                Some(k) if k as usize >= nc => {
                    return Err(format!("half-link ends on conductor {k}"));
                }
                _ => {}
            }
        }
        if let Some(d) = c.direct {
            if !(d.gap > 0.0 && d.gap <= 1.0 && d.eps.is_finite() && d.eps > 0.0) {
                return Err(format!("direct link gap {} eps {}", d.gap, d.eps));
            }
            if d.a as usize >= nc || d.b as usize >= nc || d.a == d.b {
                return Err(format!("direct link between {} and {}", d.a, d.b));
            }
        }
    }
    for w in r.node_charge.windows(2) {
        if w[0].0 >= w[1].0 {
            return Err(format!("node charges out of order at node {}", w[1].0));
        }
    }
    for &(p, q) in &r.node_charge {
        if p as usize >= n {
            return Err(format!("charge at node {p} outside the grid"));
        }
        finite(q, "a node charge")?;
    }
    Ok(())
}

/// The operator's entries are never NaN or negative, and the diagonal of every row is
/// positive. Infinite entries are allowed: a finite but absurd permittivity (say 1e308)
/// overflows a weight, and the study must then report non-finite values, not results.
/// Returns whether every entry is finite.
pub fn check_operator(op: &operator::Operator) -> Result<bool, String> {
    let s = &op.stencil;
    let mut finite = true;
    let ok = |v: f64| !v.is_nan() && v >= 0.0;
    for p in 0..s.len() {
        let (d, e, no) = (s.diag[p], s.east[p], s.north[p]);
        if !(ok(d) && d > 0.0 && ok(e) && ok(no)) {
            return Err(format!("row {p}: diagonal {d}, couplings {e}, {no}"));
        }
        finite &= d.is_finite() && e.is_finite() && no.is_finite();
    }
    for l in &op.links {
        if !ok(l.weight) {
            return Err(format!("link weight {} at node {}", l.weight, l.node));
        }
        finite &= l.weight.is_finite();
    }
    for &(p, v) in &op.source {
        if v.is_nan() {
            return Err(format!("the source at node {p} is NaN"));
        }
        finite &= v.is_finite();
    }
    Ok(finite)
}

/// Words that may stand in a key path of the contract; other segments (a mistyped key, a
/// parameter's name) are blanked in signatures.
const KEY_WORDS: &[&str] = &[
    "unit",
    "mode",
    "depth",
    "grid",
    "x",
    "y",
    "cell",
    "sides",
    "left",
    "right",
    "bottom",
    "top",
    "background",
    "permittivity",
    "strength",
    "parameters",
    "conductor",
    "name",
    "potential",
    "floating",
    "dielectric",
    "charge",
    "density",
    "at",
    "amount",
    "probe",
    "rect",
    "round",
    "circle",
    "center",
    "radius",
    "ring",
    "inner",
    "outer",
    "polygon",
    "holes",
    "polyline",
];

/// Which path an input took, for the stable driver's feedback: digits and the text inside
/// quotes or backticks are blanked, and key segments outside the contract's words, so that
/// equal messages about different numbers or names coincide.
fn signature(prefix: &str, message: &str) -> String {
    let mut out = String::with_capacity(prefix.len() + message.len());
    for (k, seg) in prefix.split('.').enumerate() {
        if k > 0 {
            out.push('.');
        }
        let word = seg.rsplit(':').next().unwrap_or(seg);
        if k == 0 || KEY_WORDS.contains(&word) {
            out.push_str(seg);
        } else {
            out.push('?');
        }
    }
    out.push(':');
    let mut quote: Option<char> = None;
    for c in message.chars() {
        match quote {
            Some(q) if c == q => {
                quote = None;
                out.push(c);
            }
            Some(_) => {}
            None if c == '`' || c == '"' => {
                quote = Some(c);
                out.push(c);
            }
            None if c.is_ascii_digit() => {}
            None => out.push(c),
        }
        // The start of a message says what went wrong; the rest names where and how.
        if out.len() >= prefix.len() + 48 {
            break;
        }
    }
    out
}

/// The design target: read (with validation), rasterise on a capped lattice, check the
/// raster, assemble and check the operator, and solve a small lattice. Panics on a broken
/// invariant (a finding). Returns the outcome signature.
pub fn design_target(data: &[u8]) -> String {
    let text = String::from_utf8_lossy(data);
    let src = match read_design(&text, DESIGN_FILE, &[]) {
        Ok(s) => s,
        Err(e) => {
            let lines = text.lines().count().max(1);
            assert!(
                e.line >= 1 && e.line <= lines + 1 && e.column >= 1,
                "error position {}:{} outside a text of {lines} lines",
                e.line,
                e.column
            );
            assert!(!e.message.is_empty(), "empty error message");
            assert!(!e.message.contains('\n'), "message spans several lines");
            let _ = e.to_string();
            return signature(&format!("err:{}", e.key), &e.message);
        }
    };
    let d = &src.design;
    assert!(
        design::validate(d).is_ok(),
        "a design the reader accepted fails validation"
    );
    let mut sig = format!(
        "ok:{:?}:c{}:d{}:q{}",
        d.mode,
        d.conductors.len().min(3),
        d.dielectrics.len().min(3),
        d.charges.len().min(3)
    );
    let Some(grid) = capped_grid(d, RASTER_NODES) else {
        return sig + ":nogrid";
    };
    let r = raster::rasterize(d, &grid);
    if let Err(m) = check_raster(d, &r) {
        panic!("raster invariant: {m}");
    }
    match operator::assemble(d, &r) {
        Ok(op) => match check_operator(&op) {
            Ok(true) => {}
            Ok(false) => sig += ":overflow",
            Err(m) => panic!("operator invariant: {m}"),
        },
        Err(e) => return signature(&(sig + ":op"), &e.to_string()),
    }
    let Some(small) = capped_grid(d, SOLVE_NODES) else {
        return sig;
    };
    let mut coarse = d.clone();
    coarse.domain.cell = small.dx(0).max(small.dy(0)) * (1.0 + 1e-9);
    // The cap bounds the uniform lattice's nodes; a graded one follows the geometry.
    coarse.lattice = fieldgrid_solver::design::Lattice::Uniform;
    let params = StudyParams::default()
        .with_method(Method::Multigrid)
        .with_solver(Params::default().with_tol(1e-8).with_max_iter(400))
        .with_error_estimate(false);
    match study::run(&coarse, &params) {
        Ok(sol) => {
            if sol.solve.converged {
                let finite = |v: &f64| v.is_finite();
                assert!(
                    sol.capacitance.matrix.iter().flatten().all(finite),
                    "converged solve with capacitance {:?}",
                    sol.capacitance.matrix
                );
                assert!(
                    sol.energy.is_finite(),
                    "converged solve with energy {}",
                    sol.energy
                );
                assert!(
                    sol.potential.iter().all(finite),
                    "converged solve with a NaN potential"
                );
                for c in &sol.conductors {
                    assert!(
                        finite(&c.charge) && finite(&c.potential) && c.force.iter().all(finite),
                        "converged solve with conductor {c:?}"
                    );
                }
                sig += ":solved";
            } else {
                sig += &format!(":{}", usize::from(sol.solve.failure.is_some()));
            }
        }
        Err(e) => sig = signature(&(sig + ":study"), &e.to_string()),
    }
    sig
}

/// Parameters the expression target may name.
fn fuzz_parameter(name: &str) -> Option<f64> {
    match name {
        "a" => Some(1.5),
        "gap" => Some(0.25),
        "zero" => Some(0.0),
        "big" => Some(1e300),
        "tiny" => Some(1e-300),
        "neg" => Some(-2.0),
        _ => None,
    }
}

/// The expression target: evaluate the text; a value must be finite, an error must point
/// inside the text at character boundaries and display without panicking.
pub fn expr_target(data: &[u8]) -> String {
    let text = String::from_utf8_lossy(data);
    match expr::eval(&text, &fuzz_parameter) {
        Ok(v) => {
            assert!(v.is_finite(), "expression value {v}");
            "ok".into()
        }
        Err(e) => {
            let end = e.offset.checked_add(e.len).expect("offset + len overflows");
            assert!(
                end <= text.len() && text.is_char_boundary(e.offset) && text.is_char_boundary(end),
                "error range {}..{end} in a text of {} bytes",
                e.offset,
                text.len()
            );
            signature("err", &e.to_string())
        }
    }
}
