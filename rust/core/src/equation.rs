//! The KdV family `u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx`.
//!
//! Written as `u_t = L u + N(u)`: the linear part is the Fourier symbol
//! `L(k) = i d k^3 - i f k^5 - g - v k^2`, the nonlinear part `N(u) = -(a u^2/2 + b u^3/3)_x`.

use num_complex::Complex64;

use crate::error::{CoreError, Result};

/// Coefficients of the model and the dealiasing fraction of its nonlinear term.
#[derive(Debug, Clone, PartialEq)]
pub struct Equation {
    /// Quadratic flux coefficient (`a u u_x`).
    pub a: f64,
    /// Cubic flux coefficient (`b u^2 u_x`).
    pub b: f64,
    /// Third-order dispersion.
    pub d: f64,
    /// Fifth-order dispersion.
    pub f: f64,
    /// Linear damping (`-g u` on the right).
    pub g: f64,
    /// Viscosity (`v u_xx` on the right), at least 0.
    pub v: f64,
    /// Fraction of the Nyquist band kept in the nonlinear term, in (0, 1].
    pub dealias: f64,
}

impl Equation {
    /// An equation with the alias-free dealiasing fraction `2/(p+1)` for its highest flux power `p`
    /// (Orszag's 2/3 rule for quadratic, 1/2 for cubic, 1 for a linear equation).
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] for a non-finite coefficient or `v < 0` (ill-posed).
    pub fn new(a: f64, b: f64, d: f64, f: f64, g: f64, v: f64) -> Result<Self> {
        let dealias = if b != 0.0 {
            0.5
        } else if a != 0.0 {
            2.0 / 3.0
        } else {
            1.0
        };
        Self::with_dealias(a, b, d, f, g, v, dealias)
    }

    /// As [`Equation::new`] with an explicit dealiasing fraction.
    ///
    /// # Errors
    /// As [`Equation::new`], and for `dealias` outside (0, 1].
    pub fn with_dealias(
        a: f64,
        b: f64,
        d: f64,
        f: f64,
        g: f64,
        v: f64,
        dealias: f64,
    ) -> Result<Self> {
        for (name, value) in [("a", a), ("b", b), ("d", d), ("f", f), ("g", g), ("v", v)] {
            if !value.is_finite() {
                return Err(CoreError::invalid(name, value, "a finite number"));
            }
        }
        if v < 0.0 {
            return Err(CoreError::invalid(
                "v",
                v,
                "v >= 0 (negative viscosity is ill-posed)",
            ));
        }
        if !(dealias > 0.0 && dealias <= 1.0) {
            return Err(CoreError::invalid(
                "dealias",
                dealias,
                "a fraction in (0, 1]",
            ));
        }
        Ok(Equation {
            a,
            b,
            d,
            f,
            g,
            v,
            dealias,
        })
    }

    /// KdV `u_t + 6 u u_x + u_xxx = 0`.
    pub fn kdv() -> Self {
        Equation {
            a: 6.0,
            b: 0.0,
            d: 1.0,
            f: 0.0,
            g: 0.0,
            v: 0.0,
            dealias: 2.0 / 3.0,
        }
    }

    /// Focusing mKdV `u_t + 6 u^2 u_x + u_xxx = 0`.
    pub fn mkdv() -> Self {
        Equation {
            a: 0.0,
            b: 6.0,
            d: 1.0,
            f: 0.0,
            g: 0.0,
            v: 0.0,
            dealias: 0.5,
        }
    }

    /// The linear symbol at wavenumber `k`; `nyquist` drops the odd (dispersive) part, which a real
    /// field cannot carry at the Nyquist mode.
    pub fn symbol(&self, k: f64, nyquist: bool) -> Complex64 {
        let k2 = k * k;
        let odd = if nyquist {
            0.0
        } else {
            self.d * k2 * k - self.f * k2 * k2 * k
        };
        Complex64::new(-self.g - self.v * k2, odd)
    }
}
