//! Matrix-pencil estimator (Hua & Sarkar, IEEE T-ASSP 38(5), 1990), run on a
//! band-limited, decimated copy of the signal so that long records stay
//! affordable.
//!
//! This file owns the band-limiting front end (mixing, Kaiser-windowed sinc
//! low-pass, decimation, mapping poles and amplitudes back), the pencil
//! itself (Hankel SVD, model order, shift invariance, least-squares
//! amplitudes, residual error estimate) and the entry point [`matrix_pencil`].
//!
//! # Pencil
//!
//! For a short signal `s_0 … s_{N'−1}` with pencil parameter `L` build the
//! Hankel matrix `Y_{ij} = s_{i+j}` (`(N'−L) × (L+1)`). If
//! `s_n = Σ_k a_k λ_kⁿ` with `R` poles, then `Y = Z_l diag(a) Z_rᵀ` with
//! `(Z_l)_{ik} = λ_kⁱ`, so the column space of `Y` is spanned by the vectors
//! `(λ_kⁱ)_i`. The `R` dominant left singular vectors `U_R` span the same
//! space, `Z_l = U_R T`. Removing the last row ("top") or the first row
//! ("bottom") of `Z_l` gives `Z_bot = Z_top diag(λ)`, hence
//!
//! ```text
//! U_top⁺ U_bot = T diag(λ) T⁻¹ :   the eigenvalues of U_top⁺ U_bot are the λ_k.
//! ```
//!
//! Using the left singular vectors needs no conjugation (the right ones
//! would: the row space of `Y` is spanned by the columns of `conj(V_R)`).
//! Because `U_R` has orthonormal columns, `U_topᴴ U_top = I − rᴴ r`, where
//! `r` is the last row of `U_R`, and by Sherman–Morrison
//!
//! ```text
//! U_top⁺ U_bot = (I + rᴴ r / (1 − |r|²)) U_topᴴ U_bot .
//! ```
//!
//! **Model order.** With singular values `σ_0 ≥ σ_1 ≥ …` of `Y`, keep
//! `σ_i > max(rank_cutoff · σ_0, noise_factor · σ_med)`, where `σ_med` is the
//! median of all singular values; it measures the noise (or round-off)
//! floor on the assumption that the signal has fewer poles in the analysed
//! band than half of `min(N'−L, L+1)`. (After band-limiting the noise is
//! coloured and its singular values slope down over the transition band,
//! so the median of all of them, not of the lower half, is the reference;
//! the largest noise singular values are ~2–3 × `σ_med`, below the default
//! factor 5.)
//!
//! **Error estimate.** For each eigenpair `(λ, y)` the shift-invariance
//! residual `r = U_bot y − λ U_top y` has `dof = N'−L−1−R` degrees of freedom
//! beyond the `R` fitted ones; `λ` is in effect a least-squares estimate
//! from those equations, so its error is estimated as
//! `|δλ| = ‖r‖ / (‖U_top y‖ √dof)`. From `λ = e^{−iω D dt}`,
//! `|δω| = |δλ| / (|λ| D dt)`; the reported error is `|δω|/|ω|`. It is a
//! statistical estimate, not a bound (within ~2× of the actual error in the
//! tests).
//!
//! **Amplitudes** are the least-squares solution over all `R` poles
//! (`Σ_n |s_n − Σ_k a_k λ_kⁿ|²` minimal).
//!
//! # Band-limiting
//!
//! Records (or cascade passes, see [`harminv`](crate::harminv#multi-resolution-passes)) longer than
//! [`PencilOptions::max_direct_len`] are analysed in sub-bands that tile
//! the window. For a sub-band with centre `ν_c` and
//! half-width `h` (cycles/sample):
//!
//! 1. mix down: `x_n = y_n e^{+i2πν_c n}` (a pole `u` becomes
//!    `v = u e^{i2πν_c}`, same amplitude);
//! 2. filter with a real FIR low-pass `h_m`, `m = 0 … L_h−1`, applied
//!    *forwards*, `w_n = Σ_m h_m x_{n+m}`, which is exact for
//!    `n ≤ N − L_h` and keeps the start of the record (where strongly damped
//!    modes live); each pole's amplitude is multiplied by
//!    `H(v) = Σ_m h_m v^m`, evaluated at the complex pole;
//! 3. decimate: `s_k = w_{kD}` with `D = ⌊1/(5h)⌋`, so the decimated band
//!    `|ν| < 1/(2D)` is at least `2.5 h` wide on each side; poles become
//!    `λ = v^D`, unambiguous because `|arg v| < π/D` for everything the
//!    filter passes;
//! 4. run the pencil on `s`, map back `ln u = (ln λ)/D − i2πν_c` and correct
//!    amplitudes `d = a / H(v)`; keep the poles within the sub-band's core.
//!
//! The low-pass is a windowed sinc with a Kaiser window: pass band edge
//! `1.5 h` (so a pole just outside the core is still seen unattenuated),
//! stop band edge `1/(2D)`, cut-off midway, attenuation
//! [`PencilOptions::stopband_attenuation_db`] `= A`, shape parameter
//! `β = 0.1102 (A − 8.7)` (for `A > 50`) and length
//! `L_h = ⌈(A − 7.95)/(14.36 Δ)⌉ + 1` for transition width `Δ` (cycles/sample)
//! — Kaiser's standard design formulas. The number of sub-bands is the
//! smallest that keeps each decimated signal within
//! [`PencilOptions::max_decimated_len`] samples; very narrow windows are
//! analysed with a wider design band (at least `max(2C, 40)/N` half-width,
//! `C = (A − 7.95)/14.36`) so that the filter is at most half the record and
//! at least ~100 decimated samples remain.

