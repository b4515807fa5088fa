//! Sampling along outline pieces: points, tangents and curvature; stretches on uniform and
//! graded lattices.

use super::*;

#[test]
fn arc_points_tangents_and_curvature_follow_the_sense_of_turning() {
    let quarter = |ccw: bool| Piece::Arc {
        a: if ccw { [2.0, 0.0] } else { [0.0, 2.0] },
        b: if ccw { [0.0, 2.0] } else { [2.0, 0.0] },
        center: [0.0, 0.0],
        radius: 2.0,
        ccw,
    };
    let (p, t, k) = on_piece(&quarter(true), 0.5);
    let s = std::f64::consts::FRAC_1_SQRT_2;
    assert!((p[0] - 2.0 * s).abs() < 1e-12 && (p[1] - 2.0 * s).abs() < 1e-12);
    assert!((t[0] + s).abs() < 1e-12 && (t[1] - s).abs() < 1e-12);
    assert_eq!(k, 0.5);
    // Clockwise: the same point, the opposite tangent, the free side on the outside.
    let (q, u, k) = on_piece(&quarter(false), 0.5);
    assert!((q[0] - p[0]).abs() < 1e-12 && (u[0] + t[0]).abs() < 1e-12);
    assert_eq!(k, -0.5);
    // The outward normal (right of travel) of a counter-clockwise circle points out.
    let n = [t[1], -t[0]];
    assert!(n[0] > 0.0 && n[1] > 0.0);
}

/// Node lines graded from 1/128 of `coarse` at `x = 0` up to `coarse` by a factor of 1.25
/// per cell, then uniform to `len`; three lines in y, as fine as the finest in x, so that
/// the spacing along `y = 0` is the cell width.
fn graded_towards_origin(coarse: f64, len: f64) -> Grid {
    let mut xs = vec![0.0];
    let mut h = coarse / 128.0;
    while *xs.last().unwrap() < len - coarse {
        let x = xs.last().unwrap() + h;
        xs.push(x);
        h = (1.25 * h).min(coarse);
    }
    if len - xs.last().unwrap() < 0.5 * coarse {
        xs.pop();
    }
    xs.push(len);
    Grid::from_lines(xs, vec![-coarse / 128.0, 0.0, coarse / 128.0]).unwrap()
}

#[test]
fn samples_on_a_graded_grid_grow_with_the_cells_a_piece_crosses_not_with_its_length_over_the_finest_cell(
) {
    let (coarse, len, per_cell) = (2e-4, 2e-2, 2.0);
    let g = graded_towards_origin(coarse, len);
    assert!(!g.is_uniform());
    assert!((g.spacing_at([0.5 * len, 0.0]) - coarse).abs() < 1e-12);
    let piece = Piece::Line {
        a: [0.0, 0.0],
        b: [len, 0.0],
    };
    let st = stretches(&piece, &g, per_cell);
    // The stretches tile the piece in order, the midpoint of each at its parameter.
    let mut t = 0.0;
    for &(u, mid, step) in &st {
        assert!(step > 0.0);
        assert!((mid - (t + 0.5 * step)).abs() <= 1e-12 * len);
        assert!((u * len - mid).abs() <= 1e-12 * len);
        // Never longer than the spacing at either end over the samples per cell (to the
        // rounding of the last stretch, the rest of the piece).
        for end in [t, t + step] {
            let h = g.spacing_at([end.min(len), 0.0]);
            assert!(step <= h / per_cell * (1.0 + 1e-9), "{step} at {end}");
        }
        t += step;
    }
    assert!((t - len).abs() <= 1e-12 * len);
    // About per_cell samples per cell crossed (the halved end adds at most one); the
    // finest-cell rule would take len / (min_cell / per_cell) = 25 600.
    let cells = g.nx() - 1;
    assert!(
        st.len() <= (per_cell as usize) * cells + 2,
        "{} for {cells}",
        st.len()
    );
    assert!(st.len() >= (per_cell as usize) * cells / 2);
    assert!(((len / (g.min_cell() / per_cell)) as usize) > 50 * st.len());
}

#[test]
fn samples_on_a_uniform_grid_are_equal_stretches_no_longer_than_half_a_cell() {
    let g = Grid::fit([0.0, 1.0], [0.0, 1.0], 0.1).unwrap();
    let piece = Piece::Line {
        a: [0.05, 0.5],
        b: [0.9, 0.5],
    };
    let st = stretches(&piece, &g, 2.0);
    // 0.85 / 0.05 = 17 stretches, midpoints at (s + 1/2) / 17.
    assert_eq!(st.len(), 17);
    for (s, &(u, mid, step)) in st.iter().enumerate() {
        assert_eq!(u, (s as f64 + 0.5) / 17.0);
        assert_eq!(mid, (s as f64 + 0.5) * piece.length() / 17.0);
        assert_eq!(step, piece.length() / 17.0);
    }
}
