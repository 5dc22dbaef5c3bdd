//! Harmonic inversion: complex frequencies and amplitudes of resonances from a
//! sampled ring-down signal.
//!
//! The FDTD engine records field probes while a structure rings down after an
//! excitation; the resonant frequencies `f`, decay rates `γ` and quality factors
//! `Q` of the structure are the poles of that signal. This module owns the two
//! estimators that extract them, the shared result type [`Pole`], the error
//! type [`HarminvError`] and the spurious-pole rejection rule
//! ([`Acceptance`]) that both estimators apply.
//!
//! # Signal model and conventions
//!
//! A signal of `N` samples with spacing `dt` is modelled as
//!
//! ```text
//! c_n = Σ_k d_k u_k^n,   n = 0 … N−1,   u_k = exp(−i ω_k dt),   ω_k = 2π f_k − i γ_k .
//! ```
//!
//! Hence `f = −arg(u) / (2π dt)`, `γ = −ln|u| / dt` (the envelope of a pole's
//! contribution is `∝ e^{−γ t}`), and `Q = π |f| / γ`. A real signal
//! `a cos(2π f t + φ) e^{−γ t}` contributes a pole at `+f` with
//! `d = (a/2) e^{−iφ}` and its mirror at `−f` with `d = (a/2) e^{+iφ}`.
//! Signals are passed as `&[Complex64]`; a real signal simply has zero
//! imaginary parts. Frequencies are reported on the branch (modulo the
//! sampling rate `1/dt`) nearest to the centre of the requested window.
//!
//! # Estimators
//!
//! * [`filter_diagonalisation`] — filter diagonalisation (Mandelshtam & Taylor,
//!   J. Chem. Phys. 107, 6756 (1997)) on a Fourier-type local basis, with wide
//!   windows split into sub-windows and an error estimate in the spirit of
//!   Wall & Neuhauser (J. Chem. Phys. 102, 8011 (1995)); equations in
//!   [`fdm`].
//! * [`matrix_pencil`] — the matrix-pencil method (Hua & Sarkar, IEEE T-ASSP
//!   38(5), 1990) on band-limited, decimated copies of the signal; equations
//!   in [`pencil`].
//!
//! Both return the poles that pass the rejection rule, sorted by frequency,
//! and both truncate their singular value decompositions at a floor
//! estimated from the median singular value, so that noise directions do
//! not turn into poles.
//!
//! # Multi-resolution passes
//!
//! A pole that decays in `τ = 1/(γ dt)` samples is measured best from a
//! record a few `τ` long: beyond that, samples add noise but no signal, and
//! the pencil's band-limiting filter (hundreds of taps) would delay a
//! strongly damped mode out of sight. Both estimators therefore analyse the
//! prefixes of lengths `L_0, 4L_0, 16L_0, …` (while `≤ N/2`) and the whole
//! record `N` (a single pass when `N < 2 L_0`), and the merge keeps from pass
//! `i` the poles with `L_{i−1}/3 ≤ τ < L_i/3` (`τ = ∞` for undamped or growing
//! poles, which therefore always come from the full record). Near a split a
//! pole may be seen by both neighbouring passes: in the overlap
//! `τ ∈ [τ_s/2, 2τ_s)` a pole of each pass within a quarter linewidth of the
//! other (`|Δω| ≤ max γ / 2`) forms a pair, and only the estimate from the pass
//! that owns the geometric mean of their `τ` is kept.
//!
//! # Rejection rule
//!
//! Every candidate pole is accepted only if all of the following hold (the
//! thresholds live in [`Acceptance`]):
//!
//! 1. **in window**: `f_min ≤ f ≤ f_max`;
//! 2. **consistent**: its estimated relative error `|δω|/|ω|` ([`Pole::error`])
//!    is at most [`Acceptance::max_error`];
//! 3. **not growing**: over the record length `T = (N−1) dt` its envelope grows
//!    by at most the factor `1 + growth_tolerance`, i.e.
//!    `−γ T ≤ ln(1 + growth_tolerance)`. Tones with `γ = 0` (infinite `Q`) and
//!    estimates with a tiny negative `γ` from round-off or noise pass;
//! 4. **not negligible**: its RMS amplitude over the record,
//!    `A_k = |d_k| · sqrt( (1/N) Σ_{n<N} |u_k|^{2n} )`, is at least
//!    [`Acceptance::min_relative_amplitude`] times the largest `A_k` among the
//!    poles that passed rules 1–3. The RMS amplitude (rather than `|d_k|`) is
//!    used so that a long-lived weak mode is not discarded in favour of a
//!    strongly damped but momentarily large one.

