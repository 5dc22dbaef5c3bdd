//! Filter diagonalisation (Mandelshtam & Taylor, J. Chem. Phys. 107, 6756
//! (1997)): poles of a signal from a small generalised eigenproblem built on a
//! local Fourier-type basis inside a frequency window.
//!
//! This file owns the construction of the signal matrices `U(p)`, the
//! splitting of wide windows into sub-windows, the regularised eigen-solve,
//! the deflation sweeps, the amplitude and error estimates, and the public
//! entry points [`filter_diagonalisation`] and
//! [`filter_diagonalisation_raw`].
//!
//! # Equations
//!
//! With `M = ⌊(N−3)/2⌋`, think of the signal as `c_n = (Φ₀, Ûⁿ Φ₀)` for a
//! complex-symmetric propagator `Û` (unconjugated product `(a, b) = aᵀb`).
//! For basis points `z_j = e^{−i2πν_j}` (`ν_j` in cycles/sample) take
//! `Ψ_j = Σ_{n=0}^{M} z_j^{−n} Ûⁿ Φ₀`. The matrices
//!
//! ```text
//! U(p)_{jj'} = (Ψ_j, Û^p Ψ_{j'}) = Σ_{n,n'=0}^{M} z_j^{−n} z_{j'}^{−n'} c_{n+n'+p},   p = 0, 1, 2,
//! ```
//!
//! use `c_0 … c_{2M+2}` only. Grouping the double sum by `s = n + n'`
//! (there are `M − |M − s| + 1` pairs with a given `s`) gives the diagonal
//!
//! ```text
//! U(p)_{jj} = Σ_{s=0}^{2M} (M − |M − s| + 1) z_j^{−s} c_{s+p}.
//! ```
//!
//! For the off-diagonal, `Û Ψ_j = z_j Ψ_j − z_j Φ₀ + z_j^{−M} Φ_{M+1}` with
//! `Φ_n = Ûⁿ Φ₀`. Evaluating `(Ψ_{j'}, Û^{p+1} Ψ_j)` once with this identity
//! applied to `Ψ_j` and once to `Ψ_{j'}` (allowed because `Û` is symmetric)
//! and subtracting gives
//!
//! ```text
//! U(p)_{jj'} = [ z_j F_{j'}(p) − z_{j'} F_j(p) − z_j^{−M} G_{j'}(p) + z_{j'}^{−M} G_j(p) ] / (z_j − z_{j'}),
//! F_j(p) = Σ_{n=0}^{M}   z_j^{−n} c_{n+p},
//! G_j(p) = Σ_{n=0}^{M−1} z_j^{−n} c_{n+M+1+p}.
//! ```
//!
//! (The `n = M` term of `G` cancels between the two `G` products, so it is
//! dropped and only `c_0 … c_{2M+2}` are read.) All the sums cost `O(M)` per
//! basis point, so the matrices cost `O(K M + K²)` for `K` basis points.
//!
//! Eigenvectors `B_k` of the pencil `U(1) B = u U(0) B` give the poles `u_k`.
//! `U(0)` is numerically singular (the basis spans more directions than the
//! signal has poles), so it is regularised by a truncated SVD
//! `U(0) ≈ W_r Σ_r V_rᴴ`; then `B = V_r y` with
//! `Σ_r⁻¹ W_rᴴ U(1) V_r y = u y`. Each `B_k` is normalised with the
//! unconjugated product, `B_kᵀ U(0) B_k = 1`, and
//!
//! ```text
//! d_k = ( Σ_j B_{jk} F_j(0) )²                       (eigenvector amplitudes),
//! δ(u_k²) = B_kᵀ U(2) B_k − u_k²                    (consistency of p = 1 and p = 2),
//! |δω_k| = |δ(u_k²)| / (2 dt |u_k|²)                 (from u² = e^{−2iω dt}),
//! error_k = |δω_k| / |ω_k|.
//! ```
//!
//! For an exact pole the two estimates of `u²` agree; for a pole that the
//! basis represents poorly they do not. (With noise the estimate is a
//! consistency measure: it can be a few times optimistic for strongly
//! damped poles.)
//!
//! # Truncation: round-off and noise floor
//!
//! The singular values `σ_i` of `U(0)` kept are those above
//! `max(svd_cutoff · σ_0, noise_factor · σ_med)`, `σ_med` being the median
//! of all of them. Fewer than half of a sub-window's directions carry
//! signal (the basis is chosen wider than the number of poles it must
//! hold), so `σ_med` measures the floor set by round-off or noise, and the
//! factor 5 lies above the spread of that floor (its largest values are
//! ~2–3 × `σ_med`). Noise-only directions, which would otherwise each
//! produce a spurious pole, are thus removed before the eigen-solve.
//!
//! # Windows
//!
//! The basis points lie on a grid of spacing `δ = 1/(ρ (M+1))` cycles/sample
//! (`ρ` = [`FdmOptions::basis_density`]; `ρ = 1` is the Fourier grid of an
//! `(M+1)`-sample record). The window `[f_min dt, f_max dt]` is cut into
//! equal sub-windows ("cores") of at most `max_basis − 2·padding` grid
//! points each, and one guard core of the same width is added beyond each
//! window edge (when it fits in the sampling band) so that modes just
//! outside the window are found and modelled. Every sub-window has
//! `padding` extra points beyond each core edge, which absorb poles just
//! outside the core. Only the poles whose frequency falls in a sub-window's
//! own core are kept from it; the two outermost cores extend to the
//! antipode of the window centre, so every frequency belongs to exactly one
//! core and the raw list shows out-of-window poles once.
//!
//! A pole whose frequency lies within its estimation error of a core
//! boundary could in principle be reported by both neighbours or by
//! neither; for the accuracies involved (≪ one grid step) this is
//! negligible and not treated.
//!
//! # Deflation
//!
//! A strong mode outside a sub-window's padded grid still leaks into its
//! basis (the overlap decays only like `1/(2π Δ)` with the distance `Δ` in
//! grid steps). Without noise that leakage keeps its own directions and is
//! modelled by edge poles; with noise it falls below the noise floor, is
//! truncated away, and biases the in-core poles (by up to ~25 Cramér–Rao
//! standard deviations in the tests). Therefore, after a first solve of
//! all sub-windows, [`FdmOptions::deflation_sweeps`] further sweeps solve
//! each sub-window again on the deflated signal
//! `c_n − Σ_p d_p u_pⁿ`, the sum running over the previous sweep's poles that
//! lie outside the sub-window's padded grid and are consistent
//! (`error ≤ 1e-2`, not growing, `|d| ≤ 10 max|c|`); for a real signal the
//! mirror poles `(ū_p, d̄_p)` are included, which removes the leakage of the
//! negative-frequency images. Cost: `1 + deflation_sweeps` solves.
//!
//! # Multi-resolution
//!
//! A pole that decays in `τ` samples carries information only over a few
//! `τ`; the rest of a long record adds noise. The record is therefore
//! analysed in a cascade of prefixes of lengths `L_0 = min_pass_len`,
//! `4 L_0, 16 L_0, …` (while `≤ N/2`) and `N`, each pass responsible for the
//! poles with `L_{i−1}/3 ≤ τ < L_i/3`, duplicates near the splits being
//! merged (see [`harminv`](crate::harminv#multi-resolution-passes)). Each pass uses its own
//! `M = ⌊(L_i − 3)/2⌋`.
//!
//! Whole-cost: `O(passes · (1 + deflation_sweeps) · (K_total M + n_sub K³))`.

