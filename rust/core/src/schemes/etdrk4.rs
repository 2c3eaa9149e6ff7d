//! ETDRK4 of Cox & Matthews (2002), with the coefficients evaluated as means over a circle of
//! radius 1 around each `z = hL` in the complex plane (Kassam & Trefethen 2005), which avoids the
//! cancellation of the direct formulas for small `|z|`.

use std::f64::consts::PI;

use num_complex::Complex64;
use rustfft::FftPlanner;

use super::{linear, symbol, zeros, CoeffCache, Scheme, Stepper};
use crate::equation::Equation;
use crate::error::Result;
use crate::grid::Grid;
use crate::simd::kernel;
use crate::spectral::{check_modes, Nonlinear, Probe};

/// Points on the contour: the trapezoidal rule converges geometrically for these entire functions,
/// and 64 points reach round-off for the complex (dispersive) symbols used here.
const CONTOUR_POINTS: usize = 64;

/// The step-size-dependent coefficients of ETDRK4.
pub(crate) struct EtdCoefficients {
    e: Vec<Complex64>,
    e2: Vec<Complex64>,
    q: Vec<Complex64>,
    f1: Vec<Complex64>,
    f2: Vec<Complex64>,
    f3: Vec<Complex64>,
}

impl EtdCoefficients {
    pub(crate) fn new(lin: &[Complex64], h: f64) -> Self {
        let m = lin.len();
        let roots: Vec<Complex64> = (0..CONTOUR_POINTS)
            .map(|j| Complex64::from_polar(1.0, PI * (2 * j + 1) as f64 / CONTOUR_POINTS as f64))
            .collect();
        let mut c = EtdCoefficients {
            e: zeros(m),
            e2: zeros(m),
            q: zeros(m),
            f1: zeros(m),
            f2: zeros(m),
            f3: zeros(m),
        };
        let scale = h / CONTOUR_POINTS as f64;
        for (j, &l) in lin.iter().enumerate() {
            let z0 = h * l;
            c.e2[j] = (0.5 * z0).exp();
            c.e[j] = c.e2[j] * c.e2[j];
            let zero = Complex64::new(0.0, 0.0);
            let (mut q, mut f1, mut f2, mut f3) = (zero, zero, zero, zero);
            for &r in &roots {
                let z = z0 + r;
                let ez2 = (0.5 * z).exp();
                let ez = ez2 * ez2;
                let z2 = z * z;
                let z3 = z2 * z;
                q += (ez2 - 1.0) / z;
                f1 += (-4.0 - z + ez * (4.0 - 3.0 * z + z2)) / z3;
                f2 += (2.0 + z + ez * (z - 2.0)) / z3;
                f3 += (-4.0 - 3.0 * z - z2 + ez * (4.0 - z)) / z3;
            }
            c.q[j] = scale * q;
            c.f1[j] = scale * f1;
            c.f2[j] = scale * f2;
            c.f3[j] = scale * f3;
        }
        c
    }
}

/// The ETDRK4 scheme.
pub struct Etdrk4 {
    lin: Vec<Complex64>,
    cache: CoeffCache<EtdCoefficients>,
    nl: Nonlinear,
    a: Vec<Complex64>,
    nv: Vec<Complex64>,
    na: Vec<Complex64>,
    nb: Vec<Complex64>,
    nc: Vec<Complex64>,
}

impl Etdrk4 {
    /// The scheme for `eq` on `grid`.
    pub fn new(planner: &mut FftPlanner<f64>, grid: &Grid, eq: &Equation) -> Self {
        let m = grid.modes();
        Etdrk4 {
            lin: symbol(grid, eq),
            cache: CoeffCache::new(),
            nl: Nonlinear::new(planner, grid, eq),
            a: zeros(m),
            nv: zeros(m),
            na: zeros(m),
            nb: zeros(m),
            nc: zeros(m),
        }
    }
}

impl Stepper for Etdrk4 {
    fn scheme(&self) -> Scheme {
        Scheme::Etdrk4
    }

