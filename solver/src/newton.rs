//! Several targets met by as many parameters at once: damped Newton iteration on a
//! finite-difference Jacobian, inside a box of allowed parameter values.
//!
//! Each iteration takes the residuals r(x) (quantity minus target) and one forward
//! difference per parameter for the Jacobian J, solves J dx = -r (Gaussian elimination with
//! partial pivoting: n is a handful), and halves the step until the scaled residual norm
//! sum (r_i / tol_i)^2 falls, every trial point clamped to the box (common practice: damped
//! Newton with backtracking, e.g. J. Nocedal, S. J. Wright, Numerical Optimization, 2nd ed.,
//! 2006, sec. 11.1 and 11.3).
//!
//! Invariants: f is called only at points inside the box; a difference step that would leave
//! the box is taken the other way; the point returned is the one of smallest scaled residual
//! norm met; it is "converged" only when every |r_i| <= tol_i there.

/// Settings of [`solve`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct Params {
    /// Most Newton iterations.
    pub max_iterations: usize,
    /// Most step halvings per iteration.
    pub max_halvings: usize,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            max_iterations: 12,
            max_halvings: 5,
        }
    }
}

/// The problem: residual tolerances, difference steps and the box, one entry per parameter
/// (the same count of residuals as parameters).
#[derive(Clone, Debug, PartialEq)]
pub struct Problem {
    /// The starting point.
    pub start: Vec<f64>,
    /// Lowest allowed value of each parameter.
    pub low: Vec<f64>,
    /// Highest allowed value of each parameter.
    pub high: Vec<f64>,
    /// Forward-difference step of each parameter, > 0.
    pub steps: Vec<f64>,
    /// Tolerance of each residual, > 0.
    pub tol: Vec<f64>,
}

/// The outcome.
#[derive(Clone, Debug, PartialEq)]
pub struct Info {
    /// The best point met.
    pub x: Vec<f64>,
    /// The residuals there.
    pub r: Vec<f64>,
    /// Newton iterations taken.
    pub iterations: usize,
    /// Evaluations of f.
    pub evaluations: usize,
    /// Every |r_i| <= tol_i at `x`.
    pub converged: bool,
}

/// Why the iteration stopped without a result. `Display` renders the code and the data, for
/// logs; the command line words it for users.
#[derive(Debug)]
#[non_exhaustive]
pub enum NewtonError<E> {
    /// The Jacobian is singular: a parameter moves no residual, or two move them alike.
    Singular {
        /// Where.
        x: Vec<f64>,
    },
    /// f returned a NaN or an infinity.
    NonFinite {
        /// Where.
        x: Vec<f64>,
    },
    /// f itself failed.
    Evaluation(E),
}

impl<E> NewtonError<E> {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            NewtonError::Singular { .. } => "singular",
            NewtonError::NonFinite { .. } => "not-finite",
            NewtonError::Evaluation(_) => "evaluation-failed",
        }
    }
}

impl<E: std::fmt::Debug> std::fmt::Display for NewtonError<E> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl<E: std::fmt::Debug> std::error::Error for NewtonError<E> {}

fn norm(r: &[f64], tol: &[f64]) -> f64 {
    r.iter().zip(tol).map(|(r, t)| (r / t).powi(2)).sum()
}

/// Meets r(x) = 0 within `problem.tol`, with `f` giving the residuals at a point.
///
/// # Panics
/// When the lengths of the problem's vectors differ, or `f` returns a different count.
pub fn solve<E>(
    mut f: impl FnMut(&[f64]) -> Result<Vec<f64>, E>,
    problem: &Problem,
    params: &Params,
) -> Result<Info, NewtonError<E>> {
    let n = problem.start.len();
    for v in [&problem.low, &problem.high, &problem.steps, &problem.tol] {
        assert_eq!(v.len(), n, "one entry per parameter");
    }
    let clamp = |x: &mut Vec<f64>| {
        for i in 0..n {
            x[i] = x[i].clamp(problem.low[i], problem.high[i]);
        }
    };
    let mut evaluations = 0;
    let mut eval = |x: &[f64], evaluations: &mut usize| -> Result<Vec<f64>, NewtonError<E>> {
        let r = f(x).map_err(NewtonError::Evaluation)?;
        *evaluations += 1;
        assert_eq!(r.len(), n, "one residual per parameter");
        if r.iter().any(|v| !v.is_finite()) {
            return Err(NewtonError::NonFinite { x: x.to_vec() });
        }
        Ok(r)
    };
    let mut x = problem.start.clone();
    clamp(&mut x);
    let mut r = eval(&x, &mut evaluations)?;
    let done = |r: &[f64]| r.iter().zip(&problem.tol).all(|(r, t)| r.abs() <= *t);
    let mut iterations = 0;
    while !done(&r) && iterations < params.max_iterations {
        iterations += 1;
        // Jacobian column j from a forward difference (backward at the box's upper end).
        let mut jac = vec![vec![0.0; n]; n];
        for j in 0..n {
            let mut xp = x.clone();
            let h = if x[j] + problem.steps[j] <= problem.high[j] {
                problem.steps[j]
            } else {
                -problem.steps[j]
            };
            xp[j] += h;
            let rp = eval(&xp, &mut evaluations)?;
            for i in 0..n {
                jac[i][j] = (rp[i] - r[i]) / h;
            }
        }
        let rhs: Vec<f64> = r.iter().map(|v| -v).collect();
        let dx = gauss(jac, rhs).ok_or_else(|| NewtonError::Singular { x: x.clone() })?;
        let base = norm(&r, &problem.tol);
        let mut t = 1.0;
        let mut accepted = false;
        for _ in 0..=params.max_halvings {
            let mut trial: Vec<f64> = x.iter().zip(&dx).map(|(x, d)| x + t * d).collect();
            clamp(&mut trial);
            if trial == x {
                break;
            }
            let rt = eval(&trial, &mut evaluations)?;
            if norm(&rt, &problem.tol) < base {
                x = trial;
                r = rt;
                accepted = true;
                break;
            }
            t *= 0.5;
        }
        if !accepted {
            break;
        }
    }
    let converged = done(&r);
    Ok(Info {
        x,
        r,
        iterations,
        evaluations,
        converged,
    })
}