use super::linalg::{eigen, thin_svd};
use super::{
    check_option, cis_cycles, least_squares_amplitudes, log_on_branch, merge_passes, pass_lengths,
    pole_log, validate_inputs, wrap_cycles, Acceptance, HarminvError, Pole,
};
use faer::Mat;
use num_complex::Complex64;
use rayon::prelude::*;

/// Fewest samples [`filter_diagonalisation`] accepts (gives `M ≥ 6`).
const MIN_LEN: usize = 16;

/// How [`filter_diagonalisation`] obtains the amplitudes `d_k`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum AmplitudeMethod {
    /// `d_k = (Σ_j B_{jk} F_j(0))²` from the normalised eigenvectors (see the
    /// module equations). Local to each sub-window, so unaffected by signal
    /// content far outside the window.
    #[default]
    Eigenvector,
    /// Least-squares refit on the whole record: the amplitudes of all poles
    /// that pass the error and growth tests and lie within the padded window
    /// minimise `Σ_{n<N} |c_n − Σ_k d_k u_k^n|²` (normal equations with the
    /// Gram matrix in closed form). Best when the window covers the signal's
    /// whole spectral content; content outside the padded window, which this
    /// fit does not model, biases the amplitudes by roughly its overlap with
    /// the fitted poles. Other raw poles keep their eigenvector amplitudes.
    LeastSquares,
}