use super::linalg::{eigen, thin_svd};
use super::{
    check_option, cis_cycles, least_squares_amplitudes, log_on_branch, merge_passes, pass_lengths,
    validate_inputs, Acceptance, HarminvError, Pole,
};
use faer::Mat;
use num_complex::Complex64;
use rayon::prelude::*;
use std::f64::consts::PI;

/// Fewest samples [`matrix_pencil`] accepts.
const MIN_LEN: usize = 16;

/// Options of [`matrix_pencil`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PencilOptions {
    /// Records with at most this many samples are analysed directly, without
    /// band-limiting. Default `600`.
    pub max_direct_len: usize,
    /// Upper bound on the length of each decimated sub-band signal; sets the
    /// number of sub-bands. Default `600`.
    pub max_decimated_len: usize,
    /// Pencil parameter as a fraction of the analysed length,
    /// `L = round(pencil_fraction · N')`. Default `0.5` (square Hankel
    /// matrix, the least noise-sensitive choice).
    pub pencil_fraction: f64,
    /// Relative singular-value floor of the model-order rule. Default `1e-11`.
    pub rank_cutoff: f64,
    /// Multiple of the median lower-half singular value below which singular
    /// values count as noise. Default `4.0`.
    pub noise_factor: f64,
    /// Stop-band attenuation of the band-limiting filter in dB. Default `120`.
    pub stopband_attenuation_db: f64,
    /// Length of the shortest record of the multi-resolution cascade (see
    /// [`harminv`](crate::harminv#multi-resolution-passes)); `0` analyses the whole record in one pass
    /// only; otherwise at least 32. Default `600` (the first pass is then a
    /// direct pencil).
    pub min_pass_len: usize,
    /// Rejection-rule thresholds.
    pub acceptance: Acceptance,
}

impl Default for PencilOptions {
    fn default() -> Self {
        PencilOptions {
            max_direct_len: 600,
            max_decimated_len: 600,
            pencil_fraction: 0.5,
            rank_cutoff: 1e-11,
            noise_factor: 5.0,
            stopband_attenuation_db: 120.0,
            min_pass_len: 600,
            acceptance: Acceptance::default(),
        }
    }
}

impl PencilOptions {
    fn validate(&self) -> Result<(), HarminvError> {
        if self.min_pass_len != 0 && self.min_pass_len < 32 {
            return Err(HarminvError::InvalidOption {
                name: "min_pass_len",
                value: format!("{}", self.min_pass_len),
                reason: "must be 0 (single pass) or at least 32",
            });
        }
        if self.max_direct_len < MIN_LEN || self.max_decimated_len < MIN_LEN {
            return Err(HarminvError::InvalidOption {
                name: "max_direct_len / max_decimated_len",
                value: format!("{} / {}", self.max_direct_len, self.max_decimated_len),
                reason: "must both be at least 16",
            });
        }
        check_option(
            "pencil_fraction",
            self.pencil_fraction,
            |v| (0.1..=0.9).contains(&v),
            "must lie in [0.1, 0.9]",
        )?;
        check_option(
            "rank_cutoff",
            self.rank_cutoff,
            |v| v > 0.0 && v < 1.0,
            "must lie in (0, 1)",
        )?;
        check_option(
            "noise_factor",
            self.noise_factor,
            |v| v >= 0.0 && v.is_finite(),
            "must be finite and ≥ 0",
        )?;
        check_option(
            "stopband_attenuation_db",
            self.stopband_attenuation_db,
            |v| (40.0..=300.0).contains(&v),
            "must lie in [40, 300]",
        )?;
        self.acceptance.validate()
    }
}

