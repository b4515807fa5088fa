//! Transmission-line parameters of a planar cross-section from its capacitance matrices.
//!
//! Quasi-TEM theory: with `C` the per-unit-length Maxwell capacitance matrix of the signal
//! conductors (everything else grounded) and `C0` the same with every permittivity set to 1,
//! the inductance matrix is `L = mu0 eps0 C0^-1` (the magnetic field does not see the
//! dielectrics), the characteristic-impedance matrix `Z` is the symmetric positive-definite
//! solution of `Z C Z = L` (so that `V = Z I` for a wave travelling one way), and the modal
//! effective permittivities are the eigenvalues of `C0^-1 C` (C. R. Paul, Analysis of
//! Multiconductor Transmission Lines, 2nd ed., Wiley, 2008, ch. 5 and 7; cited from memory).
//!
//! One signal: `Z0 = sqrt(L/C) = 1 / (c0 sqrt(C C0))` and `eps_eff = C / C0`.
//! Two signals: `z_diff = Z11 + Z22 - 2 Z12` is the impedance a pure differential current
//! (I, -I) sees between the two lines, `z_common = (Z11 + Z22 + 2 Z12) / 4` the impedance of
//! the pair driven together with (I, I); `z_odd = z_diff / 2` and `z_even = 2 z_common`. For
//! a symmetric pair these are exactly the odd- and even-mode impedances (`Z11 - Z12` and
//! `Z11 + Z12`); for an asymmetric pair they are the impedances of those current patterns,
//! which are then not modes ([`Pair::symmetric`] says which case holds).
//!
//! Everything here is pure arithmetic on small dense symmetric matrices (SI: F/m, H/m,
//! ohms). Invariant: inputs must be symmetric positive definite; results are symmetric.

use crate::{EPS0, MU0};

/// Matrices that cannot describe a line. `Display` renders the code and the data, for logs;
/// the command line words it for users.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum LineError {
    /// The two matrices differ in size, are empty or are not square.
    Shape,
    /// A matrix is not symmetric positive definite (a signal without capacitance to the
    /// rest): `"dielectric"` (C) or `"vacuum"` (C0).
    NotPositiveDefinite(&'static str),
}

impl LineError {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            LineError::Shape => "matrix-shape",
            LineError::NotPositiveDefinite(_) => "not-positive-definite",
        }
    }
}

impl std::fmt::Display for LineError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl std::error::Error for LineError {}

/// Parameters of a pair of signal conductors.
#[derive(Clone, Debug, PartialEq)]
pub struct Pair {
    /// Half the differential impedance, ohms (the odd-mode impedance of a symmetric pair).
    pub z_odd: f64,
    /// Twice the common-mode impedance, ohms (the even-mode impedance of a symmetric pair).
    pub z_even: f64,
    /// Impedance between the lines for a differential current (I, -I), ohms.
    pub z_diff: f64,
    /// Impedance of both lines driven together with (I, I) against ground, ohms.
    pub z_common: f64,
    /// `u.C u / u.C0 u` for u = (1, -1): the odd-mode effective permittivity of a symmetric
    /// pair.
    pub eps_eff_odd: f64,
    /// The same for u = (1, 1): the even-mode effective permittivity of a symmetric pair.
    pub eps_eff_even: f64,
    /// True when both matrices are symmetric under swapping the two lines (to 1e-3).
    pub symmetric: bool,
}

/// Line parameters of one or more signal conductors.
#[derive(Clone, Debug, PartialEq)]
pub struct LineParams {
    /// Capacitance matrix with the dielectrics, F/m.
    pub c: Vec<Vec<f64>>,
    /// Capacitance matrix with every permittivity 1, F/m.
    pub c0: Vec<Vec<f64>>,
    /// Inductance matrix `mu0 eps0 C0^-1`, H/m.
    pub l: Vec<Vec<f64>>,
    /// Characteristic-impedance matrix (`Z C Z = L`), ohms.
    pub z: Vec<Vec<f64>>,
    /// Effective permittivities of the propagation modes (eigenvalues of `C0^-1 C`),
    /// ascending.
    pub eps_eff_modes: Vec<f64>,
    /// One signal: characteristic impedance, ohms.
    pub z0: Option<f64>,
    /// One signal: effective permittivity `C / C0`.
    pub eps_eff: Option<f64>,
    /// Two signals: pair impedances.
    pub pair: Option<Pair>,
}

type Mat = Vec<Vec<f64>>;