/// Options of [`filter_diagonalisation`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FdmOptions {
    /// Basis points per Fourier bin `1/(M+1)` (`ρ`). Default `1.0`. Larger
    /// values make `U(0)` more singular without adding information.
    pub basis_density: f64,
    /// Most basis points in one sub-window, padding included. Default `120`.
    pub max_basis: usize,
    /// Basis points added beyond each edge of a sub-window's core.
    /// Default `12`. Reduced automatically when the signal is so short that
    /// the padded sub-window would wrap around the sampling band.
    pub padding: usize,
    /// Singular values of `U(0)` below `svd_cutoff · σ_max` are discarded
    /// (round-off floor; the noise floor is set by `noise_factor`).
    /// Default `1e-12`.
    pub svd_cutoff: f64,
    /// Singular values of `U(0)` below `noise_factor · σ_med` (median of all
    /// singular values of the sub-window) are discarded as noise. Default `5`.
    pub noise_factor: f64,
    /// Number of deflation sweeps after the first solve when the window has
    /// more than one sub-window (see [Deflation](crate::harminv::fdm#deflation)).
    /// Default `2`.
    pub deflation_sweeps: usize,
    /// Length of the shortest record of the multi-resolution cascade (see
    /// [`harminv`](crate::harminv#multi-resolution-passes)); `0` analyses
    /// the whole record in one pass only. Otherwise at least 32.
    /// Default `600`.
    pub min_pass_len: usize,
    /// Amplitude estimate. Default [`AmplitudeMethod::Eigenvector`].
    pub amplitudes: AmplitudeMethod,
    /// Rejection-rule thresholds used by [`filter_diagonalisation`].
    pub acceptance: Acceptance,
}

impl Default for FdmOptions {
    fn default() -> Self {
        FdmOptions {
            basis_density: 1.0,
            max_basis: 120,
            padding: 12,
            svd_cutoff: 1e-12,
            noise_factor: 5.0,
            deflation_sweeps: 2,
            min_pass_len: 600,
            amplitudes: AmplitudeMethod::Eigenvector,
            acceptance: Acceptance::default(),
        }
    }
}

impl FdmOptions {
    fn validate(&self) -> Result<(), HarminvError> {
        check_option(
            "basis_density",
            self.basis_density,
            |v| v > 0.0 && v.is_finite(),
            "must be finite and > 0",
        )?;
        if self.max_basis < 2 * self.padding + 2 {
            return Err(HarminvError::InvalidOption {
                name: "max_basis",
                value: format!("{} (padding {})", self.max_basis, self.padding),
                reason: "must be at least 2·padding + 2",
            });
        }
        check_option(
            "svd_cutoff",
            self.svd_cutoff,
            |v| v > 0.0 && v < 1.0,
            "must lie in (0, 1)",
        )?;
        check_option(
            "noise_factor",
            self.noise_factor,
            |v| v >= 0.0 && v.is_finite(),
            "must be finite and ≥ 0",
        )?;
        if self.min_pass_len != 0 && self.min_pass_len < 32 {
            return Err(HarminvError::InvalidOption {
                name: "min_pass_len",
                value: format!("{}", self.min_pass_len),
                reason: "must be 0 (single pass) or at least 32",
            });
        }
        self.acceptance.validate()
    }
}

/// Poles of `signal` (spacing `dt` s) with frequencies in `[f_min, f_max]` Hz
/// by filter diagonalisation, after the module's rejection rule
/// ([`FdmOptions::acceptance`]); sorted by frequency. An empty result is not
/// an error.
///
/// # Errors
/// Invalid `dt`, window or options; non-finite samples; fewer than 16
/// samples; a window as wide as the sampling band; a failed factorisation.
pub fn filter_diagonalisation(
    signal: &[Complex64],
    dt: f64,
    f_min: f64,
    f_max: f64,
    opts: &FdmOptions,
) -> Result<Vec<Pole>, HarminvError> {
    let raw = filter_diagonalisation_raw(signal, dt, f_min, f_max, opts)?;
    Ok(opts.acceptance.apply(&raw, signal.len(), dt, f_min, f_max))
}