/// Poles of `signal` (spacing `dt` s) with frequencies in `[f_min, f_max]` Hz
/// by the matrix-pencil method, after the rejection rule
/// ([`PencilOptions::acceptance`]); sorted by frequency. An empty result is
/// not an error.
///
/// # Errors
/// Invalid `dt`, window or options; non-finite samples; fewer than 16
/// samples; a window as wide as the sampling band; a failed factorisation.
pub fn matrix_pencil(
    signal: &[Complex64],
    dt: f64,
    f_min: f64,
    f_max: f64,
    opts: &PencilOptions,
) -> Result<Vec<Pole>, HarminvError> {
    opts.validate()?;
    validate_inputs(signal, dt, f_min, f_max, MIN_LEN)?;
    let n = signal.len();
    if (f_max - f_min) * dt >= 1.0 {
        return Err(HarminvError::WindowTooWide {
            width: f_max - f_min,
            band: 1.0 / dt,
        });
    }
    let lens = pass_lengths(n, opts.min_pass_len);
    let passes = lens
        .iter()
        .map(|&len| pencil_pass(&signal[..len], dt, f_min, f_max, opts))
        .collect::<Result<Vec<_>, _>>()?;
    let candidates = merge_passes(passes, &lens, dt);
    Ok(opts.acceptance.apply(&candidates, n, dt, f_min, f_max))
}

/// One pencil pass over the whole of `signal`: direct when it is short,
/// band-limited otherwise; unsorted candidate poles.
fn pencil_pass(
    signal: &[Complex64],
    dt: f64,
    f_min: f64,
    f_max: f64,
    opts: &PencilOptions,
) -> Result<Vec<Pole>, HarminvError> {
    let n = signal.len();
    let nu_lo = f_min * dt;
    let nu_hi = f_max * dt;
    let centre = 0.5 * (nu_lo + nu_hi);
    if n <= opts.max_direct_len {
        let raw = pencil_core(signal, opts)?;
        Ok(raw
            .into_iter()
            .map(|(log_l, a, rho)| {
                let log_u = log_on_branch(log_l.exp(), centre);
                let abs_err = rho / (log_l.re.exp() * dt);
                Pole::from_log(log_u, dt, a, abs_err)
            })
            .collect())
    } else {
        let bands = plan_bands(n, nu_lo, nu_hi, opts);
        // Each band in the caller's floating-point mode, whichever thread
        // takes it (see fdm.rs).
        let mode = crate::fpu::current_mode();
        let per_band: Vec<Result<Vec<Pole>, HarminvError>> = bands
            .par_iter()
            .map(|b| crate::fpu::with_mode(mode, || solve_band(signal, dt, b, opts)))
            .collect();
        let mut all = Vec::new();
        for r in per_band {
            all.extend(r?);
        }
        Ok(all)
    }
}

/// One band-limited sub-band: core, decimation and filter.
#[derive(Clone, Debug)]
struct Band {
    /// Mixing frequency `ν_c` (cycles/sample), the core centre.
    centre: f64,
    /// Core `[lo, hi)` in cycles/sample; the last band's core is closed.
    lo: f64,
    /// See `lo`.
    hi: f64,
    /// Whether `hi` belongs to the core.
    closed: bool,
    /// Decimation factor `D`.
    decim: usize,
    /// Filter taps `h_m`.
    taps: Vec<f64>,
}

/// Filter and decimation for design half-width `hd` on an `n`-sample record:
/// returns `(D, taps, decimated length)`.
fn design(n: usize, hd: f64, atten_db: f64) -> (usize, Vec<f64>, usize) {
    let decim = ((1.0 / (5.0 * hd)).floor() as usize).max(1);
    let nu_pass = 1.5 * hd;
    let nu_stop = 0.5 / decim as f64;
    let transition = (nu_stop - nu_pass).max(hd);
    let c = (atten_db - 7.95) / 14.36;
    let len = (c / transition).ceil() as usize + 1;
    let cut = (0.5 * (nu_pass + nu_stop)).min(0.5);
    let taps = kaiser_lowpass(len, cut, kaiser_beta(atten_db));
    let n_dec = if n >= len { (n - len) / decim + 1 } else { 0 };
    (decim, taps, n_dec)
}