/// Line parameters from the capacitance matrices with (`c`) and without (`c0`) dielectrics.
pub fn parameters(c: &[Vec<f64>], c0: &[Vec<f64>]) -> Result<LineParams, LineError> {
    let n = c.len();
    let square = |m: &[Vec<f64>]| m.iter().all(|r| r.len() == n);
    if n == 0 || c0.len() != n || !square(c) || !square(c0) {
        return Err(LineError::Shape);
    }
    let c = symmetrize(c);
    let c0 = symmetrize(c0);
    let (wc, vc) = eigen(&c);
    let (w0, v0) = eigen(&c0);
    if wc.iter().any(|&w| w.is_nan() || w <= 0.0) {
        return Err(LineError::NotPositiveDefinite("dielectric"));
    }
    if w0.iter().any(|&w| w.is_nan() || w <= 0.0) {
        return Err(LineError::NotPositiveDefinite("vacuum"));
    }
    let c0_inv = compose(&v0, &w0.iter().map(|w| 1.0 / w).collect::<Vec<_>>());
    let l: Mat = scale(&c0_inv, MU0 * EPS0);
    // Z = C^-1/2 (C^1/2 L C^1/2)^1/2 C^-1/2.
    let c_half = compose(&vc, &wc.iter().map(|w| w.sqrt()).collect::<Vec<_>>());
    let c_mhalf = compose(&vc, &wc.iter().map(|w| 1.0 / w.sqrt()).collect::<Vec<_>>());
    let m = symmetrize(&mul(&mul(&c_half, &l), &c_half));
    let (wm, vm) = eigen(&m);
    let m_half = compose(
        &vm,
        &wm.iter().map(|w| w.max(0.0).sqrt()).collect::<Vec<_>>(),
    );
    let z = symmetrize(&mul(&mul(&c_mhalf, &m_half), &c_mhalf));
    // Modal effective permittivities: eigenvalues of C0^-1/2 C C0^-1/2.
    let c0_mhalf = compose(&v0, &w0.iter().map(|w| 1.0 / w.sqrt()).collect::<Vec<_>>());
    let (mut eps_eff_modes, _) = eigen(&symmetrize(&mul(&mul(&c0_mhalf, &c), &c0_mhalf)));
    eps_eff_modes.sort_by(f64::total_cmp);

    let (z0, eps_eff) = if n == 1 {
        (Some(z[0][0]), Some(c[0][0] / c0[0][0]))
    } else {
        (None, None)
    };
    let pair = (n == 2).then(|| {
        let z_diff = z[0][0] + z[1][1] - 2.0 * z[0][1];
        let z_common = 0.25 * (z[0][0] + z[1][1] + 2.0 * z[0][1]);
        let quotient = |s: f64| {
            let q = |m: &Mat| m[0][0] + m[1][1] + 2.0 * s * m[0][1];
            q(&c) / q(&c0)
        };
        let swap_symmetric =
            |m: &Mat| (m[0][0] - m[1][1]).abs() <= 1e-3 * m[0][0].abs().max(m[1][1].abs());
        Pair {
            z_odd: 0.5 * z_diff,
            z_even: 2.0 * z_common,
            z_diff,
            z_common,
            eps_eff_odd: quotient(-1.0),
            eps_eff_even: quotient(1.0),
            symmetric: swap_symmetric(&c) && swap_symmetric(&c0),
        }
    });
    Ok(LineParams {
        c,
        c0,
        l,
        z,
        eps_eff_modes,
        z0,
        eps_eff,
        pair,
    })
}

/// The scalar results of a parameter set by key (`z0`, `eps_eff`, `z_odd`, `z_even`,
/// `z_diff`, `z_common`, `eps_eff_odd`, `eps_eff_even`), those that exist, in that order.
pub fn scalars(p: &LineParams) -> Vec<(&'static str, f64)> {
    let mut out = Vec::new();
    if let Some(z0) = p.z0 {
        out.push(("z0", z0));
    }
    if let Some(e) = p.eps_eff {
        out.push(("eps_eff", e));
    }
    if let Some(q) = &p.pair {
        out.extend([
            ("z_odd", q.z_odd),
            ("z_even", q.z_even),
            ("z_diff", q.z_diff),
            ("z_common", q.z_common),
            ("eps_eff_odd", q.eps_eff_odd),
            ("eps_eff_even", q.eps_eff_even),
        ]);
    }
    out
}

