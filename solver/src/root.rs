//! A root of one scalar function in a bracket: Brent's method (R. P. Brent, Algorithms for
//! Minimization without Derivatives, Prentice-Hall, 1973, ch. 4, the procedure `zero`),
//! for design targets such as "the gap that gives 2 pF".
//!
//! Each step takes inverse quadratic interpolation through the last three points, or the
//! secant through two, when that step stays well inside the bracket and shrinks fast
//! enough; otherwise it bisects. So the bracket always holds a sign change and never takes
//! more than about twice the bisection's evaluations, while a smooth function converges
//! superlinearly.
//!
//! Invariants: the function is called only at points inside the initial bracket; `b` (the
//! returned point) has the smallest |f| of the current bracket ends `b` and `c`, which hold
//! values of opposite sign (or f(b) = 0); the caller's ends are evaluated by the caller (so
//! it can refuse a target outside the bracket with the values at the ends in its message).

/// Settings of [`brent`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct Params {
    /// Stop when the bracket is narrower than this (units of x), >= 0.
    pub x_tol: f64,
    /// Stop when |f| is at most this (units of f), >= 0.
    pub f_tol: f64,
    /// Most evaluations of f besides the two ends.
    pub max_evaluations: usize,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            x_tol: 0.0,
            f_tol: 0.0,
            max_evaluations: 60,
        }
    }
}

impl Params {
    /// These settings with the tolerance on x.
    pub fn with_x_tol(mut self, x_tol: f64) -> Self {
        self.x_tol = x_tol;
        self
    }

    /// These settings with the tolerance on f.
    pub fn with_f_tol(mut self, f_tol: f64) -> Self {
        self.f_tol = f_tol;
        self
    }

    /// These settings with the evaluation limit.
    pub fn with_max_evaluations(mut self, n: usize) -> Self {
        self.max_evaluations = n;
        self
    }
}

/// A root found.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Info {
    /// The point of smallest |f| found.
    pub x: f64,
    /// f there.
    pub f: f64,
    /// The final bracket, low end first: f changes sign between its ends (or f(x) = 0).
    pub bracket: [f64; 2],
    /// Evaluations of f made here (the two ends not counted).
    pub evaluations: usize,
}

/// Why no root was found. `Display` renders the code and the data, for logs; the command
/// line words it for users.
#[derive(Debug)]
#[non_exhaustive]
pub enum RootError<E> {
    /// f has the same sign at both ends: no root is bracketed.
    NotBracketed {
        /// One end.
        a: f64,
        /// f there.
        fa: f64,
        /// The other end.
        b: f64,
        /// f there.
        fb: f64,
    },
    /// f returned NaN or an infinity.
    NonFinite {
        /// Where.
        x: f64,
    },
    /// The evaluation limit was reached first; the best point so far is given.
    MaxEvaluations(Info),
    /// f itself failed.
    Evaluation(E),
}

impl<E> RootError<E> {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            RootError::NotBracketed { .. } => "not-bracketed",
            RootError::NonFinite { .. } => "not-finite",
            RootError::MaxEvaluations(_) => "max-evaluations",
            RootError::Evaluation(_) => "evaluation-failed",
        }
    }
}

impl<E: std::fmt::Debug> std::fmt::Display for RootError<E> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl<E: std::fmt::Debug> std::error::Error for RootError<E> {}