/// Chooses the sub-bands (see module docs).
fn plan_bands(n: usize, nu_lo: f64, nu_hi: f64, opts: &PencilOptions) -> Vec<Band> {
    let half = 0.5 * (nu_hi - nu_lo);
    let c = (opts.stopband_attenuation_db - 7.95) / 14.36;
    let h_min = (2.0 * c / (n as f64 - 2.0)).max(40.0 / n as f64);
    let mut n_b = 1usize;
    let (decim, taps) = loop {
        let h = half / n_b as f64;
        let hd = h.max(h_min);
        let (decim, taps, n_dec) = design(n, hd, opts.stopband_attenuation_db);
        // Stop when short enough, or when narrowing further changes nothing.
        if (n_dec <= opts.max_decimated_len && decim > 1) || hd <= h_min {
            break (decim, taps);
        }
        n_b += 1;
    };
    let width = (nu_hi - nu_lo) / n_b as f64;
    (0..n_b)
        .map(|b| {
            let lo = nu_lo + b as f64 * width;
            let hi = if b + 1 == n_b { nu_hi } else { lo + width };
            Band {
                centre: 0.5 * (lo + hi),
                lo,
                hi,
                closed: b + 1 == n_b,
                decim,
                taps: taps.clone(),
            }
        })
        .collect()
}

/// Kaiser shape parameter for attenuation `a` dB (Kaiser's empirical fit).
fn kaiser_beta(a: f64) -> f64 {
    if a > 50.0 {
        0.1102 * (a - 8.7)
    } else if a >= 21.0 {
        0.5842 * (a - 21.0).powf(0.4) + 0.07886 * (a - 21.0)
    } else {
        0.0
    }
}

/// Modified Bessel function `I₀(x) = Σ_k ((x/2)^k / k!)²`, summed until the
/// terms fall below `1e-17` of the total.
fn bessel_i0(x: f64) -> f64 {
    let q = 0.25 * x * x;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1.0;
    while term > 1e-17 * sum {
        term *= q / (k * k);
        sum += term;
        k += 1.0;
    }
    sum
}

/// Windowed-sinc low-pass of `len` taps, cut-off `cut` cycles/sample:
/// `h_m = 2 cut · sinc(2 cut (m − (len−1)/2)) · I₀(β√(1 − x_m²)) / I₀(β)`
/// with `x_m = 2m/(len−1) − 1`, normalised to unit DC gain `Σ h_m = 1`.
fn kaiser_lowpass(len: usize, cut: f64, beta: f64) -> Vec<f64> {
    let mid = 0.5 * (len as f64 - 1.0);
    let i0b = bessel_i0(beta);
    let mut taps: Vec<f64> = (0..len)
        .map(|m| {
            let t = m as f64 - mid;
            let arg = 2.0 * cut * t;
            let sinc = if arg == 0.0 {
                1.0
            } else {
                (PI * arg).sin() / (PI * arg)
            };
            let x = if len > 1 { t / mid } else { 0.0 };
            let w = bessel_i0(beta * (1.0 - x * x).max(0.0).sqrt()) / i0b;
            2.0 * cut * sinc * w
        })
        .collect();
    let sum: f64 = taps.iter().sum();
    for t in taps.iter_mut() {
        *t /= sum;
    }
    taps
}