/// Every pole found by filter diagonalisation before the rejection rule, for
/// diagnostics: in each pass of the multi-resolution cascade each
/// sub-window contributes the eigenvalues that fall in its own core (the
/// outermost cores cover everything outside the window); the passes are
/// merged by decay time. Sorted by frequency. Arguments and errors as for
/// [`filter_diagonalisation`].
pub fn filter_diagonalisation_raw(
    signal: &[Complex64],
    dt: f64,
    f_min: f64,
    f_max: f64,
    opts: &FdmOptions,
) -> Result<Vec<Pole>, HarminvError> {
    opts.validate()?;
    validate_inputs(signal, dt, f_min, f_max, MIN_LEN)?;
    let n = signal.len();
    let mut lens = pass_lengths(n, opts.min_pass_len);
    let passes = loop {
        let results: Result<Vec<Vec<Pole>>, HarminvError> = lens
            .iter()
            .map(|&len| fdm_pass(&signal[..len], dt, f_min, f_max, opts))
            .collect();
        match results {
            // A window too wide for the coarse grid of a short pass: analyse
            // the whole record in a single pass instead.
            Err(HarminvError::WindowTooWide { .. }) if lens.len() > 1 => lens = vec![n],
            other => break other?,
        }
    };
    let mut poles = merge_passes(passes, &lens, dt);

    if opts.amplitudes == AmplitudeMethod::LeastSquares {
        let record = (n - 1) as f64 * dt;
        let max_growth = opts.acceptance.growth_tolerance.ln_1p();
        let pad = (opts.padding as f64 + 1.0) / (opts.basis_density * ((n - 3) / 2 + 1) as f64);
        let (lo, hi) = (f_min - pad / dt, f_max + pad / dt);
        let selected: Vec<usize> = (0..poles.len())
            .filter(|&i| {
                let p = &poles[i];
                p.error <= opts.acceptance.max_error
                    && -p.decay * record <= max_growth
                    && p.freq >= lo
                    && p.freq <= hi
            })
            .collect();
        let logs: Vec<Complex64> = selected.iter().map(|&i| pole_log(&poles[i], dt)).collect();
        let amps = least_squares_amplitudes(signal, &logs)?;
        for (&i, a) in selected.iter().zip(amps) {
            poles[i].amplitude = a;
        }
    }
    Ok(poles)
}

/// One filter-diagonalisation pass over the whole of `signal`: every
/// sub-window's core poles, unsorted.
fn fdm_pass(
    signal: &[Complex64],
    dt: f64,
    f_min: f64,
    f_max: f64,
    opts: &FdmOptions,
) -> Result<Vec<Pole>, HarminvError> {
    let n = signal.len();
    let m = (n - 3) / 2;
    let layout = Layout::new(m, dt, f_min, f_max, opts)?;
    let c = &signal[..2 * m + 3];
    let solve = |c: &[Complex64], sub: &SubWindow| {
        solve_sub_window(
            c,
            m,
            dt,
            sub,
            layout.branch_centre,
            opts.svd_cutoff,
            opts.noise_factor,
        )
    };
    // Each sub-window in the caller's floating-point mode, whichever thread
    // takes it (flush-to-zero or not changes the bits where subnormals
    // occur; results must not depend on who steals the work).
    let mode = crate::fpu::current_mode();
    let first = layout
        .subs
        .par_iter()
        .map(|sub| crate::fpu::with_mode(mode, || solve(c, sub)))
        .collect::<Result<Vec<_>, _>>()?;
    if layout.subs.len() == 1 {
        return Ok(first.into_iter().flatten().collect());
    }

    // Deflation sweeps: trustworthy poles of the previous sweep (and, for a
    // real signal, their mirrors ū, d̄) that lie outside a sub-window's
    // padded basis range are subtracted before that sub-window is solved
    // again.
    let real = signal.iter().all(|x| x.im == 0.0);
    let record = (n - 1) as f64 * dt;
    let max_growth = opts.acceptance.growth_tolerance.ln_1p();
    let peak = c.iter().map(|x| x.norm()).fold(0.0, f64::max);
    let mut current = first;
    for _ in 0..opts.deflation_sweeps {
        let mut known: Vec<(Complex64, Complex64, f64)> = Vec::new();
        for p in current.iter().flatten() {
            if p.error <= DEFLATION_MAX_ERROR
                && -p.decay * record <= max_growth
                && p.amplitude.norm() <= 10.0 * peak
            {
                let log_u = pole_log(p, dt);
                known.push((log_u, p.amplitude, p.freq * dt));
                if real {
                    known.push((log_u.conj(), p.amplitude.conj(), -p.freq * dt));
                }
            }
        }
        current = layout
            .subs
            .par_iter()
            .map(|sub| {
                crate::fpu::with_mode(mode, || {
                    let mut deflated = c.to_vec();
                    for (log_u, d, nu) in &known {
                        if wrap_cycles(nu - sub.centre).abs() > sub.half_span {
                            subtract_pole(&mut deflated, *log_u, *d);
                        }
                    }
                    solve(&deflated, sub)
                })
            })
            .collect::<Result<Vec<_>, _>>()?;
    }
    Ok(current.into_iter().flatten().collect())
}

