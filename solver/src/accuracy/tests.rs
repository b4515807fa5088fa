use super::*;
use crate::design::{Conductor, Drive, Shape, Side};
use crate::forces::{ForceMethod, NoBand};

/// A 2 mm x 1 mm bar at 1 V in a 10 mm grounded box, beside a grounded 1 mm square.
fn bars() -> Design {
    let mut d = Design::default();
    d.domain.x = [0.0, 10e-3];
    d.domain.y = [0.0, 10e-3];
    d.domain.cell = 1e-3;
    let rect = |x: [f64; 2], y: [f64; 2]| Shape::Rect { x, y, round: 0.0 };
    d.conductors.push(Conductor {
        name: "a".into(),
        drive: Drive::Fixed(1.0),
        shape: rect([3e-3, 5e-3], [4e-3, 5e-3]),
        joined: Vec::new(),
    });
    d.conductors.push(Conductor {
        name: "b".into(),
        drive: Drive::Fixed(0.0),
        shape: rect([6e-3, 7e-3], [4e-3, 5e-3]),
        joined: Vec::new(),
    });
    d
}

fn capacitance_only(target: f64) -> Params {
    let mut p = Params::default().with_target(target);
    p.quantities.forces = false;
    p.quantities.hotspots = false;
    p
}

#[test]
fn a_reachable_target_is_met_and_every_entry_is_within_it() {
    let (sol, info) = solve(&bars(), &StudyParams::default(), &capacitance_only(2e-3)).unwrap();
    assert!(info.met(), "{info:?}");
    assert!(info.shortest().is_none());
    let last = info.rounds.last().unwrap();
    assert_eq!((last.nx, last.ny), (sol.grid.nx, sol.grid.ny));
    assert!(last.worst <= 1.0);
    let entries = |i: &Info| -> Vec<Estimate> {
        i.estimates
            .iter()
            .filter(|e| matches!(e.quantity, Quantity::Capacitance { .. }))
            .cloned()
            .collect()
    };
    assert_eq!(entries(&info).len(), 4);
    for e in info.estimates.iter().filter(|e| e.held) {
        assert!(e.relative() <= 2e-3, "{e:?}");
        assert!(e.discretisation.is_finite() && e.truncation == 0.0);
    }
    // Forces and hot spots are estimated and reported, though not held here.
    assert!(info
        .estimates
        .iter()
        .any(|e| matches!(e.quantity, Quantity::Force { .. }) && !e.held));
    // The tolerance follows the target.
    assert!(last.tol <= 2e-3 * TOL_SHARE * (1.0 + 1e-12));
}

#[test]
fn a_tighter_target_takes_a_finer_lattice() {
    let (_, loose) = solve(&bars(), &StudyParams::default(), &capacitance_only(2e-2)).unwrap();
    let (_, tight) = solve(&bars(), &StudyParams::default(), &capacitance_only(2e-4)).unwrap();
    assert!(loose.met() && tight.met());
    let nodes = |i: &Info| {
        let r = i.rounds.last().unwrap();
        r.nx * r.ny
    };
    assert!(nodes(&tight) > nodes(&loose));
    assert!(tight.rounds.len() >= 2);
    assert!(tight.rounds.windows(2).all(|w| {
        w[1].bisections >= w[0].bisections && w[1].refinement >= w[0].refinement * MIN_STEP
    }));
}

#[test]
fn the_memory_limit_stops_the_loop_with_the_short_quantity() {
    let d = bars();
    let family = Family {
        design: &d,
        grading: grading::Params::default(),
        enlargements: 0,
    };
    let first = plan::on_grid(
        family.member(BISECTIONS).unwrap().1,
        crate::solvers::Method::Multigrid,
        true,
    );
    let p = capacitance_only(1e-7).with_max_memory_mib(first.memory_mib() + 0.01);
    let (sol, info) = solve(&bars(), &StudyParams::default(), &p).unwrap();
    assert!(!info.met());
    // The probe, then the rounds the limit allows: none beyond it.
    assert!(info.rounds.len() >= 2, "{:?}", info.rounds);
    assert!(info.rounds.iter().all(|r| r.memory_mib <= p.max_memory_mib));
    match info.stop {
        Stop::MemoryLimit {
            needed_mib,
            limit_mib,
        } => assert!(needed_mib > limit_mib),
        ref s => panic!("{s:?}"),
    }
    let short = info.shortest().unwrap();
    assert!(short.relative() > 1e-7);
    assert!(matches!(short.quantity, Quantity::Capacitance { .. }));
    assert!(sol.solve.converged);
    let w = info.warning().unwrap();
    assert_eq!(w.code(), "accuracy-not-met");
    // The warning carries the short quantity itself, typed.
    match w {
        Warning::AccuracyNotMet {
            quantity,
            relative,
            limit: AccuracyLimit::Memory { .. },
            ..
        } => {
            assert_eq!(quantity, short.quantity);
            assert_eq!(relative, short.relative());
        }
        w => panic!("{w:?}"),
    }
}

