//! Bessel functions of the first kind of integer order, their derivatives and
//! their zeros: the radial half of every closed-form cylinder resonance that
//! the FDTD results are checked against (see [`super::cavity`]).
//!
//! # Method
//!
//! `J_n(x)` comes from Bessel's integral (DLMF 10.9.2, Abramowitz & Stegun
//! 9.1.21)
//!
//! ```text
//! J_n(x) = (1/π) ∫_0^π cos(nτ − x sin τ) dτ ,
//! ```
//!
//! evaluated by the trapezoid rule with `M` intervals on `[0, π]`. The
//! integrand `cos(nτ − x sin τ)` is even about τ = 0 and τ = π, so this rule
//! equals the `2M`-point rectangle rule over the full period `[0, 2π)` of
//! `exp(i(x sin τ − nτ))`. Inserting the Jacobi–Anger expansion
//! `exp(i x sin τ) = Σ_k J_k(x) exp(ikτ)` (DLMF 10.12.1) shows that the rule
//! returns *exactly* the aliased sum
//!
//! ```text
//! T_M = Σ_{l ∈ ℤ} J_{n + 2Ml}(x) ,
//! ```
//!
//! so its error is `Σ_{l ≠ 0} J_{n+2Ml}(x)`. Every alias order has
//! `|n + 2Ml| ≥ ν_min = 2M − n` and each order occurs at most twice. With the
//! bound `|J_ν(x)| ≤ (x/2)^ν / ν!` for real `x` and `ν ≥ 0` (DLMF 10.14.4),
//! and `ν_min ≥ x` so that consecutive bounds shrink at least by half, the
//! aliasing error is at most `4 (x/2)^{ν_min} / ν_min!`. [`bessel_j`] picks the
//! smallest `M` that makes this bound smaller than 2⁻⁵⁶ ≈ 1.4·10⁻¹⁷, which
//! costs roughly `M ≈ (n + 1.4 x + 40)/2` nodes (about 160 at `x = 200`).
//!
//! What remains is rounding. The order part of the phase, `nτ_k = π n k / M`,
//! is reduced exactly in integer arithmetic (`n k mod 2M`), and `sin τ_k` is
//! taken at the reflected node `min(k, M − k)`, so the dominant error is the
//! unavoidable rounding of `x sin τ_k`: at most about `x·2⁻⁵³` per node, i.e.
//! `2·10⁻¹⁴` at `x = 200`, and in practice averaged well below that over the
//! nodes: against 30-digit mpmath values on a grid `0.12 ≤ x ≤ 200.12`,
//! `n ∈ {0, 1, 2, 5, 13, 40, 100, 199}`, the largest error seen during
//! development was 2.1·10⁻¹⁵ (the tests demand 10⁻¹⁴). The nodes are summed
//! with Neumaier's compensated summation, so the addition itself adds
//! nothing noticeable. The result is
//! accurate in the *absolute* sense; far below the turning point (`n ≫ x`)
//! `J_n(x)` is tiny and its relative accuracy is lost, which is harmless for
//! resonance work.
//!
//! # Zeros
//!
//! Zeros are bracketed by sign changes on a uniform scan of step
//! [`SCAN_STEP`] = 0.25, then refined by Newton's method kept inside the
//! bracket (bisection whenever a Newton step would leave it). The scan starts
//! at `x = n`: on `(0, n)` the coefficient `1 − n²/x²` of Bessel's equation
//! `y'' + y'/x + (1 − n²/x²) y = 0` is negative, so a positive solution can
//! have no maximum there, hence `J_n` and `J'_n` (`n ≥ 1`) have no zero in
//! `(0, n]`. Consecutive zeros of `J_n` and of `J'_n` are never closer than
//! about 3.1: for `J_n`, Sturm comparison of `u = √x J_n`, which solves
//! `u'' + (1 − (n² − ¼)/x²) u = 0`, with `u'' + u = 0` puts the gaps above π
//! for `n ≥ 1`; for `n = 0` they lie below π but grow towards it (from
//! memory), the first, `j_{0,2} − j_{0,1} ≈ 3.115`, being the smallest; for `J'_n`
//! the smallest gap among the first four zeros of orders `n = 0, 3, …, 57`,
//! computed with mpmath during development, was 3.158. So a scan
//! step of 0.25 cannot step over a pair of zeros.