pub mod fdm;
mod linalg;
pub mod pencil;
#[cfg(test)]
mod tests;

pub use fdm::{filter_diagonalisation, filter_diagonalisation_raw, AmplitudeMethod, FdmOptions};
pub use pencil::{matrix_pencil, PencilOptions};

use num_complex::Complex64;
use std::f64::consts::PI;

/// One resonance (pole) of a sampled signal; see the module docs for the
/// signal model `c_n = Σ_k d_k u_k^n`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Pole {
    /// Frequency `f = −arg(u)/(2π dt)` in Hz.
    pub freq: f64,
    /// Decay rate `γ = −ln|u|/dt` in 1/s; the envelope is `∝ e^{−γ t}`.
    /// Negative for a growing pole.
    pub decay: f64,
    /// Quality factor `Q = π |f| / γ` (dimensionless). It is `+∞` when
    /// `γ = 0` exactly, very large for nearly undamped tones, and negative
    /// when `γ < 0` (growing pole).
    pub q: f64,
    /// Complex amplitude `d_k`, referred to sample 0 (`t = 0`).
    pub amplitude: Complex64,
    /// Estimated relative error of the complex frequency, `|δω|/|ω|`
    /// (dimensionless). Each estimator documents how it obtains it; it is a
    /// consistency estimate, not a rigorous bound. `+∞` when `ω = 0`.
    pub error: f64,
}

impl Pole {
    /// Complex angular frequency `ω = 2π f − i γ` in rad/s.
    pub fn omega(&self) -> Complex64 {
        Complex64::new(2.0 * PI * self.freq, -self.decay)
    }

    /// Builds a pole from `ln u = −i ω dt` (with `Im ln u` already placed on
    /// the wanted branch), its amplitude and the absolute error `|δω|` in
    /// rad/s.
    fn from_log(log_u: Complex64, dt: f64, amplitude: Complex64, abs_err_omega: f64) -> Pole {
        // ω = i ln(u) / dt  ⇒  f = −Im(ln u)/(2π dt),  γ = −Re(ln u)/dt.
        let freq = -log_u.im / (2.0 * PI * dt);
        let decay = -log_u.re / dt;
        let q = quality_factor(freq, decay);
        let omega_abs = (log_u.norm()) / dt;
        let error = if omega_abs > 0.0 {
            abs_err_omega / omega_abs
        } else {
            f64::INFINITY
        };
        Pole {
            freq,
            decay,
            q,
            amplitude,
            error,
        }
    }
}

/// `Q = π|f|/γ`, `+∞` for `γ = 0`.
fn quality_factor(freq: f64, decay: f64) -> f64 {
    if decay == 0.0 {
        f64::INFINITY
    } else {
        PI * freq.abs() / decay
    }
}

/// Failures of the harmonic-inversion estimators. Messages quote the
/// offending values.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum HarminvError {
    /// The signal has fewer samples than the estimator needs.
    #[error("signal has {len} samples; at least {min} are needed")]
    SignalTooShort {
        /// Number of samples passed.
        len: usize,
        /// Minimum number required.
        min: usize,
    },
    /// A sample is NaN or infinite.
    #[error("sample {index} is not finite ({value})")]
    NonFiniteSample {
        /// Index of the first offending sample.
        index: usize,
        /// Its value.
        value: Complex64,
    },
    /// The sample spacing is not a positive finite number.
    #[error("sample spacing dt = {dt} s is not a positive finite number")]
    InvalidTimeStep {
        /// The spacing passed.
        dt: f64,
    },
    /// The frequency window is empty, reversed or not finite.
    #[error("frequency window [{f_min}, {f_max}] Hz is not a finite interval with f_min < f_max")]
    InvalidWindow {
        /// Lower edge passed.
        f_min: f64,
        /// Upper edge passed.
        f_max: f64,
    },
    /// The window (plus the estimator's padding) spans the whole sampling
    /// band `1/dt`, so distinct frequencies would alias onto each other.
    #[error(
        "frequency window of {width} Hz (plus padding) does not fit in the sampling band 1/dt = {band} Hz"
    )]
    WindowTooWide {
        /// Window width `f_max − f_min` in Hz.
        width: f64,
        /// Sampling band `1/dt` in Hz.
        band: f64,
    },
    /// An option has a value outside its documented range.
    #[error("option {name} = {value} is invalid: {reason}")]
    InvalidOption {
        /// Field name.
        name: &'static str,
        /// Value passed, formatted.
        value: String,
        /// What is required.
        reason: &'static str,
    },
    /// A dense factorisation failed to converge.
    #[error("linear algebra failure in {stage}: {detail} (matrix {rows}×{cols})")]
    LinearAlgebra {
        /// Which step failed.
        stage: &'static str,
        /// The library's description of the failure.
        detail: String,
        /// Rows of the matrix being factorised.
        rows: usize,
        /// Columns of the matrix being factorised.
        cols: usize,
    },
}

