//! Run-time CPU dispatch for the arithmetic loops of a step (the stage formulas of the schemes,
//! the pre- and post-processing of the real transforms, the flux).
//!
//! The crate is built for the baseline of its target (portable wheels), where `x86_64` vectors
//! hold two doubles. A loop written with `kernel!` is compiled twice from the same Rust code: once
//! for that baseline and once with AVX2 enabled (four doubles a vector), and the AVX2 copy is
//! chosen at run time on a CPU that has it. Rust never contracts `a * b + c` into a fused
//! multiply-add unless asked (`mul_add`), and the kernels do not ask, so both copies perform the
//! same roundings: results are identical bit for bit on every CPU.
//!
//! This module holds the crate's only `unsafe` code: the call of a `#[target_feature]` function,
//! which is sound once the feature has been detected, and the AVX2 pair passes of the real
//! transforms, written with intrinsics.
#![allow(unsafe_code)]

use std::sync::atomic::{AtomicBool, Ordering};

use num_complex::Complex64;

static BASELINE_ONLY: AtomicBool = AtomicBool::new(false);

/// Makes every kernel run its baseline copy even on a CPU with AVX2 (`true`), or choose by the
/// CPU again (`false`). For tests and measurements: the results are the same either way.
pub fn force_baseline(on: bool) {
    BASELINE_ONLY.store(on, Ordering::Relaxed);
}