/// Complete elliptic integral of the first kind `K(k)` of modulus `k` (0 <= k < 1), by the
/// arithmetic-geometric mean: `K(k) = pi / (2 AGM(1, sqrt(1 - k^2)))` (M. Abramowitz,
/// I. A. Stegun, Handbook of Mathematical Functions, 1964, eq. 17.6.1 with 17.6.3). Used for
/// the conformal-map closed forms of strip lines. Infinite at k = 1, NaN outside [0, 1].
pub fn elliptic_k(k: f64) -> f64 {
    if !(0.0..=1.0).contains(&k) {
        return f64::NAN;
    }
    // k' from 1 - k^2 = (1 - k)(1 + k), accurate near k = 1.
    let kp = ((1.0 - k) * (1.0 + k)).sqrt();
    if kp == 0.0 {
        return f64::INFINITY;
    }
    let (mut a, mut b) = (1.0f64, kp);
    for _ in 0..64 {
        if (a - b).abs() <= 1e-16 * a {
            break;
        }
        (a, b) = (0.5 * (a + b), (a * b).sqrt());
    }
    std::f64::consts::PI / (a + b)
}

fn symmetrize(m: &[Vec<f64>]) -> Mat {
    let n = m.len();
    (0..n)
        .map(|i| (0..n).map(|j| 0.5 * (m[i][j] + m[j][i])).collect())
        .collect()
}

fn mul(a: &Mat, b: &Mat) -> Mat {
    let n = a.len();
    (0..n)
        .map(|i| {
            (0..n)
                .map(|j| (0..n).map(|k| a[i][k] * b[k][j]).sum())
                .collect()
        })
        .collect()
}

fn scale(a: &Mat, s: f64) -> Mat {
    a.iter()
        .map(|r| r.iter().map(|v| v * s).collect())
        .collect()
}

/// `V diag(w) V^T` for eigenvectors in the columns of `v`.
fn compose(v: &Mat, w: &[f64]) -> Mat {
    let n = w.len();
    (0..n)
        .map(|i| {
            (0..n)
                .map(|j| (0..n).map(|k| v[i][k] * w[k] * v[j][k]).sum())
                .collect()
        })
        .collect()
}

