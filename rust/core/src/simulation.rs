//! The driver: a state on a grid, a scheme, and the rules for reaching requested times.
//!
//! Fixed-step schemes cross an interval with the largest equal steps of at most `dt`, so the
//! state at every requested time is exact to round-off; the adaptive scheme shortens its last
//! step to land on the time. Every step checks the field it transformed anyway for non-finite
//! values and for growth past the blow-up bound.

use std::time::{Duration, Instant};

use num_complex::Complex64;
use rustfft::FftPlanner;

use crate::equation::Equation;
use crate::error::{CoreError, Result};
use crate::grid::Grid;
use crate::memory::{bytes_of, ensure_available, try_filled};
use crate::schemes::{stepper, IfRk43, Scheme, Stepper};
use crate::spectral::{probe, Probe, Transforms};

/// Steps between two calls of the caller's progress hook.
pub const HOOK_STEPS: u64 = 256;

/// Default blow-up bound as a multiple of `max(1, max|u0|)`.
pub const DEFAULT_BOUND_FACTOR: f64 = 1e3;

/// The coarsest spacing of float64 times accepted near the current time, as a fraction of the
/// step: a step shorter than `1000` spacings would not move the time by what it integrates.
pub const MAX_TIME_SPACING: f64 = 1e-3;

/// Spectrum-sized (`n/2 + 1` complex values) buffers of a simulation, an upper bound over the
/// schemes: ETDRK4's symbol, 5 stage buffers and up to 3 cached sets of 6 coefficients, the
/// nonlinear term's argument and wavenumbers, the driver's spectrum and scratch (28), rounded up.
const SPECTRUM_BUFFERS: u128 = 30;

/// Real `n`-point buffers (the nonlinear term's and the driver's field, and slack).
const REAL_BUFFERS: u128 = 4;

/// An upper bound of the bytes a simulation of `n` points allocates (all schemes): measured
/// peaks are about 210 bytes a point for powers of two and 410 when `n/2` is prime.
pub fn memory_bound(n: usize) -> u128 {
    let points = n as u128;
    let modes = points / 2 + 1;
    // Two sets of transforms: the driver's and the nonlinear term's.
    bytes_of::<Complex64>(SPECTRUM_BUFFERS * modes)
        .saturating_add(bytes_of::<f64>(REAL_BUFFERS * points))
        .saturating_add(Transforms::memory_bound(n).saturating_mul(2))
}

/// Spacing of the float64 numbers near `x` (its unit in the last place).
fn spacing(x: f64) -> f64 {
    let exponent = x.abs().to_bits() & 0x7ff0_0000_0000_0000;
    if exponent == 0 {
        f64::from_bits(1)
    } else {
        f64::from_bits(exponent) * f64::EPSILON
    }
}

enum Driver {
    Fixed(Box<dyn Stepper>),
    Adaptive(Box<IfRk43>),
}

/// A simulation of one equation on one grid.
pub struct Simulation {
    grid: Grid,
    scheme: Scheme,
    driver: Driver,
    transforms: Transforms,
    spectrum: Vec<Complex64>,
    phys: Vec<f64>,
    time: f64,
    steps: u64,
    rejected: u64,
    dt: f64,
    tol: f64,
    h_next: f64,
    max_amplitude: Option<f64>,
    bound: f64,
    time_limit: Option<f64>,
    /// Wall-clock time spent stepping since the state was set.
    used: Duration,
    /// When the current call must stop (set while stepping under a time limit).
    deadline: Option<Instant>,
}

/// Checks a step size, tolerance or bound: finite and positive.
fn positive(name: &'static str, value: f64) -> Result<f64> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(CoreError::invalid(name, value, "a finite positive number"))
    }
}