/// Thresholds of the spurious-pole rejection rule shared by both estimators
/// (see the module docs for the rule itself).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Acceptance {
    /// Largest accepted estimated relative error `|δω|/|ω|` (rule 2).
    /// Default `1e-3`. (For a low-`Q` pole `|δω|/|ω| ≈ (δγ/γ)/(2Q)`, so a
    /// `Q = 5` mode known to 0.1 % already has `|δω|/|ω| ≈ 1e-4`.)
    pub max_error: f64,
    /// Smallest accepted RMS amplitude over the record relative to the
    /// largest one in the window (rule 4). Default `1e-3`.
    pub min_relative_amplitude: f64,
    /// Largest accepted relative growth of a pole's envelope over the record
    /// (rule 3): accept iff `e^{−γ (N−1) dt} − 1 ≤ growth_tolerance`.
    /// Default `0.01`.
    pub growth_tolerance: f64,
}

impl Default for Acceptance {
    fn default() -> Self {
        Acceptance {
            max_error: 1e-3,
            min_relative_amplitude: 1e-3,
            growth_tolerance: 0.01,
        }
    }
}

impl Acceptance {
    fn validate(&self) -> Result<(), HarminvError> {
        check_option(
            "acceptance.max_error",
            self.max_error,
            |v| v > 0.0,
            "must be > 0",
        )?;
        check_option(
            "acceptance.min_relative_amplitude",
            self.min_relative_amplitude,
            |v| (0.0..1.0).contains(&v),
            "must lie in [0, 1)",
        )?;
        check_option(
            "acceptance.growth_tolerance",
            self.growth_tolerance,
            |v| v >= 0.0 && v.is_finite(),
            "must be finite and ≥ 0",
        )
    }

    /// Applies the rejection rule to `candidates` for a record of `n` samples
    /// and returns the accepted poles sorted by frequency.
    fn apply(&self, candidates: &[Pole], n: usize, dt: f64, f_min: f64, f_max: f64) -> Vec<Pole> {
        let record = (n.saturating_sub(1)) as f64 * dt;
        let max_growth_exponent = self.growth_tolerance.ln_1p();
        let mut kept: Vec<(Pole, f64)> = candidates
            .iter()
            .filter(|p| p.freq >= f_min && p.freq <= f_max)
            .filter(|p| p.error <= self.max_error)
            .filter(|p| -p.decay * record <= max_growth_exponent)
            .map(|p| (*p, rms_amplitude(p, n, dt)))
            .filter(|(_, a)| a.is_finite())
            .collect();
        let largest = kept.iter().map(|(_, a)| *a).fold(0.0, f64::max);
        kept.retain(|(_, a)| *a > 0.0 && *a >= self.min_relative_amplitude * largest);
        let mut out: Vec<Pole> = kept.into_iter().map(|(p, _)| p).collect();
        out.sort_by(|a, b| a.freq.total_cmp(&b.freq));
        out
    }
}

/// RMS amplitude of a pole's contribution over `n` samples:
/// `|d| sqrt(S/n)` with `S = Σ_{m<n} |u|^{2m} = expm1(−2γ dt n) / expm1(−2γ dt)`
/// (and `S = n` when `γ = 0`), evaluated with `expm1` so that nearly undamped
/// poles keep full precision.
fn rms_amplitude(p: &Pole, n: usize, dt: f64) -> f64 {
    let x = -2.0 * p.decay * dt;
    let s = if x == 0.0 {
        n as f64
    } else {
        (x * n as f64).exp_m1() / x.exp_m1()
    };
    p.amplitude.norm() * (s / n as f64).sqrt()
}

fn check_option(
    name: &'static str,
    value: f64,
    ok: impl Fn(f64) -> bool,
    reason: &'static str,
) -> Result<(), HarminvError> {
    if ok(value) && !value.is_nan() {
        Ok(())
    } else {
        Err(HarminvError::InvalidOption {
            name,
            value: format!("{value}"),
            reason,
        })
    }
}