    fn step(&mut self, v: &mut [Complex64], h: f64) -> Result<Probe> {
        check_modes(v, self.nl.modes())?;
        let lin = &self.lin;
        let c = self.cache.get(h, |h| EtdCoefficients::new(lin, h));
        let k = self.nl.kept();
        // Slices of one length `k` let the compiler drop the bounds checks in the stage loops.
        let (e, e2, q) = (&c.e[..k], &c.e2[..k], &c.q[..k]);
        let (f1, f2, f3) = (&c.f1[..k], &c.f2[..k], &c.f3[..k]);
        self.nl.load(v)?;
        let probe = self.nl.eval_probed(&mut self.nv)?;
        let vk = &v[..k];
        stage_a(self.nl.input(), &mut self.a[..k], e2, q, vk, &self.nv[..k]);
        self.nl.eval(&mut self.na)?;
        stage_b(self.nl.input(), e2, q, vk, &self.na[..k]);
        self.nl.eval(&mut self.nb)?;
        stage_c(
            self.nl.input(),
            e2,
            q,
            &self.a[..k],
            &self.nb[..k],
            &self.nv[..k],
        );
        self.nl.eval(&mut self.nc)?;
        let (vk, tail) = v.split_at_mut(k);
        let ns = [&self.nv[..k], &self.na[..k], &self.nb[..k], &self.nc[..k]];
        update(vk, e, [f1, f2, f3], ns);
        linear(tail, &c.e[k..]);
        Ok(probe)
    }
}

// The stage formulas, one loop each over the kept modes. Every slice is cut to the length of the
// first, which lets the compiler drop the bounds checks and vectorise.

kernel! {
    /// `a = E_2 v + Q N(v)`, also the next argument.
    fn stage_a(input: &mut [Complex64], a: &mut [Complex64], e2: &[Complex64], q: &[Complex64],
               v: &[Complex64], nv: &[Complex64]) {
        let n = input.len();
        let (a, e2, q, v, nv) = (&mut a[..n], &e2[..n], &q[..n], &v[..n], &nv[..n]);
        for j in 0..n {
            a[j] = e2[j] * v[j] + q[j] * nv[j];
            input[j] = a[j];
        }
    }
}

kernel! {
    /// `b = E_2 v + Q N(a)`.
    fn stage_b(input: &mut [Complex64], e2: &[Complex64], q: &[Complex64], v: &[Complex64],
               na: &[Complex64]) {
        let n = input.len();
        let (e2, q, v, na) = (&e2[..n], &q[..n], &v[..n], &na[..n]);
        for j in 0..n {
            input[j] = e2[j] * v[j] + q[j] * na[j];
        }
    }
}

kernel! {
    /// `c = E_2 a + Q (2 N(b) - N(v))`.
    fn stage_c(input: &mut [Complex64], e2: &[Complex64], q: &[Complex64], a: &[Complex64],
               nb: &[Complex64], nv: &[Complex64]) {
        let n = input.len();
        let (e2, q, a, nb, nv) = (&e2[..n], &q[..n], &a[..n], &nb[..n], &nv[..n]);
        for j in 0..n {
            input[j] = e2[j] * a[j] + q[j] * (2.0 * nb[j] - nv[j]);
        }
    }
}

kernel! {
    /// `v = E v + f1 N(v) + 2 f2 (N(a) + N(b)) + f3 N(c)`.
    fn update(v: &mut [Complex64], e: &[Complex64], f: [&[Complex64]; 3], ns: [&[Complex64]; 4]) {
        let n = v.len();
        let (e, f1, f2, f3) = (&e[..n], &f[0][..n], &f[1][..n], &f[2][..n]);
        let (nv, na, nb, nc) = (&ns[0][..n], &ns[1][..n], &ns[2][..n], &ns[3][..n]);
        for j in 0..n {
            v[j] = e[j] * v[j] + f1[j] * nv[j] + 2.0 * f2[j] * (na[j] + nb[j]) + f3[j] * nc[j];
        }
    }
}