/// Solves `a x = b` by Gaussian elimination with partial pivoting; `None` when singular.
fn gauss(mut a: Vec<Vec<f64>>, mut b: Vec<f64>) -> Option<Vec<f64>> {
    let n = b.len();
    let scale = a
        .iter()
        .flatten()
        .fold(0.0f64, |m, v| m.max(v.abs()))
        .max(f64::MIN_POSITIVE);
    for k in 0..n {
        let p = (k..n).max_by(|&i, &j| a[i][k].abs().total_cmp(&a[j][k].abs()))?;
        if a[p][k].abs() <= 1e-12 * scale {
            return None;
        }
        a.swap(k, p);
        b.swap(k, p);
        for i in k + 1..n {
            let m = a[i][k] / a[k][k];
            for j in k..n {
                a[i][j] -= m * a[k][j];
            }
            b[i] -= m * b[k];
        }
    }
    let mut x = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|j| a[k][j] * x[j]).sum();
        x[k] = (b[k] - s) / a[k][k];
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn problem(start: Vec<f64>, tol: f64) -> Problem {
        let n = start.len();
        Problem {
            start,
            low: vec![0.1; n],
            high: vec![10.0; n],
            steps: vec![1e-6; n],
            tol: vec![tol; n],
        }
    }

    #[test]
    fn two_coupled_targets_are_met() {
        // x y = 6, x / y = 1.5: x = 3, y = 2.
        let f = |x: &[f64]| Ok::<_, ()>(vec![x[0] * x[1] - 6.0, x[0] / x[1] - 1.5]);
        let info = solve(f, &problem(vec![1.0, 1.0], 1e-9), &Params::default()).unwrap();
        assert!(info.converged, "{info:?}");
        assert!((info.x[0] - 3.0).abs() < 1e-6 && (info.x[1] - 2.0).abs() < 1e-6);
    }

    #[test]
    fn the_box_is_never_left() {
        // The root x = 20 lies outside [0.1, 10]: the best point is the upper end.
        let mut seen = Vec::new();
        let f = |x: &[f64]| {
            seen.push(x[0]);
            Ok::<_, ()>(vec![x[0] - 20.0])
        };
        let info = solve(f, &problem(vec![5.0], 1e-9), &Params::default()).unwrap();
        assert!(!info.converged);
        assert_eq!(info.x, vec![10.0]);
        assert!(seen.iter().all(|&x| (0.1..=10.0).contains(&x)), "{seen:?}");
    }

    #[test]
    fn a_parameter_that_moves_nothing_is_reported_singular() {
        let f = |x: &[f64]| Ok::<_, ()>(vec![x[0] - 2.0, x[0] - 3.0]);
        let r = solve(f, &problem(vec![1.0, 1.0], 1e-9), &Params::default());
        assert!(matches!(r, Err(NewtonError::Singular { .. })), "{r:?}");
    }

    #[test]
    fn damping_keeps_the_residual_falling_on_a_steep_function() {
        // atan has Newton steps that overshoot from far away; damping brings it home.
        let f = |x: &[f64]| Ok::<_, ()>(vec![(x[0] - 4.0).atan()]);
        let info = solve(f, &problem(vec![0.5], 1e-10), &Params::default()).unwrap();
        assert!(info.converged && (info.x[0] - 4.0).abs() < 1e-9, "{info:?}");
    }
}