/// Checks the arguments common to both estimators.
fn validate_inputs(
    signal: &[Complex64],
    dt: f64,
    f_min: f64,
    f_max: f64,
    min_len: usize,
) -> Result<(), HarminvError> {
    if !(dt.is_finite() && dt > 0.0) {
        return Err(HarminvError::InvalidTimeStep { dt });
    }
    if !(f_min.is_finite() && f_max.is_finite() && f_min < f_max) {
        return Err(HarminvError::InvalidWindow { f_min, f_max });
    }
    if let Some((index, value)) = signal
        .iter()
        .enumerate()
        .find(|(_, c)| !(c.re.is_finite() && c.im.is_finite()))
    {
        return Err(HarminvError::NonFiniteSample {
            index,
            value: *value,
        });
    }
    if signal.len() < min_len {
        return Err(HarminvError::SignalTooShort {
            len: signal.len(),
            min: min_len,
        });
    }
    Ok(())
}

/// Record lengths of the multi-resolution cascade for an `n`-sample signal:
/// `L_0 = shortest`, `L_{i+1} = 4 L_i` while `4 L_i ≤ n/2`, and finally `n`.
/// A single pass `[n]` when `shortest == 0` or `n < 2 · shortest`.
fn pass_lengths(n: usize, shortest: usize) -> Vec<usize> {
    if shortest == 0 || n < 2 * shortest {
        return vec![n];
    }
    let mut v = vec![shortest];
    while let Some(&last) = v.last() {
        if 4 * last <= n / 2 {
            v.push(4 * last);
        } else {
            break;
        }
    }
    v.push(n);
    v
}

/// Decay time of a pole in samples, `τ = 1/(γ dt)`; `+∞` when `γ ≤ 0`.
fn decay_samples(p: &Pole, dt: f64) -> f64 {
    if p.decay > 0.0 {
        1.0 / (p.decay * dt)
    } else {
        f64::INFINITY
    }
}

/// Merges the poles of the cascade passes (`passes[i]` analysed the first
/// `lens[i]` samples).
///
/// Pass `i` is responsible for decay times `τ ∈ [τ_{i−1}, τ_i)` with the
/// split `τ_i = lens[i]/3` (a pole then decays by `e³` within the record, so
/// the record holds ~99.8 % of its energy while adding little noise); the
/// first pass has no lower and the last no upper bound. Near a split a pole
/// may be estimated on either side of it by both passes, so in the overlap
/// `τ ∈ [τ_i/2, 2τ_i)` poles of passes `i` and `i+1` that agree within a
/// quarter linewidth, `|ω_a − ω_b| ≤ max(γ_a, γ_b)/2`, are paired (closest
/// first) and only the one from the pass whose range contains the geometric
/// mean of the two decay times is kept. All other poles are kept exactly
/// when their own `τ` lies in their pass's range.
fn merge_passes(passes: Vec<Vec<Pole>>, lens: &[usize], dt: f64) -> Vec<Pole> {
    let k = passes.len();
    let split: Vec<f64> = lens.iter().map(|&l| l as f64 / 3.0).collect();
    let range = |i: usize| -> (f64, f64) {
        let lo = if i == 0 { 0.0 } else { split[i - 1] };
        let hi = if i + 1 == k { f64::INFINITY } else { split[i] };
        (lo, hi)
    };
    // keep[i][j]: Some(decision) once a pairing has decided pole j of pass i.
    let mut decided: Vec<Vec<Option<bool>>> = passes.iter().map(|p| vec![None; p.len()]).collect();
    for i in 0..k.saturating_sub(1) {
        let s = split[i];
        let in_overlap = |p: &Pole| {
            let t = decay_samples(p, dt);
            t >= 0.5 * s && t < 2.0 * s
        };
        let mut pairs: Vec<(f64, usize, usize)> = Vec::new();
        for (a, pa) in passes[i].iter().enumerate() {
            if !in_overlap(pa) || decided[i][a].is_some() {
                continue;
            }
            for (b, pb) in passes[i + 1].iter().enumerate() {
                if !in_overlap(pb) {
                    continue;
                }
                let dist = (pa.omega() - pb.omega()).norm();
                if dist <= 0.5 * pa.decay.max(pb.decay) {
                    pairs.push((dist, a, b));
                }
            }
        }
        pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
        for (_, a, b) in pairs {
            if decided[i][a].is_some() || decided[i + 1][b].is_some() {
                continue;
            }
            let tg =
                (decay_samples(&passes[i][a], dt) * decay_samples(&passes[i + 1][b], dt)).sqrt();
            let short_wins = tg < s;
            decided[i][a] = Some(short_wins);
            decided[i + 1][b] = Some(!short_wins);
        }
    }
    let mut out = Vec::new();
    for (i, pass) in passes.into_iter().enumerate() {
        let (lo, hi) = range(i);
        for (j, p) in pass.into_iter().enumerate() {
            let keep = match decided[i][j] {
                Some(d) => d,
                None => {
                    let t = decay_samples(&p, dt);
                    t >= lo && (t < hi || hi.is_infinite())
                }
            };
            if keep {
                out.push(p);
            }
        }
    }
    out.sort_by(|a, b| a.freq.total_cmp(&b.freq));
    out
}

