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

use crate::error::{number, CoreError, Result};

/// Most solitons accepted: the cost per point is `2^N`.
pub const MAX_SOLITONS: usize = 20;

/// Subset terms evaluated between two calls of the caller's hook (a point costs `2^N` terms).
pub const HOOK_TERMS: usize = 1 << 16;

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

/// `4 kappa^2 t`, the distance travelled; exactly 0 at `t = 0` even when `kappa^2` overflows.
fn travel(k: f64, t: f64) -> f64 {
    if t == 0.0 {
        0.0
    } else {
        4.0 * k * k * t
    }
}

impl Phases {
    fn len(&self) -> usize {
        self.kappas.len()
    }

    /// `eta_i` at `(x, t)` for every soliton.
    fn eta(&self, x: f64, t: f64, out: &mut [f64]) {
        for (i, e) in out.iter_mut().enumerate() {
            let k = self.kappas[i];
            *e = 2.0 * k * (x - travel(k, t) - self.x0s[i]);
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

/// Checks that each soliton alone is finite on the points: its amplitude `amplitude(kappa)`, its
/// travel `4 kappa^2 tau` (`tau = d t`) and its phase `eta` at both ends of `x`.
fn check_finite(
    ph: &Phases,
    x: &[f64],
    t: f64,
    tau: f64,
    amplitude: impl Fn(f64) -> f64,
) -> Result<()> {
    let (lo, hi) = x
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
            (lo.min(v), hi.max(v))
        });
    for (&k, &x0) in ph.kappas.iter().zip(&ph.x0s) {
        if !amplitude(k).is_finite() {
            return Err(CoreError::invalid(
                "kappas",
                number(k),
                "values whose soliton amplitude is a finite number",
            ));
        }
        let travel = travel(k, tau);
        let ends = [lo, hi].map(|v| 2.0 * k * (v - travel - x0));
        if !(travel.is_finite() && (x.is_empty() || ends.iter().all(|e| e.is_finite()))) {
            return Err(CoreError::invalid(
                "phase",
                format!(
                    "t = {}, kappa = {}, x0 = {}, x from {} to {}",
                    number(t),
                    number(k),
                    number(x0),
                    number(lo),
                    number(hi)
                ),
                "a finite 2 kappa (x - 4 kappa^2 t - x0) at every point",
            ));
        }
    }
    Ok(())
}

/// Fills `out[i] = value(x[i])`, calling `hook` every [`HOOK_TERMS`] subset terms (`terms` per
/// point) and refusing a non-finite value.
fn each_point(
    x: &[f64],
    out: &mut [f64],
    terms: usize,
    t: f64,
    hook: &mut dyn FnMut() -> bool,
    mut value: impl FnMut(f64) -> f64,
) -> Result<()> {
    let every = (HOOK_TERMS / terms.max(1)).max(1);
    for (i, (xi, o)) in x.iter().zip(out.iter_mut()).enumerate() {
        if i % every == every - 1 && !hook() {
            return Err(CoreError::Interrupted { time: t });
        }
        *o = value(*xi);
        if !o.is_finite() {
            return Err(CoreError::invalid(
                "kappas",
                format!("{o} at x = {} (index {i})", number(*xi)),
                "parameters whose solution is finite there",
            ));
        }
    }
    Ok(())
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
/// distinct, or more than [`MAX_SOLITONS`], or parameters whose solution is not finite (an
/// amplitude, travel or phase that overflows); [`CoreError::ShapeMismatch`] for mismatched
/// lengths.
pub fn kdv_multisoliton(
    x: &[f64],
    t: f64,
    kappas: &[f64],
    x0s: &[f64],
    a: f64,
    d: f64,
    out: &mut [f64],
) -> Result<()> {
    kdv_multisoliton_with(x, t, kappas, x0s, a, d, out, &mut || true)
}

/// As [`kdv_multisoliton`]; `hook` is called every [`HOOK_TERMS`] subset terms, and returning
/// `false` stops with [`CoreError::Interrupted`] (`out` is then partly filled).
///
/// # Errors
/// As [`kdv_multisoliton`], and [`CoreError::Interrupted`].
#[allow(clippy::too_many_arguments)] // the solution's parameters and the hook
pub fn kdv_multisoliton_with(
    x: &[f64],
    t: f64,
    kappas: &[f64],
    x0s: &[f64],
    a: f64,
    d: f64,
    out: &mut [f64],
    hook: &mut dyn FnMut() -> bool,
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
    check_finite(&ph, x, t, tau, |k| scale * 2.0 * k * k)?;
    let size = 1usize << ph.len();
    let (mut eta, mut theta, mut slope) = (vec![0.0; ph.len()], vec![0.0; size], vec![0.0; size]);
    each_point(x, out, size, t, hook, |xi| {
        ph.eta(xi, tau, &mut eta);
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
        scale * 2.0 * var
    })
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
    mkdv_multisoliton_with(x, t, kappas, x0s, signs, b, d, out, &mut || true)
}

/// As [`mkdv_multisoliton`], with `hook` as in [`kdv_multisoliton_with`].
///
/// # Errors
/// As [`mkdv_multisoliton`], and [`CoreError::Interrupted`].
#[allow(clippy::too_many_arguments)] // the solution's parameters and the hook
pub fn mkdv_multisoliton_with(
    x: &[f64],
    t: f64,
    kappas: &[f64],
    x0s: &[f64],
    signs: &[f64],
    b: f64,
    d: f64,
    out: &mut [f64],
    hook: &mut dyn FnMut() -> bool,
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
    check_finite(&ph, x, t, tau, |k| scale * 2.0 * k)?;
    let size = 1usize << ph.len();
    // prod_i (i eps_i)^{mu_i} for each subset.
    let mut phase = vec![Complex64::new(1.0, 0.0); size];
    for mask in 1usize..size {
        let top = usize::BITS as usize - 1 - mask.leading_zeros() as usize;
        phase[mask] = phase[mask & !(1 << top)] * Complex64::new(0.0, signs[top]);
    }
    let (mut eta, mut theta, mut slope) = (vec![0.0; ph.len()], vec![0.0; size], vec![0.0; size]);
    each_point(x, out, size, t, hook, |xi| {
        ph.eta(xi, tau, &mut eta);
        ph.subsets(&eta, &mut theta, &mut slope);
        let top = theta.iter().fold(f64::NEG_INFINITY, |m, &v| m.max(v));
        let (mut f, mut fx) = (Complex64::new(0.0, 0.0), Complex64::new(0.0, 0.0));
        for ((th, sl), c) in theta.iter().zip(&slope).zip(&phase) {
            let w = c * (th - top).exp();
            f += w;
            fx += w * sl;
        }
        scale * 2.0 * (fx / f).im
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn points() -> Vec<f64> {
        (0..41).map(|i| -10.0 + 0.5 * i as f64).collect()
    }

    #[test]
    fn parameters_whose_solution_overflows_are_errors() {
        let x = points();
        let mut out = vec![0.0; x.len()];
        // 2 kappa^2 overflows for kappa = 1e200: refused (it used to return NaN everywhere).
        let err = kdv_multisoliton(&x, 0.0, &[1e200], &[0.0], 6.0, 1.0, &mut out).unwrap_err();
        assert_eq!(
            err.to_string(),
            "kappas: expected values whose soliton amplitude is a finite number, got 1e200"
        );
        let err = mkdv_multisoliton(&x, 0.0, &[1e308], &[0.0], &[1.0], 6.0, 1.0, &mut out);
        assert!(matches!(
            err,
            Err(CoreError::InvalidParameter { name: "kappas", .. })
        ));
        // A phase 2 kappa (x - x0) that overflows.
        let err = kdv_multisoliton(&x, 0.0, &[1.0], &[1e308], 6.0, 1.0, &mut out).unwrap_err();
        assert!(
            err.to_string()
                .starts_with("phase: expected a finite 2 kappa"),
            "{err}"
        );
        // Travel 4 kappa^2 t that overflows.
        let err = kdv_multisoliton(&x, 1e308, &[10.0], &[0.0], 6.0, 1.0, &mut out);
        assert!(matches!(
            err,
            Err(CoreError::InvalidParameter { name: "phase", .. })
        ));
        // Far-travelled but finite: the soliton has left the points, the value is 0.
        kdv_multisoliton(&x, 1e300, &[1.0], &[0.0], 6.0, 1.0, &mut out).unwrap();
        assert!(out.iter().all(|v| *v == 0.0));
    }

    #[test]
    fn a_non_finite_value_is_refused_with_its_point() {
        let x = points();
        let mut out = vec![0.0; x.len()];
        let err = each_point(&x, &mut out, 1, 0.0, &mut || true, |xi| {
            if xi == 0.5 {
                f64::NAN
            } else {
                1.0
            }
        })
        .unwrap_err();
        assert_eq!(
            err.to_string(),
            "kappas: expected parameters whose solution is finite there, got NaN at x = 0.5 (index 21)"
        );
    }

    #[test]
    fn the_hook_is_called_and_can_stop_a_long_evaluation() {
        // 12 solitons: 4096 terms a point, so the hook runs every 16 points.
        let kappas: Vec<f64> = (0..12).map(|i| 0.5 + 0.1 * i as f64).collect();
        let x0s = vec![0.0; kappas.len()];
        let x = points();
        let mut out = vec![0.0; x.len()];
        let mut calls = 0;
        kdv_multisoliton_with(&x, 0.0, &kappas, &x0s, 6.0, 1.0, &mut out, &mut || {
            calls += 1;
            true
        })
        .unwrap();
        assert_eq!(calls, x.len() / 16);
        let err = kdv_multisoliton_with(&x, 0.5, &kappas, &x0s, 6.0, 1.0, &mut out, &mut || false);
        assert_eq!(err, Err(CoreError::Interrupted { time: 0.5 }));
    }
}