#[test]
fn a_force_on_a_conductor_touching_a_dielectric_is_not_held_and_warned_with_the_reason() {
    // Bar a lies on a dielectric slab: its force comes from the path at its surface, which
    // meets the junction of metal, slab and air; the loop lists it and warns, never holds it.
    let mut d = bars();
    d.dielectrics.push(crate::design::Dielectric {
        name: "slab".into(),
        permittivity: 4.0,
        strength: None,
        shape: Shape::Rect {
            x: [2e-3, 6e-3],
            y: [3e-3, 4e-3],
            round: 0.0,
        },
    });
    let mut p = Params::default().with_target(2e-2);
    p.quantities.hotspots = false;
    let (sol, info) = solve(&d, &StudyParams::default(), &p).unwrap();
    assert_eq!(
        sol.conductors[0].force_method,
        ForceMethod::Path(NoBand::Interface)
    );
    let force = |name: &str| {
        info.estimates
            .iter()
            .find(|e| {
                e.quantity
                    == Quantity::Force {
                        conductor: name.into(),
                    }
            })
            .unwrap()
    };
    assert!(!force("a").held);
    assert_eq!(force("a").not_held, Some(NotHeld::Force(NoBand::Interface)));
    let warned: Vec<Warning> = info
        .warnings()
        .into_iter()
        .filter(|w| w.code() == "force-not-held")
        .collect();
    assert!(
        warned.iter().any(|w| matches!(w, Warning::ForceNotHeld {
            conductor,
            reason: NoBand::Interface,
            ..
        } if conductor == "a")),
        "{warned:?}"
    );
    // One warning for each force listed but not held, none for the held ones.
    let unheld = info
        .estimates
        .iter()
        .filter(|e| e.not_held.is_some())
        .count();
    assert_eq!(warned.len(), unheld);
    assert!(info
        .estimates
        .iter()
        .all(|e| !(e.held && e.not_held.is_some())));
}

#[test]
fn the_family_starts_at_the_designs_own_graded_lattice() {
    let mut d = bars();
    d.lattice = Lattice::Graded;
    let family = Family {
        design: &d,
        grading: grading::Params::default(),
        enlargements: 0,
    };
    let own = plan::plan(&d, crate::solvers::Method::Multigrid, true).unwrap();
    assert_eq!(&family.member(BISECTIONS).unwrap().1, own.grid());
    // Finer members grade further at the corners than bisection alone.
    let (_, next) = family.member(BISECTIONS + 1).unwrap();
    assert!(next.min_cell() < 0.5 * own.grid().min_cell());
}

#[test]
fn a_target_outside_zero_to_one_is_refused() {
    for t in [0.0, -1e-3, 1.0, f64::NAN] {
        let e = solve(
            &bars(),
            &StudyParams::default(),
            &Params::default().with_target(t),
        )
        .expect_err("refused");
        assert!(matches!(e, AccuracyError::Target(v) if v.to_bits() == t.to_bits()));
        // Data and a code, no sentence: the command line words it.
        assert_eq!(e.code(), "accuracy-target");
        assert_eq!(e.to_string(), format!("accuracy-target: Target({t:?})"));
    }
}

#[test]
fn open_sides_carry_a_truncation_estimate() {
    let mut d = bars();
    d.sides.right = Side::Open;
    d.sides.top = Side::Open;
    let (_, info) = solve(&d, &StudyParams::default(), &capacitance_only(1e-2)).unwrap();
    let far = info.far_field.as_ref().unwrap();
    assert!(far.x[1] >= d.domain.x[1] && far.y[1] >= d.domain.y[1]);
    assert!(info
        .estimates
        .iter()
        .filter(|e| matches!(e.quantity, Quantity::Capacitance { .. }))
        .all(|e| e.truncation.is_finite() && e.truncation > 0.0));
    assert!(info.met(), "{info:?}");
}

