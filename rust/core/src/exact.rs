//! Exact solutions: Hirota N-solitons of KdV and of focusing mKdV, in a numerically safe form.
//!
//! Canonical forms `w_t + 6 w w_x + w_xxx = 0` and `w_t + 6 w^2 w_x + w_xxx = 0`; a general
//! `u_t + a u u_x + d u_xxx = 0` is reached by `u = (6d/a) w(x, d t)` and
//! `u_t + b u^2 u_x + d u_xxx = 0` (with `b d > 0`) by `u = sqrt(6d/b) w(x, d t)`.
//!
//! Soliton `i` has phase `eta_i = 2 kappa_i (x - 4 kappa_i^2 t - x0_i)` and the pair coefficient
//! `e^{B_ij} = ((kappa_i - kappa_j)/(kappa_i + kappa_j))^2` (Hirota 1971, 1972). The tau function
//! is a sum over subsets `mu` of `exp(theta_mu)`, `theta_mu = sum mu_i eta_i + sum mu_i mu_j B_ij`.
//! - KdV: `w = 2 (ln tau)_xx`, which is twice the variance of `theta_mu'` under the weights
//!   `exp(theta_mu)/tau`; evaluated with the largest exponent factored out, it never overflows.
//! - mKdV: `f = sum prod_i (i eps_i)^{mu_i} exp(theta_mu)`, `w = 2 Im(f_x / f)`.

use num_complex::Complex64;

use crate::error::{CoreError, Result};

/// Most solitons accepted: the cost per point is `2^N`.
pub const MAX_SOLITONS: usize = 20;

struct Phases {
    /// `d eta_i / dx = 2 kappa_i`.
    slope: Vec<f64>,
    /// `B_ij` for `i < j`, row-major in an `N x N` table.
    pair: Vec<f64>,
    kappas: Vec<f64>,
    x0s: Vec<f64>,
}

fn phases(kappas: &[f64], x0s: &[f64]) -> Result<Phases> {
    let n = kappas.len();
    if n == 0 || n > MAX_SOLITONS {
        return Err(CoreError::invalid(
            "kappas",
            n,
            format!("1 to {MAX_SOLITONS} solitons"),
        ));
    }
    if x0s.len() != n {
        return Err(CoreError::ShapeMismatch {
            name: "x0s",
            expected: n,
            got: x0s.len(),
        });
    }
    if let Some(k) = kappas.iter().find(|k| !(k.is_finite() && **k > 0.0)) {
        return Err(CoreError::invalid("kappas", k, "finite positive values"));
    }
    if let Some(x) = x0s.iter().find(|x| !x.is_finite()) {
        return Err(CoreError::invalid("x0s", x, "finite values"));
    }
    let mut pair = vec![0.0; n * n];
    for i in 0..n {
        for j in i + 1..n {
            let (ki, kj) = (kappas[i], kappas[j]);
            if ki == kj {
                return Err(CoreError::invalid(
                    "kappas",
                    format!("{ki} twice"),
                    "distinct values (equal kappas do not form an N-soliton)",
                ));
            }
            pair[i * n + j] = 2.0 * ((ki - kj) / (ki + kj)).abs().ln();
        }
    }
    Ok(Phases {
        slope: kappas.iter().map(|k| 2.0 * k).collect(),
        pair,
        kappas: kappas.to_vec(),
        x0s: x0s.to_vec(),
    })
}

impl Phases {
    fn len(&self) -> usize {
        self.kappas.len()
    }

    /// `eta_i` at `(x, t)` for every soliton.
    fn eta(&self, x: f64, t: f64, out: &mut [f64]) {
        for (i, e) in out.iter_mut().enumerate() {
            let k = self.kappas[i];
            *e = 2.0 * k * (x - 4.0 * k * k * t - self.x0s[i]);
        }
    }

    /// `theta_mu` and `theta_mu'` for every subset `mu` (bit `i` of the index is `mu_i`).
    fn subsets(&self, eta: &[f64], theta: &mut [f64], slope: &mut [f64]) {
        let n = self.len();
        theta[0] = 0.0;
        slope[0] = 0.0;
        for mask in 1usize..(1 << n) {
            // Extend the subset without its highest member by that member.
            let top = usize::BITS as usize - 1 - mask.leading_zeros() as usize;
            let rest = mask & !(1 << top);
            let mut th = theta[rest] + eta[top];
            for i in 0..top {
                if rest & (1 << i) != 0 {
                    th += self.pair[i * n + top];
                }
            }
            theta[mask] = th;
            slope[mask] = slope[rest] + self.slope[top];
        }
    }
}

fn check_points(x: &[f64], t: f64, out: &[f64]) -> Result<()> {
    if out.len() != x.len() {
        return Err(CoreError::ShapeMismatch {
            name: "out",
            expected: x.len(),
            got: out.len(),
        });
    }
    if !t.is_finite() {
        return Err(CoreError::invalid("t", t, "a finite time"));
    }
    if let Some(v) = x.iter().find(|v| !v.is_finite()) {
        return Err(CoreError::invalid("x", v, "finite points"));
    }
    Ok(())
}