/// Consistency required of a pole before it is subtracted in a deflation
/// sweep (looser than the acceptance rule: a roughly known neighbour is
/// better removed than left to leak).
const DEFLATION_MAX_ERROR: f64 = 1e-2;

/// `c_n −= d e^{n ln u}`, powers by a recurrence re-seeded every 64 steps.
fn subtract_pole(c: &mut [Complex64], log_u: Complex64, d: Complex64) {
    let step = log_u.exp();
    let mut w = d;
    for (n, cn) in c.iter_mut().enumerate() {
        if n % 64 == 0 {
            w = d * (log_u * n as f64).exp();
        }
        *cn -= w;
        w *= step;
    }
}

/// One sub-window: its basis grid and the core whose poles it reports.
#[derive(Clone, Debug)]
struct SubWindow {
    /// Basis frequencies `ν_j` (cycles/sample).
    basis: Vec<f64>,
    /// Centre of the basis grid (cycles/sample).
    centre: f64,
    /// Half the extent of the basis grid plus half a grid step: poles within
    /// this distance of `centre` are modelled by the sub-window itself.
    half_span: f64,
    /// Core `[lo, hi)` in cycles/sample, on the branch nearest the window
    /// centre (`hi` included for the last sub-window).
    lo: f64,
    /// See `lo`.
    hi: f64,
}

/// Partition of the window into sub-windows.
struct Layout {
    subs: Vec<SubWindow>,
    /// Window centre (cycles/sample); frequencies are reported on the
    /// branch nearest to it.
    branch_centre: f64,
}

impl Layout {
    /// Equal cores tiling `[f_min dt, f_max dt]`, plus one guard core of the
    /// same width beyond each edge when they fit on the unit circle; the
    /// outermost cores extend to the antipode of the window centre, so every
    /// frequency belongs to exactly one core.
    fn new(
        m: usize,
        dt: f64,
        f_min: f64,
        f_max: f64,
        opts: &FdmOptions,
    ) -> Result<Self, HarminvError> {
        let nu_lo = f_min * dt;
        let nu_hi = f_max * dt;
        let span = nu_hi - nu_lo;
        let bins = opts.basis_density * (m + 1) as f64; // = 1/δ
        let delta = 1.0 / bins;
        // At most ⌊1/δ⌋ distinct grid points fit on the unit circle.
        let fit = bins.floor() as usize;
        if span >= 1.0 - delta {
            return Err(HarminvError::WindowTooWide {
                width: f_max - f_min,
                band: 1.0 / dt,
            });
        }
        let cap = opts.max_basis - 2 * opts.padding; // grid points per core, ≥ 2
        let n_in = ((span / (delta * (cap - 1) as f64)).ceil() as usize).max(1);
        let width = span / n_in as f64;
        let k_core = (((width / delta) * (1.0 - 1e-12)).ceil() as usize + 1).clamp(2, cap.min(fit));
        let padding = opts.padding.min(fit.saturating_sub(k_core) / 2);
        let k = k_core + 2 * padding;
        let guards = span + 2.0 * width + 2.0 * (padding as f64 + 1.0) * delta < 1.0;
        let mut edges: Vec<f64> = (0..=n_in).map(|s| nu_lo + s as f64 * width).collect();
        edges[n_in] = nu_hi;
        if guards {
            edges.insert(0, nu_lo - width);
            edges.push(nu_hi + width);
        }
        let branch_centre = 0.5 * (nu_lo + nu_hi);
        let n_sub = edges.len() - 1;
        let subs = (0..n_sub)
            .map(|s| {
                let (a, b) = (edges[s], edges[s + 1]);
                let centre = 0.5 * (a + b);
                let basis: Vec<f64> = (0..k)
                    .map(|j| centre + (j as f64 - 0.5 * (k - 1) as f64) * delta)
                    .collect();
                SubWindow {
                    basis,
                    centre,
                    half_span: 0.5 * k as f64 * delta,
                    lo: if s == 0 { branch_centre - 0.5 } else { a },
                    hi: if s + 1 == n_sub {
                        branch_centre + 0.5
                    } else {
                        b
                    },
                }
            })
            .collect();
        Ok(Layout {
            subs,
            branch_centre,
        })
    }
}