impl Simulation {
    /// A simulation starting from `u = 0` at `t = 0`.
    ///
    /// `dt` is the step (fixed schemes) or the first trial step (adaptive); `tol` the adaptive
    /// scheme's relative L2 error per step; `max_amplitude` the blow-up bound on `max|u|`
    /// (default [`DEFAULT_BOUND_FACTOR`] `* max(1, max|u0|)`, set with each state).
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] for `dt`, `tol` or `max_amplitude` not finite and positive,
    /// or `tol >= 1`; [`CoreError::OutOfMemory`] if [`memory_bound`] bytes cannot be reserved
    /// (checked before anything is built).
    pub fn new(
        grid: Grid,
        eq: &Equation,
        scheme: Scheme,
        dt: f64,
        tol: f64,
        max_amplitude: Option<f64>,
    ) -> Result<Self> {
        positive("dt", dt)?;
        positive("tol", tol)?;
        if tol >= 1.0 {
            return Err(CoreError::invalid(
                "tol",
                tol,
                "a relative tolerance below 1",
            ));
        }
        if let Some(b) = max_amplitude {
            positive("max_amplitude", b)?;
        }
        // The FFT plans allocate infallibly: reserve (and release) the whole bound first.
        ensure_available("a simulation on this grid", memory_bound(grid.n()))?;
        let m = grid.modes();
        let spectrum = try_filled("the spectrum", m, Complex64::new(0.0, 0.0))?;
        let phys = try_filled("the field", grid.n(), 0.0)?;
        // One planner: the stepper's plans and the driver's own transforms share its cache.
        let mut planner = FftPlanner::new();
        let driver = match scheme {
            Scheme::Adaptive => Driver::Adaptive(Box::new(IfRk43::new(&mut planner, &grid, eq))),
            Scheme::Etdrk4 | Scheme::IfRk4 | Scheme::Strang => {
                Driver::Fixed(stepper(&mut planner, scheme, &grid, eq))
            }
        };
        Ok(Simulation {
            transforms: Transforms::new(&mut planner, grid.n()),
            spectrum,
            phys,
            grid,
            scheme,
            driver,
            time: 0.0,
            steps: 0,
            rejected: 0,
            dt,
            tol,
            h_next: dt,
            max_amplitude,
            bound: max_amplitude.unwrap_or(DEFAULT_BOUND_FACTOR),
            time_limit: None,
            used: Duration::ZERO,
            deadline: None,
        })
    }

    /// Limits the wall-clock time spent stepping (advance and record together) since the state
    /// was set to `seconds`; `None` removes the limit. The limit is checked every [`HOOK_STEPS`]
    /// steps; when it has run out the call stops with [`CoreError::TimeLimit`], leaving a valid
    /// state at the time reached.
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] for a limit that is not finite and positive.
    pub fn set_time_limit(&mut self, seconds: Option<f64>) -> Result<()> {
        if let Some(s) = seconds {
            positive("time_limit", s)?;
        }
        self.time_limit = seconds;
        Ok(())
    }

    /// The wall-clock limit on stepping, seconds (`None`: no limit).
    pub fn time_limit(&self) -> Option<f64> {
        self.time_limit
    }

    /// The grid.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    /// The scheme.
    pub fn scheme(&self) -> Scheme {
        self.scheme
    }

    /// Current time.
    pub fn time(&self) -> f64 {
        self.time
    }

    /// Accepted steps since the state was set.
    pub fn steps(&self) -> u64 {
        self.steps
    }

    /// Rejected trial steps since the state was set (adaptive scheme only).
    pub fn rejected(&self) -> u64 {
        self.rejected
    }

    /// The blow-up bound in force.
    pub fn bound(&self) -> f64 {
        self.bound
    }

    /// Replaces the state by the profile `u` at time `time`; resets the step counters.
    ///
    /// # Errors
    /// [`CoreError::ShapeMismatch`] if `u` does not have `n` values, [`CoreError::InvalidParameter`]
    /// for a non-finite value or time.
    pub fn set_state(&mut self, u: &[f64], time: f64) -> Result<()> {
        let n = self.grid.n();
        if u.len() != n {
            return Err(CoreError::ShapeMismatch {
                name: "u0",
                expected: n,
                got: u.len(),
            });
        }
        if let Some(i) = u.iter().position(|x| !x.is_finite()) {
            return Err(CoreError::invalid(
                "u0",
                format!("{} at index {i}", u[i]),
                "finite values",
            ));
        }
        if !time.is_finite() {
            return Err(CoreError::invalid("time", time, "a finite number"));
        }
        let max_abs = u.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        self.phys.copy_from_slice(u);
        self.transforms.forward(&self.phys, &mut self.spectrum)?;
        self.time = time;
        self.steps = 0;
        self.rejected = 0;
        self.used = Duration::ZERO;
        self.h_next = self.dt;
        self.bound = self
            .max_amplitude
            .unwrap_or(DEFAULT_BOUND_FACTOR * max_abs.max(1.0));
        if let Driver::Adaptive(a) = &mut self.driver {
            a.reset();
        }
        Ok(())
    }

    /// Writes the current profile into `out` (`n` values).
    ///
    /// # Errors
    /// [`CoreError::ShapeMismatch`] if `out` does not have `n` values.
    pub fn state_into(&mut self, out: &mut [f64]) -> Result<()> {
        let n = self.grid.n();
        if out.len() != n {
            return Err(CoreError::ShapeMismatch {
                name: "out",
                expected: n,
                got: out.len(),
            });
        }
        self.transforms.inverse(&self.spectrum, out)?;
        let inv_n = 1.0 / n as f64;
        out.iter_mut().for_each(|x| *x *= inv_n);
        Ok(())
    }

    /// The current profile.
    pub fn state(&mut self) -> Vec<f64> {
        let mut out = vec![0.0; self.grid.n()];
        // Cannot fail: `out` has the grid's length.
        let _ = self.state_into(&mut out);
        out
    }

    /// The current spectrum (unnormalised real-to-complex coefficients).
    pub fn spectrum(&self) -> &[Complex64] {
        &self.spectrum
    }

    fn check(&self, probe: Probe, time: f64) -> Result<()> {
        if !probe.finite {
            return Err(CoreError::NonFinite {
                time,
                step: self.steps,
            });
        }
        if probe.max_abs > self.bound {
            return Err(CoreError::BlowUp {
                time,
                step: self.steps,
                max_abs: probe.max_abs,
                bound: self.bound,
            });
        }
        Ok(())
    }

    /// Advances by `duration` (at least 0).
    ///
    /// # Errors
    /// As [`Simulation::advance_with`].
    pub fn advance(&mut self, duration: f64) -> Result<()> {
        self.advance_with(duration, &mut || true)
    }

    /// Advances by `duration` (at least 0) and checks the final state; `hook` as in
    /// [`Simulation::advance_to`].
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] for a negative or non-finite duration, and the errors of
    /// [`Simulation::advance_to`] and [`Simulation::check_now`].
    pub fn advance_with(&mut self, duration: f64, hook: &mut dyn FnMut() -> bool) -> Result<()> {
        if !(duration.is_finite() && duration >= 0.0) {
            return Err(CoreError::invalid(
                "duration",
                duration,
                "a finite number >= 0",
            ));
        }
        self.advance_to(self.time + duration, hook)?;
        self.check_now()
    }

    /// Checks the current state for non-finite values and blow-up.
    ///
    /// # Errors
    /// [`CoreError::NonFinite`] or [`CoreError::BlowUp`].
    pub fn check_now(&mut self) -> Result<()> {
        let mut phys = std::mem::take(&mut self.phys);
        let result = self
            .state_into(&mut phys)
            .and_then(|()| self.check(probe(&phys, 1.0), self.time));
        self.phys = phys;
        result
    }

    /// Advances to the time `target` (not before the current time). `hook` is called every
    /// [`HOOK_STEPS`] steps; returning `false` stops with [`CoreError::Interrupted`], leaving a
    /// valid state at the time reached.
    ///
    /// # Errors
    /// [`CoreError::InvalidParameter`] for a target before the current time,
    /// [`CoreError::NonFinite`] / [`CoreError::BlowUp`] when the run goes unstable,
    /// [`CoreError::StepSizeUnderflow`] if the adaptive scheme cannot meet its tolerance,
    /// [`CoreError::TimeResolution`] if float64 times near the current time are too coarse for the
    /// step (see [`MAX_TIME_SPACING`]), [`CoreError::TimeLimit`] when the time limit runs out.
    pub fn advance_to(&mut self, target: f64, hook: &mut dyn FnMut() -> bool) -> Result<()> {
        let span = target - self.time;
        let (behind, ahead) = time_slack(self.time, target, self.dt);
        if !target.is_finite() || span < -behind {
            return Err(CoreError::invalid(
                "time",
                target,
                format!("a finite time >= the current time {}", self.time),
            ));
        }
        if span <= ahead {
            self.time = self.time.max(target);
            return Ok(());
        }
        let started = Instant::now();
        self.deadline = self
            .time_limit
            .and_then(|l| Duration::try_from_secs_f64(l).ok())
            .and_then(|l| started.checked_add(l.saturating_sub(self.used)));
        let result = self.check_deadline().and_then(|()| match &mut self.driver {
            Driver::Fixed(_) => self.advance_fixed(target, span, hook),
            Driver::Adaptive(_) => self.advance_adaptive(target, ahead, hook),
        });
        self.used = self.used.saturating_add(started.elapsed());
        self.deadline = None;
        result
    }

    /// [`CoreError::TimeResolution`] if float64 times near `self.time` and `target` are too coarse
    /// for the step `h`.
    fn check_resolution(&self, h: f64, target: f64) -> Result<()> {
        let gap = spacing(self.time.abs().max(target.abs()));
        if gap > MAX_TIME_SPACING * h {
            return Err(CoreError::TimeResolution {
                time: self.time,
                step: h,
                spacing: gap,
                max_ratio: MAX_TIME_SPACING,
            });
        }
        Ok(())
    }

    fn check_deadline(&self) -> Result<()> {
        match (self.time_limit, self.deadline) {
            (Some(limit), Some(deadline)) if Instant::now() >= deadline => {
                Err(CoreError::TimeLimit {
                    limit,
                    time: self.time,
                    step: self.steps,
                })
            }
            _ => Ok(()),
        }
    }

    /// Every [`HOOK_STEPS`] steps: the time limit, then the caller's hook.
    fn pause(&mut self, hook: &mut dyn FnMut() -> bool) -> Result<()> {
        if self.steps % HOOK_STEPS != 0 {
            return Ok(());
        }
        self.check_deadline()?;
        if hook() {
            Ok(())
        } else {
            Err(CoreError::Interrupted { time: self.time })
        }
    }

    fn advance_fixed(
        &mut self,
        target: f64,
        span: f64,
        hook: &mut dyn FnMut() -> bool,
    ) -> Result<()> {
        let count = steps_across(span, self.dt);
        let h = span / count as f64;
        self.check_resolution(h, target)?;
        let start = self.time;
        for i in 0..count {
            let t = start + i as f64 * h;
            let Driver::Fixed(stepper) = &mut self.driver else {
                break;
            };
            let probe = stepper.step(&mut self.spectrum, h)?;
            self.time = t;
            self.check(probe, t)?;
            self.steps += 1;
            self.time = start + (i + 1) as f64 * h;
            self.pause(hook)?;
        }
        self.time = target;
        Ok(())
    }

    fn advance_adaptive(
        &mut self,
        target: f64,
        slack: f64,
        hook: &mut dyn FnMut() -> bool,
    ) -> Result<()> {
        self.check_resolution(self.h_next.min(target - self.time), target)?;
        while target - self.time > slack {
            let remaining = target - self.time;
            let landing = self.h_next >= remaining;
            let h = if landing { remaining } else { self.h_next };
            let Driver::Adaptive(scheme) = &mut self.driver else {
                break;
            };
            let attempt = scheme.attempt(&mut self.spectrum, h, self.tol)?;
            if attempt.accepted {
                let before = self.time;
                self.time = if landing { target } else { self.time + h };
                self.steps += 1;
                self.check(attempt.probe, self.time)?;
                if self.time == before {
                    // A step that does not move the time: the time resolution is too coarse.
                    return Err(CoreError::TimeResolution {
                        time: before,
                        step: h,
                        spacing: spacing(before),
                        max_ratio: MAX_TIME_SPACING,
                    });
                }
                // A step shortened to land on the target says nothing about the next one.
                if !landing || attempt.h_next < self.h_next {
                    self.h_next = attempt.h_next;
                }
                self.pause(hook)?;
            } else {
                self.rejected += 1;
                self.h_next = attempt.h_next;
                if self.h_next < 1e-14 * self.time.abs().max(1.0) {
                    return Err(CoreError::StepSizeUnderflow {
                        time: self.time,
                        h: self.h_next,
                    });
                }
            }
        }
        self.time = target;
        Ok(())
    }

    /// Advances through the increasing `times` (all at least the current time) and writes the
    /// profile at each into consecutive rows of `out` (`times.len() * n` values).
    ///
    /// # Errors
    /// [`CoreError::ShapeMismatch`] for a wrongly sized `out`, [`CoreError::InvalidParameter`] for
    /// decreasing or non-finite times, and the errors of [`Simulation::advance_to`].
    pub fn record(
        &mut self,
        times: &[f64],
        out: &mut [f64],
        hook: &mut dyn FnMut() -> bool,
    ) -> Result<()> {
        let n = self.grid.n();
        if out.len() != times.len() * n {
            return Err(CoreError::ShapeMismatch {
                name: "out",
                expected: times.len() * n,
                got: out.len(),
            });
        }
        if let Some(i) = times.iter().position(|t| !t.is_finite()) {
            return Err(CoreError::invalid(
                "times",
                format!("{} at index {i}", times[i]),
                "finite times",
            ));
        }
        if let Some(i) = times.windows(2).position(|w| w[1] < w[0]) {
            return Err(CoreError::invalid(
                "times",
                format!("{} after {} at index {}", times[i + 1], times[i], i + 1),
                "non-decreasing times",
            ));
        }
        for (&t, row) in times.iter().zip(out.chunks_exact_mut(n)) {
            self.advance_to(t, hook)?;
            self.state_into(row)?;
            self.check(probe(row, 1.0), self.time)?;
        }
        Ok(())
    }
}