use std::f64::consts::PI;

/// Step of the sign-change scan used to bracket zeros, in units of the
/// argument `x`. It is about a twelfth of the smallest spacing between
/// consecutive zeros of `J_n` or `J'_n` (≈ 3.115, between `j_{0,1}` and
/// `j_{0,2}`), so no zero can be missed.
pub const SCAN_STEP: f64 = 0.25;

/// Bound on the aliasing error of the trapezoid rule, 2⁻⁵⁶.
const ALIAS_TOLERANCE: f64 = 1.0 / 72_057_594_037_927_936.0;

/// Bessel function of the first kind `J_n(x)` of integer order `n ≥ 0`.
///
/// Computed from Bessel's integral `J_n(x) = (1/π) ∫_0^π cos(nτ − x sin τ) dτ`
/// (DLMF 10.9.2) by the trapezoid rule, with the node count chosen so that
/// the aliasing error `Σ_{l≠0} J_{n+2Ml}(x)` is below 1.4·10⁻¹⁷ (see the
/// [module documentation](self)). Absolute accuracy is about 10⁻¹⁴ or better
/// for `0 ≤ x ≤ 200`; the cost grows linearly in `n + x`, so larger arguments
/// work too, with an absolute error growing roughly like `x·10⁻¹⁶`.
///
/// Negative `x` is accepted through `J_n(−x) = (−1)^n J_n(x)`. A non-finite
/// `x` gives `NaN`.
pub fn bessel_j(n: u32, x: f64) -> f64 {
    if !x.is_finite() {
        return f64::NAN;
    }
    if x < 0.0 {
        let value = bessel_j(n, -x);
        return if n % 2 == 0 { value } else { -value };
    }
    if x == 0.0 {
        return if n == 0 { 1.0 } else { 0.0 };
    }

    let m = trapezoid_intervals(n, x);
    let two_m = 2 * m;
    let step = PI / m as f64;
    let n = u64::from(n);

    let mut sum = 0.0_f64;
    let mut compensation = 0.0_f64;
    for k in 0..=m {
        // nτ_k = π·(n k mod 2M)/M, reduced exactly.
        let order_phase = ((n * k) % two_m) as f64 * step;
        // sin τ_k = sin τ_{M−k}; use the node on [0, π/2].
        let sin_tau = (k.min(m - k) as f64 * step).sin();
        let mut term = (order_phase - x * sin_tau).cos();
        if k == 0 || k == m {
            term *= 0.5;
        }
        // Neumaier's compensated summation.
        let t = sum + term;
        if sum.abs() >= term.abs() {
            compensation += (sum - t) + term;
        } else {
            compensation += (term - t) + sum;
        }
        sum = t;
    }
    (sum + compensation) / m as f64
}

/// Number of trapezoid intervals `M` on `[0, π]` for `J_n(x)`, `x > 0`.
///
/// Smallest `M` with `ν_min = 2M − n ≥ max(x, 1)` and
/// `4 (x/2)^{ν_min} / ν_min! ≤ 2⁻⁵⁶`, which bounds the aliasing error.
fn trapezoid_intervals(n: u32, x: f64) -> u64 {
    let ln_half_x = (0.5 * x).ln();
    let ln_limit = (ALIAS_TOLERANCE / 4.0).ln();
    // ln b(ν) with b(ν) = (x/2)^ν / ν!, starting at ν = 1.
    let mut nu: u64 = 1;
    let mut ln_bound = ln_half_x;
    while (nu as f64) < x || ln_bound > ln_limit {
        nu += 1;
        ln_bound += ln_half_x - (nu as f64).ln();
    }
    // 2M − n ≥ ν.
    (u64::from(n) + nu).div_ceil(2).max(1)
}