/// The `O(M)` sums of one basis point `z = e^{−i2πν}` (see module docs).
#[derive(Clone, Copy, Debug)]
struct BasisSums {
    /// `z`.
    z: Complex64,
    /// `z^{−M}`.
    z_neg_m: Complex64,
    /// `F(p) = Σ_{n=0}^{M} z^{−n} c_{n+p}`.
    f: [Complex64; 3],
    /// `G(p) = Σ_{n=0}^{M−1} z^{−n} c_{n+M+1+p}`.
    g: [Complex64; 3],
    /// `U(p)_{jj} = Σ_{s=0}^{2M} (M − |M − s| + 1) z^{−s} c_{s+p}`.
    diag: [Complex64; 3],
}

/// Evaluates [`BasisSums`] in one pass over `s = 0 … 2M`. The powers
/// `z^{−s} = e^{i2πνs}` come from a recurrence re-seeded exactly every 64
/// steps; `G` is accumulated as `Σ_{s=M+1}^{2M} z^{−s} c_{s+p}` and multiplied
/// by `z^{M+1}` at the end.
fn basis_sums(c: &[Complex64], m: usize, nu: f64) -> BasisSums {
    let zero = Complex64::new(0.0, 0.0);
    let step = cis_cycles(nu);
    let mut f = [zero; 3];
    let mut g = [zero; 3];
    let mut diag = [zero; 3];
    let mut w = Complex64::new(1.0, 0.0);
    for s in 0..=2 * m {
        if s % 64 == 0 {
            w = cis_cycles(nu * s as f64);
        }
        let weight = (m + 1 - m.abs_diff(s)) as f64;
        let t = [w * c[s], w * c[s + 1], w * c[s + 2]];
        let acc = if s <= m { &mut f } else { &mut g };
        for p in 0..3 {
            acc[p] += t[p];
            diag[p] += t[p] * weight;
        }
        w *= step;
    }
    let z_m1 = cis_cycles(-nu * (m + 1) as f64);
    for gp in g.iter_mut() {
        *gp *= z_m1;
    }
    BasisSums {
        z: cis_cycles(-nu),
        z_neg_m: cis_cycles(nu * m as f64),
        f,
        g,
        diag,
    }
}

/// Assembles `U(p)` from the per-basis sums (closed forms in the module docs).
fn u_matrix(sums: &[BasisSums], p: usize) -> Mat<Complex64> {
    let k = sums.len();
    Mat::from_fn(k, k, |j, l| {
        if j == l {
            sums[j].diag[p]
        } else {
            let (a, b) = (&sums[j], &sums[l]);
            (a.z * b.f[p] - b.z * a.f[p] - a.z_neg_m * b.g[p] + b.z_neg_m * a.g[p]) / (a.z - b.z)
        }
    })
}

/// Unconjugated bilinear form `xᵀ A x`.
fn bilinear(a: &Mat<Complex64>, x: &[Complex64]) -> Complex64 {
    let mut acc = Complex64::new(0.0, 0.0);
    for (j, xj) in x.iter().enumerate() {
        let mut row = Complex64::new(0.0, 0.0);
        for (l, xl) in x.iter().enumerate() {
            row += a[(j, l)] * xl;
        }
        acc += xj * row;
    }
    acc
}