/// The KdV N-soliton of `u_t + a u u_x + d u_xxx = 0` at time `t` on the points `x`.
///
/// # Errors
/// [`CoreError::InvalidParameter`] for `a` or `d` zero or non-finite, kappas not positive and
/// distinct, or more than [`MAX_SOLITONS`]; [`CoreError::ShapeMismatch`] for mismatched lengths.
pub fn kdv_multisoliton(
    x: &[f64],
    t: f64,
    kappas: &[f64],
    x0s: &[f64],
    a: f64,
    d: f64,
    out: &mut [f64],
) -> Result<()> {
    check_points(x, t, out)?;
    if !(a.is_finite() && a != 0.0) {
        return Err(CoreError::invalid(
            "a",
            a,
            "a finite non-zero KdV coefficient",
        ));
    }
    if !(d.is_finite() && d != 0.0) {
        return Err(CoreError::invalid(
            "d",
            d,
            "a finite non-zero dispersion coefficient",
        ));
    }
    let ph = phases(kappas, x0s)?;
    let (scale, tau) = (6.0 * d / a, d * t);
    let size = 1usize << ph.len();
    let (mut eta, mut theta, mut slope) = (vec![0.0; ph.len()], vec![0.0; size], vec![0.0; size]);
    for (xi, o) in x.iter().zip(out.iter_mut()) {
        ph.eta(*xi, tau, &mut eta);
        ph.subsets(&eta, &mut theta, &mut slope);
        let top = theta.iter().fold(f64::NEG_INFINITY, |m, &v| m.max(v));
        let (mut s0, mut s1) = (0.0, 0.0);
        for (th, sl) in theta.iter_mut().zip(&slope) {
            *th = (*th - top).exp();
            s0 += *th;
            s1 += *th * sl;
        }
        let mean = s1 / s0;
        let var: f64 = theta
            .iter()
            .zip(&slope)
            .map(|(w, sl)| w * (sl - mean).powi(2))
            .sum::<f64>()
            / s0;
        *o = scale * 2.0 * var;
    }
    Ok(())
}

/// The N-soliton of focusing `u_t + b u^2 u_x + d u_xxx = 0` (`b d > 0`) with polarities `signs`.
///
/// # Errors
/// As [`kdv_multisoliton`], and for `b d <= 0` or signs other than +1 / -1.
#[allow(clippy::too_many_arguments)] // the solution's parameters, each a plain slice or number
pub fn mkdv_multisoliton(
    x: &[f64],
    t: f64,
    kappas: &[f64],
    x0s: &[f64],
    signs: &[f64],
    b: f64,
    d: f64,
    out: &mut [f64],
) -> Result<()> {
    check_points(x, t, out)?;
    if !(b.is_finite() && d.is_finite() && b * d > 0.0) {
        return Err(CoreError::invalid(
            "b",
            format!("b = {b}, d = {d}"),
            "a focusing mKdV (b d > 0, both finite)",
        ));
    }
    let ph = phases(kappas, x0s)?;
    if signs.len() != ph.len() {
        return Err(CoreError::ShapeMismatch {
            name: "signs",
            expected: ph.len(),
            got: signs.len(),
        });
    }
    if let Some(s) = signs.iter().find(|s| **s != 1.0 && **s != -1.0) {
        return Err(CoreError::invalid("signs", s, "+1 or -1 for each soliton"));
    }
    let (scale, tau) = ((6.0 * d / b).sqrt(), d * t);
    let size = 1usize << ph.len();
    // prod_i (i eps_i)^{mu_i} for each subset.
    let mut phase = vec![Complex64::new(1.0, 0.0); size];
    for mask in 1usize..size {
        let top = usize::BITS as usize - 1 - mask.leading_zeros() as usize;
        phase[mask] = phase[mask & !(1 << top)] * Complex64::new(0.0, signs[top]);
    }
    let (mut eta, mut theta, mut slope) = (vec![0.0; ph.len()], vec![0.0; size], vec![0.0; size]);
    for (xi, o) in x.iter().zip(out.iter_mut()) {
        ph.eta(*xi, tau, &mut eta);
        ph.subsets(&eta, &mut theta, &mut slope);
        let top = theta.iter().fold(f64::NEG_INFINITY, |m, &v| m.max(v));
        let (mut f, mut fx) = (Complex64::new(0.0, 0.0), Complex64::new(0.0, 0.0));
        for ((th, sl), c) in theta.iter().zip(&slope).zip(&phase) {
            let w = c * (th - top).exp();
            f += w;
            fx += w * sl;
        }
        *o = scale * 2.0 * (fx / f).im;
    }
    Ok(())
}