/// Derivative `J'_n(x) = dJ_n/dx` of the Bessel function of integer order.
///
/// Uses the recurrence `J'_n(x) = (J_{n−1}(x) − J_{n+1}(x)) / 2` for `n ≥ 1`
/// and `J'_0(x) = −J_1(x)` (DLMF 10.6.2, 10.6.3). Accuracy is that of
/// [`bessel_j`].
pub fn bessel_j_prime(n: u32, x: f64) -> f64 {
    if n == 0 {
        -bessel_j(1, x)
    } else {
        0.5 * (bessel_j(n - 1, x) - bessel_j(n + 1, x))
    }
}

/// The first `count` positive zeros `j_{n,1} < j_{n,2} < …` of `J_n(x)`.
///
/// `x = 0` (a zero of `J_n` for `n ≥ 1`) is not included, so `j_{0,1} ≈
/// 2.4048` and `j_{1,1} ≈ 3.8317`. Each zero is bracketed by a sign change on
/// a scan of step [`SCAN_STEP`] starting at `x = n` and refined by safeguarded
/// Newton iteration `x ← x − J_n(x)/J'_n(x)` to about 10⁻¹⁵ relative.
pub fn bessel_j_zeros(n: u32, count: usize) -> Vec<f64> {
    find_zeros(Target::Value, n, Limit::Count(count))
}

/// The first `count` positive zeros `j'_{n,1} < j'_{n,2} < …` of `J'_n(x)`.
///
/// `x = 0` is never counted, so for `n = 0` the list starts at
/// `j'_{0,1} = j_{1,1} ≈ 3.8317` (since `J'_0 = −J_1`); note that DLMF §10.21
/// instead calls `x = 0` the first zero of `J'_0`. For `n = 1`, `j'_{1,1} ≈
/// 1.8412`. Zeros are bracketed on a scan of step [`SCAN_STEP`] and refined
/// by safeguarded Newton iteration `x ← x − J'_n(x)/J''_n(x)` with
/// `J''_n = −J'_n/x − (1 − n²/x²) J_n` from Bessel's equation.
pub fn bessel_j_prime_zeros(n: u32, count: usize) -> Vec<f64> {
    find_zeros(Target::Derivative, n, Limit::Count(count))
}

/// All zeros `j_{n,k}` of `J_n(x)` with `0 < j_{n,k} ≤ x_max`, ascending.
///
/// Same zeros and accuracy as [`bessel_j_zeros`], selected by value rather
/// than by count.
pub fn bessel_j_zeros_below(n: u32, x_max: f64) -> Vec<f64> {
    find_zeros(Target::Value, n, Limit::Below(x_max))
}

/// All zeros `j'_{n,k}` of `J'_n(x)` with `0 < j'_{n,k} ≤ x_max`, ascending.
///
/// Same zeros and accuracy as [`bessel_j_prime_zeros`] (`x = 0` excluded),
/// selected by value rather than by count.
pub fn bessel_j_prime_zeros_below(n: u32, x_max: f64) -> Vec<f64> {
    find_zeros(Target::Derivative, n, Limit::Below(x_max))
}

/// Which function's zeros are sought.
#[derive(Clone, Copy)]
enum Target {
    /// Zeros of `J_n`.
    Value,
    /// Zeros of `J'_n`.
    Derivative,
}

/// When to stop collecting zeros.
#[derive(Clone, Copy)]
enum Limit {
    /// After this many zeros.
    Count(usize),
    /// Once the scan passes this argument; zeros above it are dropped.
    Below(f64),
}

impl Target {
    /// The function whose zeros are sought, at `x > 0`.
    fn value(self, n: u32, x: f64) -> f64 {
        match self {
            Target::Value => bessel_j(n, x),
            Target::Derivative => bessel_j_prime(n, x),
        }
    }

    /// The function and its derivative at `x > 0`, for Newton's method.
    fn value_and_slope(self, n: u32, x: f64) -> (f64, f64) {
        let j = bessel_j(n, x);
        let jp = bessel_j_prime(n, x);
        match self {
            Target::Value => (j, jp),
            Target::Derivative => {
                let nf = f64::from(n);
                // Bessel's equation: x² y'' + x y' + (x² − n²) y = 0.
                let jpp = -jp / x - (1.0 - nf * nf / (x * x)) * j;
                (jp, jpp)
            }
        }
    }