#[test]
fn singular_hot_spots_are_reported_and_not_refined_for() {
    let mut p = capacitance_only(1e-2);
    p.quantities.hotspots = true;
    let (sol, info) = solve(&bars(), &StudyParams::default(), &p).unwrap();
    assert!(info.met(), "{info:?}");
    let singular = info.estimates.iter().filter(|e| e.singular).count();
    assert_eq!(singular, sol.hotspots.iter().filter(|h| h.singular).count());
    assert!(singular > 0);
    assert!(info.estimates.iter().all(|e| !(e.singular && e.held)));
}

#[test]
fn the_solver_tolerance_follows_the_target_within_bounds() {
    assert!((solver_tolerance(None, 1e-3) - 1e-7).abs() < 1e-22);
    assert_eq!(solver_tolerance(Some(1e-8), 1e-3), 1e-8);
    assert!((solver_tolerance(Some(1e-6), 1e-3) - 1e-7).abs() < 1e-22);
    assert_eq!(solver_tolerance(Some(1e-8), 1e-12), MIN_TOL);
    assert_eq!(solver_tolerance(None, 1e-12), MIN_TOL);
    assert_eq!(solver_tolerance(Some(1e-12), 1e-3), 1e-12);
}

#[test]
fn a_refinement_splits_into_whole_bisections_and_a_density_below_two() {
    assert_eq!(split_refinement(1.0), (BISECTIONS, 1.0));
    assert_eq!(split_refinement(PROBE), (BISECTIONS, PROBE));
    assert_eq!(split_refinement(0.9), (BISECTIONS, 0.9));
    assert_eq!(split_refinement(2.0), (BISECTIONS + 1, 1.0));
    let (k, d) = split_refinement(2.74);
    assert_eq!(k, BISECTIONS + 1);
    assert!((d - 1.37).abs() < 1e-12);
    for r in [1.1, 1.999_999_999_999, 3.5, 7.99, 8.0, 100.0] {
        let (k, d) = split_refinement(r);
        assert!((1.0..2.0).contains(&d), "{r}: {d}");
        assert!((((k - BISECTIONS) as f64).exp2() * d / r - 1.0).abs() < 1e-12);
    }
}

#[test]
fn a_denser_member_lies_between_the_bisections_around_it() {
    let mut d = bars();
    d.lattice = Lattice::Graded;
    let member = |density: f64, k: usize| {
        let family = Family {
            design: &d,
            grading: grading::Params {
                density,
                ..grading::Params::default()
            },
            enlargements: 0,
        };
        family.member(k).unwrap().1
    };
    let (own, denser, next) = (
        member(1.0, BISECTIONS),
        member(1.5, BISECTIONS),
        member(1.0, BISECTIONS + 1),
    );
    assert!(
        own.nx < denser.nx && denser.nx < next.nx,
        "{own:?} {denser:?}"
    );
    assert!(own.ny < denser.ny && denser.ny < next.ny);
    // Every other line of the denser member is its coarser member: the estimate's family.
    assert_eq!(denser.coarsened(), member(1.5, BISECTIONS - 1));
}

#[test]
fn a_failed_study_s_code_is_its_own_not_the_wrapper_s() {
    use crate::line::LineError;
    assert_eq!(AccuracyError::Target(2.0).code(), "accuracy-target");
    assert_eq!(
        AccuracyError::from(GridError::Domain).code(),
        "empty-domain"
    );
    let line = AccuracyError::Line(LineStudyError::Line(LineError::Shape));
    assert_eq!(line.code(), "matrix-shape");
}

#[test]
fn a_closed_design_starts_with_the_probe_which_is_never_the_result() {
    // A loose target that the probe's own lattice already meets: the result is still a round
    // predicted from it, accepted on its own estimate.
    let (sol, info) = solve(&bars(), &StudyParams::default(), &capacitance_only(5e-2)).unwrap();
    assert!(info.met(), "{info:?}");
    assert!(info.rounds.len() >= 2, "{:?}", info.rounds);
    assert_eq!(info.rounds[0].refinement, PROBE);
    let last = info.rounds.last().unwrap();
    assert!(last.refinement >= PROBE * MIN_STEP);
    assert_eq!((last.nx, last.ny), (sol.grid.nx, sol.grid.ny));
}
