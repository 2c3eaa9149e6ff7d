//! The KdV family `u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx`.
//!
//! Written as `u_t = L u + N(u)`: the linear part is the Fourier symbol
//! `L(k) = i d k^3 - i f k^5 - g - v k^2`, the nonlinear part `N(u) = -(a u^2/2 + b u^3/3)_x`.

use num_complex::Complex64;

use crate::error::{CoreError, Result};

/// The coefficients of the model by name, as given (checked by [`Equation::new`]).
///
/// [`Default`] is all zeros, so a caller names only the terms it uses:
/// `Coefficients { a: 6.0, d: 1.0, ..Coefficients::default() }` is KdV.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Coefficients {
    /// Quadratic flux coefficient (`a u u_x`).
    pub a: f64,
    /// Cubic flux coefficient (`b u^2 u_x`).
    pub b: f64,
    /// Third-order dispersion (`d u_xxx`).
    pub d: f64,
    /// Fifth-order dispersion (`f u_xxxxx`).
    pub f: f64,
    /// Linear damping (`-g u` on the right).
    pub g: f64,
    /// Viscosity (`v u_xx` on the right), at least 0.
    pub v: f64,
}

impl Coefficients {
    /// The alias-free dealiasing fraction `2/(p+1)` for the highest flux power `p` present:
    /// Orszag's (1971) 2/3 rule for a quadratic flux, 1/2 for a cubic one, 1 for a linear equation.
    fn alias_free_fraction(&self) -> f64 {
        if self.b != 0.0 {
            0.5
        } else if self.a != 0.0 {
            2.0 / 3.0
        } else {
            1.0
        }
    }
}

/// A checked equation: finite coefficients, `v >= 0`, and the dealiasing fraction of its
/// nonlinear term in (0, 1]. Built only by its constructors; read through its getters.
#[derive(Debug, Clone, PartialEq)]
pub struct Equation {
    coefficients: Coefficients,
    dealias: f64,
}

impl Equation {
    /// The equation with the given coefficients and dealiasing fraction; `dealias = None` picks
    /// the alias-free fraction `2/(p+1)` for the highest flux power `p` (Orszag 1971: 2/3 for a
    /// quadratic flux, 1/2 for a cubic one, 1 for a linear equation).
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] for a non-finite coefficient, `v < 0` (ill-posed), or a
    /// `dealias` outside (0, 1].
    pub fn new(coefficients: Coefficients, dealias: Option<f64>) -> Result<Self> {
        let c = coefficients;
        for (name, value) in [
            ("a", c.a),
            ("b", c.b),
            ("d", c.d),
            ("f", c.f),
            ("g", c.g),
            ("v", c.v),
        ] {
            if !value.is_finite() {
                return Err(CoreError::invalid(name, value, "a finite number"));
            }
        }
        if c.v < 0.0 {
            return Err(CoreError::invalid(
                "v",
                c.v,
                "v >= 0 (negative viscosity is ill-posed)",
            ));
        }
        let dealias = dealias.unwrap_or_else(|| c.alias_free_fraction());
        if !(dealias > 0.0 && dealias <= 1.0) {
            return Err(CoreError::invalid(
                "dealias",
                dealias,
                "a fraction in (0, 1]",
            ));
        }
        Ok(Equation {
            coefficients: c,
            dealias,
        })
    }

    /// An equation whose coefficients are known to be valid (finite, `v >= 0`), with the
    /// alias-free dealiasing fraction.
    fn trusted(coefficients: Coefficients) -> Self {
        Equation {
            dealias: coefficients.alias_free_fraction(),
            coefficients,
        }
    }

    /// KdV `u_t + 6 u u_x + u_xxx = 0`.
    pub fn kdv() -> Self {
        Self::trusted(Coefficients {
            a: 6.0,
            d: 1.0,
            ..Coefficients::default()
        })
    }

    /// Focusing mKdV `u_t + 6 u^2 u_x + u_xxx = 0`.
    pub fn mkdv() -> Self {
        Self::trusted(Coefficients {
            b: 6.0,
            d: 1.0,
            ..Coefficients::default()
        })
    }

    /// All coefficients.
    pub fn coefficients(&self) -> Coefficients {
        self.coefficients
    }

    /// Quadratic flux coefficient (`a u u_x`).
    pub fn a(&self) -> f64 {
        self.coefficients.a
    }

    /// Cubic flux coefficient (`b u^2 u_x`).
    pub fn b(&self) -> f64 {
        self.coefficients.b
    }

    /// Third-order dispersion (`d u_xxx`).
    pub fn d(&self) -> f64 {
        self.coefficients.d
    }

    /// Fifth-order dispersion (`f u_xxxxx`).
    pub fn f(&self) -> f64 {
        self.coefficients.f
    }

    /// Linear damping (`-g u` on the right).
    pub fn g(&self) -> f64 {
        self.coefficients.g
    }

    /// Viscosity (`v u_xx` on the right), at least 0.
    pub fn v(&self) -> f64 {
        self.coefficients.v
    }

    /// Fraction of the Nyquist band kept in the nonlinear term, in (0, 1].
    pub fn dealias(&self) -> f64 {
        self.dealias
    }

    /// The linear symbol at wavenumber `k`; `nyquist` drops the odd (dispersive) part, which a real
    /// field cannot carry at the Nyquist mode.
    pub fn symbol(&self, k: f64, nyquist: bool) -> Complex64 {
        let c = &self.coefficients;
        let k2 = k * k;
        let odd = if nyquist {
            0.0
        } else {
            c.d * k2 * k - c.f * k2 * k2 * k
        };
        Complex64::new(-c.g - c.v * k2, odd)
    }
}

#[cfg(test)]
mod tests {
    use super::{Coefficients, Equation};
    use crate::CoreError;

    fn with(a: f64, b: f64, v: f64) -> Coefficients {
        Coefficients {
            a,
            b,
            d: 1.0,
            v,
            ..Coefficients::default()
        }
    }

    #[test]
    fn default_dealiasing_follows_the_highest_flux_power() {
        // Orszag (1971): a product of p factors is alias-free when modes j < n/(p+1) are kept.
        let fraction = |a, b| Equation::new(with(a, b, 0.0), None).unwrap().dealias();
        assert_eq!(fraction(6.0, 0.0), 2.0 / 3.0);
        assert_eq!(fraction(0.0, 6.0), 0.5);
        assert_eq!(fraction(6.0, 6.0), 0.5);
        assert_eq!(fraction(0.0, 0.0), 1.0);
        assert_eq!(Equation::kdv().dealias(), 2.0 / 3.0);
        assert_eq!(Equation::mkdv().dealias(), 0.5);
        assert_eq!(
            Equation::new(with(6.0, 0.0, 0.0), Some(1.0))
                .unwrap()
                .dealias(),
            1.0
        );
    }

    #[test]
    fn invalid_equations_name_the_field() {
        let name = |c, dealias| match Equation::new(c, dealias) {
            Err(CoreError::InvalidParameter { name, .. }) => name,
            other => panic!("expected an invalid parameter, got {other:?}"),
        };
        assert_eq!(name(with(f64::NAN, 0.0, 0.0), None), "a");
        assert_eq!(name(with(6.0, f64::INFINITY, 0.0), None), "b");
        assert_eq!(name(with(6.0, 0.0, -1.0), None), "v");
        assert_eq!(name(with(6.0, 0.0, 0.0), Some(0.0)), "dealias");
        assert_eq!(name(with(6.0, 0.0, 0.0), Some(1.5)), "dealias");
        assert_eq!(name(with(6.0, 0.0, 0.0), Some(f64::NAN)), "dealias");
    }
}