/// Solves one sub-window and returns its core poles.
fn solve_sub_window(
    c: &[Complex64],
    m: usize,
    dt: f64,
    sub: &SubWindow,
    branch_centre: f64,
    cutoff: f64,
    noise_factor: f64,
) -> Result<Vec<Pole>, HarminvError> {
    let sums: Vec<BasisSums> = sub.basis.iter().map(|&nu| basis_sums(c, m, nu)).collect();
    let (u0, u1, u2) = (u_matrix(&sums, 0), u_matrix(&sums, 1), u_matrix(&sums, 2));
    let k = sums.len();
    let svd = thin_svd(u0.as_ref(), "filter diagonalisation: SVD of U(0)")?;
    let s0 = svd.s.first().copied().unwrap_or(0.0);
    if !s0.is_finite() || s0 <= 0.0 {
        return Ok(Vec::new());
    }
    let median = svd.s[k / 2];
    let floor = (cutoff * s0).max(noise_factor * median);
    let r = svd.s.iter().take_while(|&&s| s > floor).count();
    // T = U(1) V_r, then A = Σ_r⁻¹ W_rᴴ T.
    let t = Mat::from_fn(k, r, |j, q| {
        let mut acc = Complex64::new(0.0, 0.0);
        for l in 0..k {
            acc += u1[(j, l)] * svd.v[(l, q)];
        }
        acc
    });
    let a = Mat::from_fn(r, r, |i, q| {
        let mut acc = Complex64::new(0.0, 0.0);
        for j in 0..k {
            acc += svd.u[(j, i)].conj() * t[(j, q)];
        }
        acc / svd.s[i]
    });
    let (vals, y) = eigen(a.as_ref(), "filter diagonalisation: eigenproblem")?;

    let mut out = Vec::new();
    for (q, &u) in vals.iter().enumerate() {
        if !(u.norm() > 0.0 && u.is_finite()) {
            continue;
        }
        // B_q = V_r y_q.
        let mut b: Vec<Complex64> = (0..k)
            .map(|j| (0..r).map(|i| svd.v[(j, i)] * y[(i, q)]).sum())
            .collect();
        let norm2 = bilinear(&u0, &b);
        if !(norm2.norm() > 0.0 && norm2.is_finite()) {
            continue;
        }
        let scale = norm2.sqrt().inv();
        for bj in b.iter_mut() {
            *bj *= scale;
        }
        let proj: Complex64 = b.iter().zip(&sums).map(|(bj, sj)| bj * sj.f[0]).sum();
        let amplitude = proj * proj;
        let u_sq_2 = bilinear(&u2, &b);
        let abs_err = (u_sq_2 - u * u).norm() / (2.0 * dt * u.norm_sqr());
        let log_u = log_on_branch(u, branch_centre);
        let nu = -log_u.im / (2.0 * std::f64::consts::PI);
        if nu >= sub.lo && (nu < sub.hi || (nu == sub.hi && sub.hi == branch_centre + 0.5)) {
            out.push(Pole::from_log(log_u, dt, amplitude, abs_err));
        }
    }
    Ok(out)
}

#[cfg(test)]
mod closed_form_tests {
    use super::*;

    /// The closed forms for `U(p)` must reproduce the defining double sum.
    /// Tolerance 1e-12 relative to the largest element: both evaluate sums
    /// of ~M² terms of unit size in double precision.
    #[test]
    fn closed_form_matches_double_sum() {
        let m = 20;
        let c: Vec<Complex64> = (0..2 * m + 3)
            .map(|n| {
                let t = n as f64;
                Complex64::from_polar(1.0, -0.7 * t) * (-0.01 * t).exp()
                    + Complex64::from_polar(0.3, 1.9 * t + 0.4) * (-0.05 * t).exp()
            })
            .collect();
        let basis = [0.08, 0.1, 0.12, 0.31, 0.305];
        let sums: Vec<BasisSums> = basis.iter().map(|&nu| basis_sums(&c, m, nu)).collect();
        for p in 0..3 {
            let u = u_matrix(&sums, p);
            let mut max_err: f64 = 0.0;
            let mut max_val: f64 = 0.0;
            for (j, &nj) in basis.iter().enumerate() {
                for (l, &nl) in basis.iter().enumerate() {
                    let mut direct = Complex64::new(0.0, 0.0);
                    for a in 0..=m {
                        for b in 0..=m {
                            direct += cis_cycles(nj * a as f64 + nl * b as f64) * c[a + b + p];
                        }
                    }
                    max_err = max_err.max((direct - u[(j, l)]).norm());
                    max_val = max_val.max(direct.norm());
                }
            }
            eprintln!(
                "U({p}) closed form vs double sum: max rel diff {:.2e}",
                max_err / max_val
            );
            assert!(max_err <= 1e-12 * max_val);
        }
    }
}