/// `ln u = −iω dt` of a pole.
fn pole_log(p: &Pole, dt: f64) -> Complex64 {
    Complex64::new(-p.decay * dt, -2.0 * PI * p.freq * dt)
}

/// `exp(i 2π x)` with the argument first reduced modulo one, so that large
/// `x` (many cycles) keeps full phase accuracy.
fn cis_cycles(x: f64) -> Complex64 {
    let r = x - x.round();
    Complex64::from_polar(1.0, 2.0 * PI * r)
}

/// Wraps a phase in cycles into `(−1/2, 1/2]`.
fn wrap_cycles(x: f64) -> f64 {
    let r = x - x.round();
    if r <= -0.5 {
        r + 1.0
    } else {
        r
    }
}

/// Principal `ln u` with its imaginary part moved to the branch nearest to
/// `−2π ν_centre`, so that the reported frequency lies within half the
/// sampling band of the window centre `ν_centre` (cycles/sample).
fn log_on_branch(u: Complex64, nu_centre: f64) -> Complex64 {
    let l = u.ln();
    // ν = −Im(ln u)/(2π); shift by whole cycles towards ν_centre.
    let nu = -l.im / (2.0 * PI);
    let nu_b = nu_centre + wrap_cycles(nu - nu_centre);
    Complex64::new(l.re, -2.0 * PI * nu_b)
}

/// `e^z − 1` for complex `z`, accurate for small `|z|`:
/// `Re = expm1(x) cos y − 2 sin²(y/2)`, `Im = e^x sin y`.
fn cexpm1(z: Complex64) -> Complex64 {
    let (s, c) = z.im.sin_cos();
    let h = (0.5 * z.im).sin();
    Complex64::new(z.re.exp_m1() * c - 2.0 * h * h, z.re.exp() * s)
}

/// Least-squares amplitudes `d` of known poles: minimises
/// `Σ_{n<N} |c_n − Σ_k d_k u_k^n|²` through the normal equations
/// `G d = b`, with the Gram matrix in closed form
/// `G_kl = Σ_n (ū_k u_l)^n = expm1(N L_kl)/expm1(L_kl)`, `L_kl = conj(ln u_k) + ln u_l`
/// (`= N` when `L_kl = 0`) and `b_k = Σ_n ū_k^n c_n`. `G` is Hermitian
/// positive semi-definite; it is solved by a truncated SVD (relative cutoff
/// `1e-13`), so (near-)duplicate poles share their amplitude instead of
/// blowing up.
fn least_squares_amplitudes(
    signal: &[Complex64],
    log_u: &[Complex64],
) -> Result<Vec<Complex64>, HarminvError> {
    let p = log_u.len();
    let n = signal.len();
    if p == 0 {
        return Ok(Vec::new());
    }
    let mut g = faer::Mat::<Complex64>::zeros(p, p);
    for k in 0..p {
        for l in 0..p {
            let mut lkl = log_u[k].conj() + log_u[l];
            lkl.im = 2.0 * PI * wrap_cycles(lkl.im / (2.0 * PI));
            g[(k, l)] = if lkl.norm() < 1e-300 {
                Complex64::new(n as f64, 0.0)
            } else {
                cexpm1(lkl * n as f64) / cexpm1(lkl)
            };
        }
    }
    let mut b = vec![Complex64::new(0.0, 0.0); p];
    for (k, bk) in b.iter_mut().enumerate() {
        *bk = power_dot(log_u[k].conj(), signal);
    }
    linalg::solve_truncated(g.as_ref(), &b, 1e-13)
}

/// `Σ_n e^{n λ} c_n`, with the powers generated by a recurrence that is
/// re-seeded from `exp(n λ)` every 64 steps to bound the round-off drift.
fn power_dot(lambda: Complex64, c: &[Complex64]) -> Complex64 {
    let step = lambda.exp();
    let mut acc = Complex64::new(0.0, 0.0);
    let mut w = Complex64::new(1.0, 0.0);
    for (n, cn) in c.iter().enumerate() {
        if n % 64 == 0 {
            w = (lambda * n as f64).exp();
        }
        acc += w * cn;
        w *= step;
    }
    acc
}