/// Band-limits, decimates and solves one sub-band; returns its core poles.
fn solve_band(
    signal: &[Complex64],
    dt: f64,
    band: &Band,
    opts: &PencilOptions,
) -> Result<Vec<Pole>, HarminvError> {
    let n = signal.len();
    let d = band.decim;
    let len = band.taps.len();
    if n < len + MIN_LEN * d {
        return Err(HarminvError::SignalTooShort {
            len: n,
            min: len + MIN_LEN * d,
        });
    }
    let mixed: Vec<Complex64> = signal
        .iter()
        .enumerate()
        .map(|(i, y)| y * cis_cycles(band.centre * i as f64))
        .collect();
    let n_dec = (n - len) / d + 1;
    let dec: Vec<Complex64> = (0..n_dec)
        .map(|k| {
            let x = &mixed[k * d..k * d + len];
            x.iter().zip(&band.taps).map(|(xi, h)| xi * h).sum()
        })
        .collect();
    let raw = pencil_core(&dec, opts)?;
    let mut out = Vec::new();
    for (log_l, a, rho) in raw {
        // ln v = ln λ / D with |Im ln v| ≤ π/D; ln u = ln v − i2πν_c.
        let log_v = log_l / d as f64;
        let nu = band.centre - log_v.im / (2.0 * PI);
        let inside = nu >= band.lo && (nu < band.hi || (band.closed && nu <= band.hi));
        if !inside {
            continue;
        }
        let log_u = Complex64::new(log_v.re, -2.0 * PI * nu);
        // H(v) = Σ_m h_m v^m.
        let step = log_v.exp();
        let mut vm = Complex64::new(1.0, 0.0);
        let mut resp = Complex64::new(0.0, 0.0);
        for (m, h) in band.taps.iter().enumerate() {
            if m % 64 == 0 {
                vm = (log_v * m as f64).exp();
            }
            resp += vm * h;
            vm *= step;
        }
        let amplitude = a / resp;
        let abs_err = rho / (log_l.re.exp() * d as f64 * dt);
        out.push(Pole::from_log(log_u, dt, amplitude, abs_err));
    }
    Ok(out)
}

/// The pencil on a short signal: returns `(ln λ_k, a_k, ρ_k)` for every
/// retained pole (principal logarithm, least-squares amplitude, residual).
fn pencil_core(
    s: &[Complex64],
    opts: &PencilOptions,
) -> Result<Vec<(Complex64, Complex64, f64)>, HarminvError> {
    let n = s.len();
    let l = ((opts.pencil_fraction * n as f64).round() as usize).clamp(1, n - 2);
    let rows = n - l;
    let cols = l + 1;
    let y = Mat::from_fn(rows, cols, |i, j| s[i + j]);
    let svd = thin_svd(y.as_ref(), "matrix pencil: SVD of the Hankel matrix")?;
    let k = svd.s.len();
    let s0 = svd.s.first().copied().unwrap_or(0.0);
    if !s0.is_finite() || s0 <= 0.0 {
        return Ok(Vec::new());
    }
    let median = svd.s[k / 2];
    let floor = (opts.rank_cutoff * s0).max(opts.noise_factor * median);
    let r = svd.s.iter().take_while(|&&x| x > floor).count();
    if r == 0 {
        return Ok(Vec::new());
    }
    let u = &svd.u;
    // C = U_topᴴ U_bot; rlast = last row of U_R.
    let cmat = Mat::from_fn(r, r, |a, b| {
        let mut acc = Complex64::new(0.0, 0.0);
        for i in 0..rows - 1 {
            acc += u[(i, a)].conj() * u[(i + 1, b)];
        }
        acc
    });
    let rlast: Vec<Complex64> = (0..r).map(|a| u[(rows - 1, a)]).collect();
    let rr: f64 = rlast.iter().map(|x| x.norm_sqr()).sum();
    let rc: Vec<Complex64> = (0..r)
        .map(|b| (0..r).map(|a| rlast[a] * cmat[(a, b)]).sum())
        .collect();
    let a = Mat::from_fn(r, r, |i, j| {
        cmat[(i, j)] + rlast[i].conj() * rc[j] / (1.0 - rr)
    });
    let (vals, vecs) = eigen(a.as_ref(), "matrix pencil: eigenproblem")?;

    let mut logs = Vec::with_capacity(r);
    let mut rhos = Vec::with_capacity(r);
    for (q, &lam) in vals.iter().enumerate() {
        if !(lam.norm() > 0.0 && lam.is_finite()) {
            continue;
        }
        // x = U_R y; U_top y = x[0..rows−1], U_bot y = x[1..rows].
        let x: Vec<Complex64> = (0..rows)
            .map(|i| (0..r).map(|b| u[(i, b)] * vecs[(b, q)]).sum())
            .collect();
        let mut res = 0.0;
        let mut top = 0.0;
        for i in 0..rows - 1 {
            res += (x[i + 1] - lam * x[i]).norm_sqr();
            top += x[i].norm_sqr();
        }
        let dof = (rows - 1).saturating_sub(r).max(1) as f64;
        let rho = if top > 0.0 {
            (res / (top * dof)).sqrt()
        } else {
            f64::INFINITY
        };
        logs.push(lam.ln());
        rhos.push(rho);
    }
    let amps = least_squares_amplitudes(s, &logs)?;
    Ok(logs
        .into_iter()
        .zip(amps)
        .zip(rhos)
        .map(|((l, a), r)| (l, a, r))
        .collect())
}