/// Eigenvalues and eigenvectors (columns) of a symmetric matrix by cyclic Jacobi rotations.
fn eigen(a: &Mat) -> (Vec<f64>, Mat) {
    let n = a.len();
    let mut a = a.clone();
    let mut v: Mat = (0..n)
        .map(|i| (0..n).map(|j| if i == j { 1.0 } else { 0.0 }).collect())
        .collect();
    let norm: f64 = a.iter().flatten().map(|x| x * x).sum::<f64>().sqrt();
    for _sweep in 0..100 {
        let off: f64 = (0..n)
            .flat_map(|i| (0..n).filter(move |&j| j != i).map(move |j| (i, j)))
            .map(|(i, j)| a[i][j] * a[i][j])
            .sum::<f64>()
            .sqrt();
        if off <= 1e-15 * norm {
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                if a[p][q] == 0.0 {
                    continue;
                }
                let theta = (a[q][q] - a[p][p]) / (2.0 * a[p][q]);
                let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
                let t = if theta == 0.0 { 1.0 } else { t };
                let cs = 1.0 / (t * t + 1.0).sqrt();
                let sn = t * cs;
                for row in a.iter_mut() {
                    let (akp, akq) = (row[p], row[q]);
                    row[p] = cs * akp - sn * akq;
                    row[q] = sn * akp + cs * akq;
                }
                let (rp, rq) = (a[p].clone(), a[q].clone());
                for k in 0..n {
                    a[p][k] = cs * rp[k] - sn * rq[k];
                    a[q][k] = sn * rp[k] + cs * rq[k];
                }
                for row in v.iter_mut() {
                    let (vkp, vkq) = (row[p], row[q]);
                    row[p] = cs * vkp - sn * vkq;
                    row[q] = sn * vkp + cs * vkq;
                }
            }
        }
    }
    ((0..n).map(|i| a[i][i]).collect(), v)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Speed of light in vacuum, m/s (exact by the SI definition of the metre).
    const C_LIGHT: f64 = 299_792_458.0;

    #[test]
    fn elliptic_k_matches_reference_values() {
        // Reference values of K(k) (modulus k) from the reference library mpmath 1.3
        // (mpmath.ellipk(k^2) at 30 digits, k the exact double given here, rounded to double), which agree with
        // scipy.special.ellipk to 1e-15 except near k = 1, where forming k^2 in double loses
        // digits; also K(0) = pi/2 and the lemniscatic case K(1/sqrt 2) =
        // Gamma(1/4)^2 / (4 sqrt(pi)) = 1.85407467730137 (common practice).
        let cases = [
            (0.0, std::f64::consts::FRAC_PI_2),
            (0.1, 1.574_745_561_517_356),
            (0.5, 1.685_750_354_812_596),
            (std::f64::consts::FRAC_1_SQRT_2, 1.854_074_677_301_372),
            (0.9, 2.280_549_138_422_770_3),
            (0.99, 3.356_600_523_361_192),
            (0.999999, 7.947_479_773_547_967),
        ];
        for (k, want) in cases {
            let got = elliptic_k(k);
            assert!(
                ((got - want) / want).abs() < 1e-14,
                "K({k}) = {got}, want {want}"
            );
        }
        assert_eq!(elliptic_k(1.0), f64::INFINITY);
        assert!(elliptic_k(-0.1).is_nan());
    }

    #[test]
    fn single_line_impedance_and_effective_permittivity() {
        // A homogeneous line of permittivity 4: Z0 = 1 / (v C) with v = c0 / 2 and
        // eps_eff = 4 (quasi-TEM theory, Paul 2008, ch. 5; from memory).
        let c0 = 40e-12;
        let p = parameters(&[vec![4.0 * c0]], &[vec![c0]]).unwrap();
        let want = 1.0 / (C_LIGHT * (4.0 * c0 * c0).sqrt());
        assert!((p.z0.unwrap() / want - 1.0).abs() < 1e-9);
        assert!((p.eps_eff.unwrap() - 4.0).abs() < 1e-12);
        assert!((p.l[0][0] - MU0 * EPS0 / c0).abs() < 1e-12 * p.l[0][0]);
        assert_eq!(p.pair, None);
    }

    #[test]
    fn symmetric_pair_gives_odd_and_even_mode_impedances() {
        // Symmetric pair: odd mode C11 - C12, even mode C11 + C12 (Maxwell matrix, C12 < 0);
        // Z_mode = 1 / (c0 sqrt(C_mode C0_mode)).
        let c = vec![vec![120e-12, -30e-12], vec![-30e-12, 120e-12]];
        let c0 = vec![vec![50e-12, -15e-12], vec![-15e-12, 50e-12]];
        let p = parameters(&c, &c0).unwrap();
        let q = p.pair.clone().unwrap();
        let zm = |cm: f64, c0m: f64| 1.0 / (C_LIGHT * (cm * c0m).sqrt());
        let (z_odd, z_even) = (zm(150e-12, 65e-12), zm(90e-12, 35e-12));
        assert!(
            (q.z_odd / z_odd - 1.0).abs() < 1e-9,
            "{} vs {z_odd}",
            q.z_odd
        );
        assert!((q.z_even / z_even - 1.0).abs() < 1e-9);
        assert!((q.z_diff - 2.0 * q.z_odd).abs() < 1e-9 * q.z_diff);
        assert!((q.z_common - 0.5 * q.z_even).abs() < 1e-9 * q.z_common);
        assert!((q.eps_eff_odd - 150.0 / 65.0).abs() < 1e-12);
        assert!((q.eps_eff_even - 90.0 / 35.0).abs() < 1e-12);
        assert!(q.symmetric);
        let modes = &p.eps_eff_modes;
        assert!((modes[0] - 150.0 / 65.0).abs() < 1e-9 && (modes[1] - 90.0 / 35.0).abs() < 1e-9);
    }

    #[test]
    fn impedance_matrix_solves_the_defining_equation_for_an_asymmetric_trio() {
        let c = vec![
            vec![100e-12, -20e-12, -5e-12],
            vec![-20e-12, 140e-12, -30e-12],
            vec![-5e-12, -30e-12, 90e-12],
        ];
        let c0 = vec![
            vec![40e-12, -9e-12, -2e-12],
            vec![-9e-12, 55e-12, -12e-12],
            vec![-2e-12, -12e-12, 35e-12],
        ];
        let p = parameters(&c, &c0).unwrap();
        // Z C Z = L and L C0 = mu0 eps0 I.
        let zcz = mul(&mul(&p.z, &p.c), &p.z);
        let lc0 = mul(&p.l, &p.c0);
        for i in 0..3 {
            for j in 0..3 {
                assert!((zcz[i][j] - p.l[i][j]).abs() < 1e-9 * p.l[i][i]);
                let want = if i == j { MU0 * EPS0 } else { 0.0 };
                assert!((lc0[i][j] - want).abs() < 1e-9 * MU0 * EPS0);
                assert!((p.z[i][j] - p.z[j][i]).abs() < 1e-12 * p.z[i][i]);
            }
        }
        assert!(p.eps_eff_modes.windows(2).all(|w| w[0] <= w[1]));
        assert!(p.z0.is_none() && p.pair.is_none());
    }

    #[test]
    fn rejects_matrices_that_are_not_positive_definite() {
        let bad = vec![vec![1e-12, -2e-12], vec![-2e-12, 1e-12]];
        let good = vec![vec![2e-12, -1e-12], vec![-1e-12, 2e-12]];
        assert_eq!(
            parameters(&bad, &good),
            Err(LineError::NotPositiveDefinite("dielectric"))
        );
        assert_eq!(parameters(&good, &[vec![1.0]]), Err(LineError::Shape));
    }
}