    /// Where the scan starts: a point left of the first positive zero at
    /// which the function is nonzero.
    fn scan_start(self, n: u32) -> f64 {
        match self {
            // J_n > 0 on (0, n] for n ≥ 1, and J_0(0) = 1.
            Target::Value => f64::from(n),
            // J'_n > 0 on (0, n] for n ≥ 1; J'_0 = −J_1 < 0 on (0, j_{1,1}).
            Target::Derivative => f64::from(n.max(1)),
        }
    }
}

/// Scan for sign changes and refine each bracketed zero.
fn find_zeros(target: Target, n: u32, limit: Limit) -> Vec<f64> {
    let mut zeros = Vec::new();
    let done = |zeros: &Vec<f64>, lo: f64| match limit {
        Limit::Count(count) => zeros.len() >= count,
        Limit::Below(x_max) => lo >= x_max || x_max.is_nan(),
    };

    let start = target.scan_start(n);
    let mut lo = start;
    let mut f_lo = target.value(n, lo);
    let mut step_index: u64 = 0;
    while !done(&zeros, lo) {
        step_index += 1;
        // Grid points computed from the index, so rounding does not drift.
        let hi = start + step_index as f64 * SCAN_STEP;
        let f_hi = target.value(n, hi);
        if f_hi == 0.0 {
            zeros.push(hi);
        } else if (f_lo < 0.0 && f_hi > 0.0) || (f_lo > 0.0 && f_hi < 0.0) {
            zeros.push(refine(target, n, lo, f_lo, hi));
        }
        lo = hi;
        f_lo = f_hi;
    }

    match limit {
        Limit::Count(count) => zeros.truncate(count),
        Limit::Below(x_max) => zeros.retain(|&z| z <= x_max),
    }
    zeros
}

