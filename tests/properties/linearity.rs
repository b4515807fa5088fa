//! Linearity and reciprocity: results scale with the sources and superpose, and the Maxwell
//! matrix is symmetric with negative coefficients of induction.

use fieldgrid_solver::design::{Charge, Design, Drive, Mode, Side};
use proptest::prelude::*;

use crate::scenes::scene;
use crate::{max_abs, runner, same_matrix, solve};

/// Every source scaled by `s`: conductor and side potentials, charge density.
fn scaled(d: &Design, s: f64) -> Design {
    let mut out = d.clone();
    for c in &mut out.conductors {
        if let Drive::Fixed(v) = &mut c.drive {
            *v *= s;
        }
    }
    for side in [
        &mut out.sides.left,
        &mut out.sides.right,
        &mut out.sides.bottom,
        &mut out.sides.top,
    ] {
        if let Side::Fixed(v) = side {
            *v *= s;
        }
    }
    for q in &mut out.charges {
        match q {
            Charge::Region { density, .. } => *density *= s,
            Charge::Concentrated { amount, .. } => *amount *= s,
        }
    }
    out
}

#[test]
fn results_scale_linearly_with_the_potentials_and_superpose() {
    let strategy = (scene(1, 4), any::<bool>(), -3.0f64..3.0, any::<bool>());
    runner(12, 6)
        .run(&strategy, |(sc, axi, log_s, negative)| {
            let mode = if axi {
                Mode::Axisymmetric
            } else {
                Mode::Planar
            };
            let d = sc.design(mode);
            let s = 10f64.powf(log_s) * if negative { -1.0 } else { 1.0 };
            let a = solve(&d)?;
            let b = solve(&scaled(&d, s))?;
            let qs = max_abs(a.conductors.iter().map(|c| &c.charge));
            for (ca, cb) in a.conductors.iter().zip(&b.conductors) {
                prop_assert!(
                    (cb.charge - s * ca.charge).abs() <= 1e-9 * qs * s.abs(),
                    "charge {:e} vs {s} x {:e}",
                    cb.charge,
                    ca.charge
                );
                prop_assert!((cb.potential - s * ca.potential).abs() <= 1e-9 * s.abs() * 10.0);
            }
            let ps = max_abs(&a.potential);
            for (pa, pb) in a.potential.iter().zip(&b.potential) {
                prop_assert!((pb - s * pa).abs() <= 1e-9 * ps * s.abs());
            }
            prop_assert!(
                (b.energy - s * s * a.energy).abs() <= 1e-9 * a.energy.abs() * s * s,
                "energy {:e} vs {:e}",
                b.energy,
                s * s * a.energy
            );
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, 1e-9, "C")?;
            // Superposition: the sources of d plus those of d scaled by s (same geometry).
            let sum = scaled(&d, 1.0 + s);
            let c = solve(&sum)?;
            for ((ca, cb), cc) in a.conductors.iter().zip(&b.conductors).zip(&c.conductors) {
                prop_assert!(
                    (cc.charge - ca.charge - cb.charge).abs() <= 1e-9 * qs * (1.0 + s.abs()),
                    "superposed charge {:e} vs {:e} + {:e}",
                    cc.charge,
                    ca.charge,
                    cb.charge
                );
            }
            Ok(())
        })
        .unwrap();
}

#[test]
fn maxwell_matrix_is_symmetric_with_reciprocal_negative_induction_coefficients() {
    let strategy = (scene(2, 4), any::<bool>());
    runner(24, 7)
        .run(&strategy, |(sc, axi)| {
            let mode = if axi {
                Mode::Axisymmetric
            } else {
                Mode::Planar
            };
            let s = solve(&sc.design(mode))?;
            let c = &s.capacitance.matrix;
            let diag = c.iter().enumerate().fold(0.0f64, |m, (i, r)| m.max(r[i]));
            for (i, ci) in c.iter().enumerate() {
                prop_assert!(ci[i] > 0.0, "C[{i}][{i}] = {:e}", ci[i]);
                let row: f64 = ci.iter().sum();
                prop_assert!(row >= -1e-8 * diag, "row {i} sums to {row:e}");
                for (j, cij) in ci.iter().enumerate() {
                    let cji = c[j][i];
                    prop_assert!(
                        (cij - cji).abs() <= 1e-8 * diag,
                        "C[{i}][{j}] = {cij:e}, C[{j}][{i}] = {cji:e}"
                    );
                    if i != j {
                        prop_assert!(*cij <= 1e-9 * diag, "C[{i}][{j}] = {cij:e} > 0");
                    }
                }
            }
            Ok(())
        })
        .unwrap();
}