/// Whether kernels run their AVX2 copies now (the CPU has AVX2 and the baseline is not forced).
#[inline]
pub fn avx2() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        !BASELINE_ONLY.load(Ordering::Relaxed) && std::arch::is_x86_feature_detected!("avx2")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// Defines a function whose body is compiled for the baseline and for AVX2, the copy chosen at
/// run time by [`avx2`]. The body is ordinary safe Rust: contiguous loops over slices of one
/// length, which the compiler vectorises at either width.
macro_rules! kernel {
    (
        $(#[$meta:meta])*
        $vis:vis fn $name:ident($($arg:ident: $ty:ty),* $(,)?) $(-> $ret:ty)? $body:block
    ) => {
        $(#[$meta])*
        #[allow(unsafe_code)]
        $vis fn $name($($arg: $ty),*) $(-> $ret)? {
            #[inline(always)]
            fn body($($arg: $ty),*) $(-> $ret)? $body
            #[cfg(target_arch = "x86_64")]
            {
                #[target_feature(enable = "avx2")]
                unsafe fn wide($($arg: $ty),*) $(-> $ret)? {
                    body($($arg),*)
                }
                if $crate::simd::avx2() {
                    // SAFETY: `wide` is compiled for AVX2, and the CPU has AVX2 (detected above).
                    return unsafe { wide($($arg),*) };
                }
            }
            body($($arg),*)
        }
    };
}

pub(crate) use kernel;

/// The output of a pair pass: the pair as it is, or its derivative `x -> -i k x` (the
/// wavenumbers of the low and the high member, the high ones in ascending order).
#[derive(Clone, Copy)]
pub(crate) enum PairMap<'a> {
    Plain,
    Derivative(&'a [f64], &'a [f64]),
}

/// One pair of a real transform's pass (see `spectral`): from `a` (mode `k`) and `b` (mode
/// `m - k`) with the twiddle `t`, `s = h (a + conj b)`, `o = t (a - conj b)`, returns
/// `(s + o, conj(s - o))`. `h` is 1/2 for the forward pass and 1 for the inverse one.
#[inline(always)]
pub(crate) fn pair(a: Complex64, b: Complex64, t: Complex64, h: f64) -> (Complex64, Complex64) {
    let (b_re, b_im) = (b.re, -b.im);
    let sum = Complex64::new(h * (a.re + b_re), h * (a.im + b_im));
    let diff = Complex64::new(a.re - b_re, a.im - b_im);
    let odd = Complex64::new(
        t.re * diff.re - t.im * diff.im,
        t.re * diff.im + t.im * diff.re,
    );
    (
        Complex64::new(sum.re + odd.re, sum.im + odd.im),
        Complex64::new(sum.re - odd.re, -(sum.im - odd.im)),
    )
}

/// `-i k x`.
#[inline(always)]
fn derivative(x: Complex64, k: f64) -> Complex64 {
    Complex64::new(k * x.im, -(k * x.re))
}

/// The pairs of a pass: `(y_lo[i], y_hi[r]) = pair(x_lo[i], x_hi[r], tw[i], h)` with
/// `r = len - 1 - i` (the high members run backwards), then mapped by `map`. All slices have one
/// length (the wavenumbers of `map` too).
pub(crate) fn pair_pass(
    x_lo: &[Complex64],
    x_hi: &[Complex64],
    y_lo: &mut [Complex64],
    y_hi: &mut [Complex64],
    tw: &[Complex64],
    h: f64,
    map: PairMap<'_>,
) {
    let count = x_lo.len();
    let lengths = [x_hi.len(), y_lo.len(), y_hi.len(), tw.len()];
    let maps_fit = match map {
        PairMap::Plain => true,
        PairMap::Derivative(lo, hi) => lo.len() == count && hi.len() == count,
    };
    if lengths.iter().any(|&l| l != count) || !maps_fit {
        // Callers slice from one count; never reached, and nothing is written if it were.
        return;
    }
    let mut done = 0;
    #[cfg(target_arch = "x86_64")]
    if avx2() {
        // SAFETY: the CPU has AVX2 (checked by `avx2`), and every slice has `count` elements.
        done = unsafe { x86::pair_pass(x_lo, x_hi, y_lo, y_hi, tw, h, map) };
    }
    for i in done..count {
        let r = count - 1 - i;
        let (lo, hi) = pair(x_lo[i], x_hi[r], tw[i], h);
        (y_lo[i], y_hi[r]) = match map {
            PairMap::Plain => (lo, hi),
            PairMap::Derivative(klo, khi) => (derivative(lo, klo[i]), derivative(hi, khi[r])),
        };
    }
}

#[cfg(target_arch = "x86_64")]
mod x86 {
    //! Hand-written AVX2 for the pair passes, whose backward-running half the compiler does not
    //! vectorise. The same operations in the same order as `pair` and `derivative` (no fused
    //! multiply-add), so the results equal the scalar ones bit for bit.

    use std::arch::x86_64::*;

    use num_complex::Complex64;

    use super::PairMap;

    /// Two complex values at `p`.
    #[inline(always)]
    unsafe fn load(p: *const Complex64) -> __m256d {
        unsafe { _mm256_loadu_pd(p.cast::<f64>()) }
    }

    #[inline(always)]
    unsafe fn store(p: *mut Complex64, v: __m256d) {
        unsafe { _mm256_storeu_pd(p.cast::<f64>(), v) }
    }

    /// Swaps the two complex values of a vector.
    #[inline(always)]
    unsafe fn swap_halves(v: __m256d) -> __m256d {
        _mm256_permute2f128_pd::<0x01>(v, v)
    }

    /// `-i k x` for two values, `k = [k0, k1]` at `p`.
    #[inline(always)]
    unsafe fn derivative(x: __m256d, p: *const f64, neg_im: __m256d) -> __m256d {
        let k = unsafe { _mm256_castpd128_pd256(_mm_loadu_pd(p)) };
        let k = _mm256_permute4x64_pd::<0b01_01_00_00>(k);
        let swapped = _mm256_permute_pd::<0b0101>(x);
        _mm256_xor_pd(_mm256_mul_pd(k, swapped), neg_im)
    }

    /// The pairs `0..done` of `super::pair_pass`, two at a time; returns `done` (even).
    ///
    /// # Safety
    /// The CPU has AVX2, and every slice (and the wavenumbers of `map`) has `x_lo.len()` elements.
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn pair_pass(
        x_lo: &[Complex64],
        x_hi: &[Complex64],
        y_lo: &mut [Complex64],
        y_hi: &mut [Complex64],
        tw: &[Complex64],
        h: f64,
        map: PairMap<'_>,
    ) -> usize {
        let count = x_lo.len();
        let half = _mm256_set1_pd(h);
        let neg_im = _mm256_setr_pd(0.0, -0.0, 0.0, -0.0);
        let mut i = 0;
        while i + 2 <= count {
            // The high members r = count - 1 - i and r - 1, stored at r - 1 and r.
            let r1 = count - 2 - i;
            // SAFETY (every access): i + 1 < count and r1 + 1 < count.
            unsafe {
                let a = load(x_lo.as_ptr().add(i));
                let b = _mm256_xor_pd(swap_halves(load(x_hi.as_ptr().add(r1))), neg_im);
                let sum = _mm256_mul_pd(half, _mm256_add_pd(a, b));
                let diff = _mm256_sub_pd(a, b);
                let t = load(tw.as_ptr().add(i));
                let t_re = _mm256_movedup_pd(t);
                let t_im = _mm256_permute_pd::<0b1111>(t);
                let odd = _mm256_addsub_pd(
                    _mm256_mul_pd(t_re, diff),
                    _mm256_mul_pd(t_im, _mm256_permute_pd::<0b0101>(diff)),
                );
                let lo = _mm256_add_pd(sum, odd);
                let hi = swap_halves(_mm256_xor_pd(_mm256_sub_pd(sum, odd), neg_im));
                match map {
                    PairMap::Plain => {
                        store(y_lo.as_mut_ptr().add(i), lo);
                        store(y_hi.as_mut_ptr().add(r1), hi);
                    }
                    PairMap::Derivative(klo, khi) => {
                        store(
                            y_lo.as_mut_ptr().add(i),
                            derivative(lo, klo.as_ptr().add(i), neg_im),
                        );
                        store(
                            y_hi.as_mut_ptr().add(r1),
                            derivative(hi, khi.as_ptr().add(r1), neg_im),
                        );
                    }
                }
            }
            i += 2;
        }
        i
    }
}