/// Round-off between equal times computed differently, for a move from `time` to `target` with
/// steps of `dt`: a target `behind` this far is taken as the current time, and one `ahead` this
/// far as reached (a millionth of a step at most, so a large time never swallows whole steps).
fn time_slack(time: f64, target: f64, dt: f64) -> (f64, f64) {
    let behind = 1e-12 * time.abs().max(target.abs()).max(1.0);
    (behind, behind.min(1e-6 * dt))
}

/// The fewest equal steps of at most `dt` that cross `span`; a span that is a whole number of
/// steps up to round-off takes exactly that many.
fn steps_across(span: f64, dt: f64) -> u64 {
    let ratio = span / dt;
    if (ratio - ratio.round()).abs() <= 1e-9 * ratio.max(1.0) {
        ratio.round()
    } else {
        ratio.ceil()
    }
    .max(1.0) as u64
}

/// The steps a fixed-step [`Simulation`] with step `dt` takes from time `start` to record each of
/// `times` in turn (the rule of [`Simulation::advance_to`]); times not after the current one take
/// none. For planning a run without running it.
///
/// # Errors
/// [`CoreError::InvalidParameter`] unless `dt` is positive and `start` and `times` are finite
/// and non-decreasing.
pub fn fixed_step_count(start: f64, times: &[f64], dt: f64) -> Result<u64> {
    if !(dt.is_finite() && dt > 0.0) {
        return Err(CoreError::invalid("dt", dt, "a finite number > 0"));
    }
    let mut now = start;
    for &t in times {
        if !(t.is_finite() && now.is_finite() && t >= now) {
            return Err(CoreError::invalid(
                "times",
                t,
                format!("finite times, non-decreasing from {now}"),
            ));
        }
        now = t;
    }
    let mut now = start;
    let mut total = 0;
    for &target in times {
        let (_, ahead) = time_slack(now, target, dt);
        if target - now > ahead {
            total += steps_across(target - now, dt);
        }
        now = now.max(target);
    }
    Ok(total)
}