/// A root of `f` between `a` and `b`, given with their values `(a, f(a))`, `(b, f(b))`.
pub fn brent<E>(
    mut f: impl FnMut(f64) -> Result<f64, E>,
    a: (f64, f64),
    b: (f64, f64),
    params: &Params,
) -> Result<Info, RootError<E>> {
    let ((mut a, mut fa), (mut b, mut fb)) = (a, b);
    for (x, fx) in [(a, fa), (b, fb)] {
        if !(x.is_finite() && fx.is_finite()) {
            return Err(RootError::NonFinite { x });
        }
    }
    let done = |x: f64, fx: f64, other: f64, evaluations| Info {
        x,
        f: fx,
        bracket: [x.min(other), x.max(other)],
        evaluations,
    };
    if fa == 0.0 {
        return Ok(done(a, fa, a, 0));
    }
    if fb == 0.0 {
        return Ok(done(b, fb, b, 0));
    }
    if (fa > 0.0) == (fb > 0.0) {
        return Err(RootError::NotBracketed { a, fa, b, fb });
    }
    // c is the contrapoint: f(b) and f(c) have opposite signs; d the last step, e the one
    // before it.
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    let mut evaluations = 0;
    loop {
        if (fb > 0.0) == (fc > 0.0) {
            (c, fc) = (a, fa);
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            (a, fa) = (b, fb);
            (b, fb) = (c, fc);
            (c, fc) = (a, fa);
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * params.x_tol;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 || fb.abs() <= params.f_tol {
            return Ok(done(b, fb, c, evaluations));
        }
        if evaluations >= params.max_evaluations {
            return Err(RootError::MaxEvaluations(done(b, fb, c, evaluations)));
        }
        if e.abs() < tol || fa.abs() <= fb.abs() {
            d = m;
            e = m;
        } else {
            let s = fb / fa;
            let (mut p, mut q) = if a == c {
                // Secant through a and b.
                (2.0 * m * s, 1.0 - s)
            } else {
                // Inverse quadratic interpolation through a, b and c.
                let q = fa / fc;
                let r = fb / fc;
                (
                    s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0)),
                    (q - 1.0) * (r - 1.0) * (s - 1.0),
                )
            };
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            // Accept the interpolation only well inside the bracket and when it shrinks the
            // step at least as fast as halving every other step would.
            if 2.0 * p < 3.0 * m * q - (tol * q).abs() && p < (0.5 * e * q).abs() {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        }
        (a, fa) = (b, fb);
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b).map_err(RootError::Evaluation)?;
        evaluations += 1;
        if !fb.is_finite() {
            return Err(RootError::NonFinite { x: b });
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn solve(
        f: impl Fn(f64) -> f64,
        a: f64,
        b: f64,
        params: &Params,
    ) -> Result<Info, RootError<()>> {
        brent(|x| Ok(f(x)), (a, f(a)), (b, f(b)), params)
    }

    #[test]
    fn finds_the_cube_root_of_two_to_the_x_tolerance() {
        let p = Params::default().with_x_tol(1e-12);
        let r = solve(|x| x * x * x - 2.0, 0.0, 2.0, &p).unwrap();
        assert!((r.x - 2f64.cbrt()).abs() < 1e-12, "{r:?}");
        assert!(r.bracket[0] <= 2f64.cbrt() && 2f64.cbrt() <= r.bracket[1]);
        // Superlinear: far fewer steps than the 41 bisections for 2 / 2^41 < 1e-12.
        assert!(r.evaluations < 15, "{r:?}");
    }

    #[test]
    fn stops_at_the_value_tolerance() {
        let p = Params::default().with_f_tol(1e-3);
        let r = solve(|x| x.ln(), 0.5, 3.0, &p).unwrap();
        assert!(r.f.abs() <= 1e-3 && (r.x - 1.0).abs() < 2e-3, "{r:?}");
    }

    #[test]
    fn a_decreasing_function_and_swapped_ends_work_alike() {
        let p = Params::default().with_x_tol(1e-10);
        let a = solve(|x| 1.0 / x - 0.25, 1.0, 10.0, &p).unwrap();
        let b = solve(|x| 1.0 / x - 0.25, 10.0, 1.0, &p).unwrap();
        assert!((a.x - 4.0).abs() < 1e-9 && (b.x - 4.0).abs() < 1e-9);
    }

    #[test]
    fn a_step_function_is_bisected_to_its_jump() {
        // No interpolation helps at a jump: the bracket still closes on it.
        let p = Params::default().with_x_tol(1e-9);
        let r = solve(|x| if x < 0.3 { -1.0 } else { 2.0 }, 0.0, 1.0, &p).unwrap();
        assert!(
            r.bracket[0] < 0.3 + 1e-9 && r.bracket[1] >= 0.3 - 1e-9,
            "{r:?}"
        );
        assert!(r.bracket[1] - r.bracket[0] <= 2e-9, "{r:?}");
    }

    #[test]
    fn same_signs_at_the_ends_are_refused_with_the_values() {
        match solve(|x| x * x + 1.0, -1.0, 2.0, &Params::default()) {
            Err(RootError::NotBracketed { fa, fb, .. }) => assert_eq!((fa, fb), (2.0, 5.0)),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn a_root_at_an_end_costs_no_evaluation() {
        let r = solve(|x| x - 1.0, 1.0, 3.0, &Params::default()).unwrap();
        assert_eq!((r.x, r.evaluations), (1.0, 0));
    }

    #[test]
    fn the_evaluation_limit_returns_the_best_point() {
        let p = Params::default().with_x_tol(1e-15).with_max_evaluations(3);
        match solve(|x| x.powi(3) - 0.1, 0.0, 1.0, &p) {
            Err(RootError::MaxEvaluations(i)) => assert_eq!(i.evaluations, 3),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn a_failing_or_non_finite_function_stops_the_search() {
        let r = brent(
            |x| if x > 0.4 { Err("bad") } else { Ok(x - 0.5) },
            (0.0, -0.5),
            (1.0, 0.5),
            &Params::default(),
        );
        assert!(matches!(r, Err(RootError::Evaluation("bad"))));
        let r = brent(
            |_| Ok::<_, ()>(f64::NAN),
            (0.0, -0.5),
            (1.0, 0.5),
            &Params::default(),
        );
        assert!(matches!(r, Err(RootError::NonFinite { .. })));
    }
}