/// Refine a zero bracketed by `[lo, hi]` (`f(lo)` has sign of `f_lo`, `f(hi)`
/// the opposite) with Newton steps, falling back to bisection whenever a
/// step would leave the current bracket.
fn refine(target: Target, n: u32, mut lo: f64, f_lo: f64, mut hi: f64) -> f64 {
    let lo_negative = f_lo < 0.0;
    let mut x = 0.5 * (lo + hi);
    for _ in 0..200 {
        let (f, slope) = target.value_and_slope(n, x);
        if f == 0.0 {
            return x;
        }
        if (f < 0.0) == lo_negative {
            lo = x;
        } else {
            hi = x;
        }
        let newton = x - f / slope;
        let next = if newton > lo && newton < hi {
            newton
        } else {
            0.5 * (lo + hi)
        };
        if (next - x).abs() <= 2.0 * f64::EPSILON * x || hi - lo <= 4.0 * f64::EPSILON * hi {
            return next;
        }
        x = next;
    }
    x
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reference values of `J_n(x)`, 16 significant digits, computed with
    /// mpmath 1.3.0 (`besselj` at 30 digits) during development. `J_0(1)`,
    /// `J_1(1)`, `J_0(10)` and `J_1(10)` also agree with A&S Table 9.1 (from
    /// memory).
    const J_REFERENCE: [(u32, f64, f64); 8] = [
        (0, 1.0, 0.765_197_686_557_966_6),
        (1, 1.0, 0.440_050_585_744_933_5),
        (0, 10.0, -0.245_935_764_451_348_3),
        (1, 10.0, 0.043_472_746_168_861_44),
        (30, 25.0, 0.011_809_026_124_269_02),
        (0, 200.0, -0.015_437_439_930_565_09),
        (5, 200.0, -0.055_132_678_944_014_68),
        (100, 200.0, 0.009_333_214_186_557_586),
    ];

    #[test]
    fn matches_reference_values() {
        for &(n, x, expected) in &J_REFERENCE {
            let got = bessel_j(n, x);
            assert!(
                (got - expected).abs() < 1e-14,
                "J_{n}({x}) = {got:e}, expected {expected:e}"
            );
        }
    }

    /// Power series `J_n(x) = Σ_k (−1)^k (x/2)^{2k+n} / (k! (k+n)!)`
    /// (DLMF 10.2.2): an independent route, accurate for small `x`.
    fn series(n: u32, x: f64) -> f64 {
        let half = 0.5 * x;
        let mut term = 1.0;
        for i in 1..=n {
            term *= half / f64::from(i);
        }
        let mut sum = term;
        for k in 1..60 {
            let k = f64::from(k);
            term *= -half * half / (k * (k + f64::from(n)));
            sum += term;
        }
        sum
    }

    #[test]
    fn agrees_with_power_series_for_small_x() {
        for n in 0..=12 {
            for i in 1..=40 {
                let x = 0.1 * f64::from(i);
                let diff = (bessel_j(n, x) - series(n, x)).abs();
                assert!(diff < 2e-15, "n = {n}, x = {x}: diff {diff:e}");
            }
        }
    }

    /// Hankel's asymptotic expansion (DLMF 10.17.3):
    /// `J_n(x) ≈ √(2/(πx)) (P cos χ − Q sin χ)`, `χ = x − (n/2 + 1/4)π`,
    /// `P = Σ_k (−1)^k a_{2k}/x^{2k}`, `Q = Σ_k (−1)^k a_{2k+1}/x^{2k+1}`,
    /// `a_k = Π_{j=1..k} (4n² − (2j−1)²) / (k! 8^k)`.
    fn hankel(n: u32, x: f64) -> f64 {
        let mu = 4.0 * f64::from(n) * f64::from(n);
        let (mut p, mut q) = (0.0, 0.0);
        let mut a = 1.0; // a_k / x^k
        for k in 0..16 {
            match k % 4 {
                0 => p += a,
                1 => q += a,
                2 => p -= a,
                _ => q -= a,
            }
            let j = f64::from(k + 1);
            a *= (mu - (2.0 * j - 1.0).powi(2)) / (j * 8.0 * x);
        }
        let chi = x - (0.5 * f64::from(n) + 0.25) * PI;
        (2.0 / (PI * x)).sqrt() * (p * chi.cos() - q * chi.sin())
    }

    #[test]
    fn agrees_with_hankel_expansion_for_large_x() {
        for n in [0, 1, 2, 7] {
            for i in 0..=20 {
                let x = 150.0 + 2.5 * f64::from(i);
                let diff = (bessel_j(n, x) - hankel(n, x)).abs();
                assert!(diff < 1e-14, "n = {n}, x = {x}: diff {diff:e}");
            }
        }
    }

    #[test]
    fn satisfies_three_term_recurrence() {
        // J_{n−1}(x) + J_{n+1}(x) = (2n/x) J_n(x)  (DLMF 10.6.1).
        for n in 1..=40 {
            for i in 1..=200 {
                let x = 0.997 * f64::from(i);
                let lhs = bessel_j(n - 1, x) + bessel_j(n + 1, x);
                let rhs = 2.0 * f64::from(n) / x * bessel_j(n, x);
                let tol = 2e-14 * (1.0 + 2.0 * f64::from(n) / x);
                assert!((lhs - rhs).abs() < tol, "n = {n}, x = {x}");
            }
        }
    }

    #[test]
    fn satisfies_neumann_sum_rules() {
        // J_0² + 2 Σ_{k≥1} J_k² = 1 and J_0 + 2 Σ_{k≥1} J_{2k} = 1
        // (DLMF 10.23.3 and 10.12.4 at their simplest).
        for i in 0..=40 {
            let x = 5.0 * f64::from(i) + 0.3;
            let top = (x as u32) + 60;
            let mut squares = bessel_j(0, x).powi(2);
            let mut evens = bessel_j(0, x);
            for k in 1..=top {
                let j = bessel_j(k, x);
                squares += 2.0 * j * j;
                if k % 2 == 0 {
                    evens += 2.0 * j;
                }
            }
            assert!((squares - 1.0).abs() < 1e-13, "x = {x}: {squares}");
            assert!((evens - 1.0).abs() < 1e-13, "x = {x}: {evens}");
        }
    }

    #[test]
    fn derivative_matches_finite_difference() {
        for n in 0..=5 {
            for &x in &[0.5, 3.0, 17.0, 120.0] {
                let h = 1e-4;
                let fd = (bessel_j(n, x + h) - bessel_j(n, x - h)) / (2.0 * h);
                assert!((bessel_j_prime(n, x) - fd).abs() < 1e-8);
            }
        }
    }

    #[test]
    fn special_arguments() {
        assert_eq!(bessel_j(0, 0.0), 1.0);
        assert_eq!(bessel_j(3, 0.0), 0.0);
        assert_eq!(bessel_j_prime(1, 0.0), 0.5);
        assert!(bessel_j(0, f64::NAN).is_nan());
        assert!(bessel_j(0, f64::INFINITY).is_nan());
        assert_eq!(bessel_j(3, -2.5), -bessel_j(3, 2.5));
        assert_eq!(bessel_j(4, -2.5), bessel_j(4, 2.5));
    }

    /// Zeros of `J_n`, A&S Table 9.5 / DLMF §10.21 (values from memory,
    /// every digit confirmed with mpmath 1.3.0 `besseljzero` during
    /// development): `(n, k, j_{n,k})`.
    const J_ZEROS: [(u32, usize, f64); 9] = [
        (0, 1, 2.404_825_557_695_773),
        (0, 2, 5.520_078_110_286_311),
        (0, 3, 8.653_727_912_911_012),
        (1, 1, 3.831_705_970_207_512),
        (1, 2, 7.015_586_669_815_619),
        (2, 1, 5.135_622_301_840_683),
        (2, 2, 8.417_244_140_399_865),
        // Beyond what I recall of the table; mpmath only.
        (5, 3, 15.700_174_079_711_67),
        (10, 40, 140.230_465_268_832_4),
    ];

    /// Zeros of `J'_n` (x = 0 excluded), A&S Table 9.5 / DLMF §10.21 (from
    /// memory, confirmed with mpmath 1.3.0 during development).
    const J_PRIME_ZEROS: [(u32, usize, f64); 7] = [
        (0, 1, 3.831_705_970_207_512),
        (1, 1, 1.841_183_781_340_659),
        (1, 2, 5.331_442_773_525_033),
        (2, 1, 3.054_236_928_227_14), // table: …227 140
        (2, 2, 6.706_133_194_158_459),
        (3, 1, 4.201_188_941_210_528),
        (4, 1, 5.317_553_126_083_994),
    ];

    #[test]
    fn zeros_match_tables() {
        for &(n, k, expected) in &J_ZEROS {
            let got = bessel_j_zeros(n, k)[k - 1];
            assert!(
                (got - expected).abs() < 2e-15 * expected,
                "j_({n},{k}) = {got}, expected {expected}"
            );
        }
        for &(n, k, expected) in &J_PRIME_ZEROS {
            let got = bessel_j_prime_zeros(n, k)[k - 1];
            assert!(
                (got - expected).abs() < 2e-15 * expected,
                "j'_({n},{k}) = {got}, expected {expected}"
            );
        }
    }

    #[test]
    fn zeros_are_zeros() {
        for n in [0, 1, 4, 11] {
            for z in bessel_j_zeros(n, 30) {
                assert!(bessel_j(n, z).abs() < 5e-15, "J_{n}({z})");
            }
            for z in bessel_j_prime_zeros(n, 30) {
                assert!(bessel_j_prime(n, z).abs() < 5e-15, "J'_{n}({z})");
            }
        }
    }

    #[test]
    fn zeros_interlace() {
        // 0 < j'_{n,1} < j_{n,1} < j'_{n,2} < j_{n,2} < … for n ≥ 1, and
        // j_{n,k} < j_{n+1,k} < j_{n,k+1} (DLMF 10.21.2, 10.21.3): a missed
        // or doubled zero would break the chain.
        for n in 0..8 {
            let j = bessel_j_zeros(n, 25);
            let jp = bessel_j_prime_zeros(n, 25);
            let j_next = bessel_j_zeros(n + 1, 25);
            for k in 0..24 {
                assert!(j[k] < j_next[k] && j_next[k] < j[k + 1], "n = {n}, k = {k}");
                if n >= 1 {
                    assert!(jp[k] < j[k] && j[k] < jp[k + 1], "n = {n}, k = {k}");
                }
            }
        }
    }

    #[test]
    fn derivative_zeros_of_order_zero_are_zeros_of_order_one() {
        // J'_0 = −J_1, so j'_{0,k} = j_{1,k}.
        let a = bessel_j_prime_zeros(0, 20);
        let b = bessel_j_zeros(1, 20);
        for (x, y) in a.iter().zip(&b) {
            assert!((x - y).abs() < 4.0 * f64::EPSILON * y);
        }
    }

    #[test]
    fn large_zeros_follow_mcmahon() {
        // McMahon's expansions (DLMF 10.21.19 and 10.21.20, A&S 9.5.12 and
        // 9.5.13; terms beyond the second from memory, checked against
        // mpmath during development), μ = 4n²:
        //   a = (k + n/2 − 1/4)π,
        //   j_{n,k} ≈ a − (μ−1)/(8a) − 4(μ−1)(7μ−31)/(3(8a)³)
        //             − 32(μ−1)(83μ² − 982μ + 3779)/(15(8a)⁵);
        //   b = (k + n/2 − 3/4)π, counting x = 0 as DLMF's first zero of J'_0,
        //   j'_{n,k} ≈ b − (μ+3)/(8b) − 4(7μ² + 82μ − 9)/(3(8b)³)
        //             − 32(83μ³ + 2075μ² − 3039μ + 3537)/(15(8b)⁵).
        // For n ≤ 2 and k ≥ 40 the omitted terms are below 1e-12.
        for n in 0..=2 {
            let mu = 4.0 * f64::from(n * n);
            let j = bessel_j_zeros(n, 60);
            let jp = bessel_j_prime_zeros(n, 60);
            for k in 40..=60 {
                let a = (k as f64 + 0.5 * f64::from(n) - 0.25) * PI;
                let two_term = a - (mu - 1.0) / (8.0 * a);
                let third = 4.0 * (mu - 1.0) * (7.0 * mu - 31.0) / (3.0 * (8.0 * a).powi(3));
                let fourth = 32.0 * (mu - 1.0) * (83.0 * mu * mu - 982.0 * mu + 3779.0)
                    / (15.0 * (8.0 * a).powi(5));
                let got = j[k - 1];
                // The two-term form of the brief is off by about the third term.
                assert!((got - two_term).abs() <= 1.5 * third.abs() + 1e-13);
                let four_term = two_term - third - fourth;
                assert!((got - four_term).abs() < 1e-12, "j_({n},{k})");

                // Our k-th zero of J'_0 is DLMF's (k+1)-th.
                let kd = if n == 0 { k + 1 } else { k } as f64;
                let b = (kd + 0.5 * f64::from(n) - 0.75) * PI;
                let approx = b
                    - (mu + 3.0) / (8.0 * b)
                    - 4.0 * (7.0 * mu * mu + 82.0 * mu - 9.0) / (3.0 * (8.0 * b).powi(3))
                    - 32.0 * (83.0 * mu.powi(3) + 2075.0 * mu * mu - 3039.0 * mu + 3537.0)
                        / (15.0 * (8.0 * b).powi(5));
                assert!((jp[k - 1] - approx).abs() < 1e-12, "j'_({n},{k})");
            }
        }
    }

    #[test]
    fn zeros_below_agree_with_counted_zeros() {
        for n in [0, 2, 9] {
            let counted = bessel_j_zeros(n, 12);
            let below = bessel_j_zeros_below(n, counted[11]);
            assert_eq!(below, counted);
            let counted = bessel_j_prime_zeros(n, 12);
            let below = bessel_j_prime_zeros_below(n, counted[11] + 0.1);
            assert_eq!(below, counted);
            assert!(bessel_j_zeros_below(n, 1.0).is_empty());
        }
        assert!(bessel_j_zeros(3, 0).is_empty());
    }
}
