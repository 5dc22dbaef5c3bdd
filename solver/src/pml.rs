//! Perfectly matched layers on the outer radius and the z planes, for
//! cylindrical waves.
//!
//! # Formulation
//! The absorber is a complex stretching of the coordinate normal to its wall
//! (engineering time convention e^{jωt}):
//!
//! ```text
//! s_z(z) = 1 + σ_z(z)/(α + jωε0),     s_r(r) = 1 + σ_r(r)/(α + jωε0),
//! r̃ = ∫₀^r s_r dr' = r · s̄_r,        s̄_r = 1 + σ̄_r/(α + jωε0),  σ̄_r = (1/r)∫₀^r σ_r dr'.
//! ```
//!
//! In the stretched coordinates every ∂/∂z becomes (1/s_z)∂/∂z, every ∂/∂r
//! becomes (1/s_r)∂/∂r, and every 1/r — the m/r terms and the r E_φ, r H_φ of
//! the axial curl — becomes 1/r̃ = (1/r)(1/s̄_r) (Teixeira & Chew, IEEE MGWL
//! 7(11), 1997). The 1/r terms therefore take their own, averaged profile
//! σ̄_r: using the local σ_r for them (a Cartesian-style layer) would
//! reflect cylindrical waves. With α constant over the layer, σ̄_r keeps the
//! form of a stretching factor exactly.
//!
//! The kernel's radial FIT difference splits exactly as
//! (r_{i+1}u_{i+1} − r_i u_i)/(r_{i+½}Δr) = (u_{i+1} − u_i)/Δr + (u_{i+1} + u_i)/(2 r_{i+½}),
//! a derivative (stretched by s_r) plus a 1/r term (stretched by s̄_r).
//!
//! # Discrete stretching
//! The radial layer is finite integration in the stretched coordinate: with
//! I(r) = ∫₀^r σ_r dr' and p = α + jωε0, every row, integer or half, sits
//! at r̃ = r + I(r)/p. Every length is a difference of r̃ (primal
//! Δr̃_{i+½} = r̃_{i+1} − r̃_i, dual Δr̃_i = r̃_{i+½} − r̃_{i−½}: σ averaged
//! exactly over the cell), every face's circumference is r̃ of its row, and
//! the two axial faces take their exact stretched areas ∫ r̃ dr̃:
//!
//! ```text
//! H_z: (r̃_{i+1}u_{i+1} − r̃_i u_i)/(r̂ Δr̃) = (u_{i+1} − u_i)/Δr̃ + (u_{i+1} + u_i)/(2r̂),
//!      r̂ = (r̃_i + r̃_{i+1})/2, and its m term m/r̂;
//! E_z: (r̃_{i+½}u_{i+½} − r̃_{i−½}u_{i−½})/(r̄_i Δr̃_i) = (u_{i+½} − u_{i−½})/Δr̃_i + (u_{i+½} + u_{i−½})/(2r̄_i),
//!      r̄_i = (r̃_{i+½} + r̃_{i−½})/2, and its m term m/r̄_i.
//! ```
//!
//! Kept exact, the discrete curl of a discrete gradient is still zero
//! inside the layer (the areas only scale each equation); an approximate
//! split (σ sampled at nodes) breaks it, and static fields then grow slowly
//! in the layer for m ≥ 1. Taking r̃_{i+½} and r̃_i for those areas instead
//! (as an earlier version did) is consistent too, but it scales each axial
//! equation by a complex factor r̂/r̃_{i+½} that differs from 1 by
//! O(Δr² I''/(p r)): a mismatch largest where the layer is near the axis,
//! and 2–5 dB of reflection. Each factor — r/r̃, the length stretches
//! Δr/Δr̃, the area factors r/r̂ and r/r̄ — has the form 1/(1 + S/p) with S
//! the row's I/r or its mean σ.
//!
//! # Time domain
//! A term X multiplied by 1 + C/(p + D) becomes X + ψ with a recursive
//! convolution. The z layers use Roden & Gedney's (MOTL 27(5), 2000, κ = 1;
//! 1/s is C = −σ, D = σ), X held constant over the step:
//!
//! ```text
//! ψ ← b ψ + a X,   b = exp(−(α + D)Δt/ε0),   a = C/(α + D) · (1 − b).
//! ```
//!
//! That is first order in Δt, and the radial layer needs better: it uses
//! the piecewise-linear form (X linear over the step; `linear_factors`),
//! carried as one state per term, ζ ← bζ + aX, ψ = ζ − cX. With it and the
//! exact areas the radial layer's reflection fell from −51 … −54 dB to
//! −65.7 … −66.2 dB at 16 cells where it is near the axis (DEVELOPERS.md,
//! "Absorbers"); the same form in the z layers reflected at −38 dB, so they
//! keep the constant one.
//!
//! The bulk kernel computes X everywhere; [`Pml::correct_h`] and
//! [`Pml::correct_e`] then, in the layers only, recompute each stretched term,
//! advance its ψ and add it with the term's own factor. Outside the layers σ =
//! 0, so nothing changes there. [`crate::kernel::step`] applies the same
//! corrections row by row right after each row's bulk update, with the same
//! bits.
//!
//! # Storage
//! Every ψ is stored by grid row with `j` contiguous: the z layers keep, per
//! row, the columns where their σ is non-zero, widened into the interior to
//! a whole number of vector lanes (bottom layer first), the radial
//! layer whole rows of its own rows. Each row's corrections are then loops
//! over contiguous slices, like the bulk update. The stretching is a property of the
//! coordinates, not of the material, so bodies may run into the layer (a
//! ground plane or a substrate reaching the absorber).
use crate::boundary::{Absorber, Walls};
use crate::coefficients::Coefficients;
use crate::consts::{EPS0, ETA0};
use crate::fields::Fields;
use crate::kernel::{e_half_step, h_half_step, EFields, HFields, Rows};
use lathe_mesh::Grid;
use std::f64::consts::PI;

/// Recursive-convolution factors (b, a) of the z layers for conductivity σ
/// and shift α: the factor 1/s = 1 − σ/(p + σ), p = α + jωε0, in time
/// X ↦ X + ψ with ψ ← bψ + aX, b = exp(−(α + σ)Δt/ε0),
/// a = −σ/(α + σ)·(1 − b) (Roden & Gedney's recursion: X held constant over
/// the step). Zero when σ = 0.
fn factors(sigma: f64, alpha: f64, dt: f64) -> (f64, f64) {
    if sigma == 0.0 {
        return (0.0, 0.0);
    }
    let b = (-(alpha + sigma) * dt / EPS0).exp();
    (b, -sigma / (alpha + sigma) * (1.0 - b))
}

/// Factors (b, a, c) of the radial layer's recursion for the factor
/// 1/(1 + S/p) = 1 − S/(p + S), p = α + jωε0, with X taken linear in time
/// over each step (the piecewise-linear recursive convolution of Kelley &
/// Luebbers, IEEE T-AP 44(6), 1996, written for this factor):
///
/// ```text
/// ψⁿ = b ψⁿ⁻¹ + w₁ Xⁿ + w₀ Xⁿ⁻¹,   b = e^{−x},  x = (α + S)Δt/ε0,
/// w₁ = A q,  w₀ = A (1 − q),  A = −S/(α + S)·(1 − b),  q = 1/(1 − b) − 1/x,
/// ```
///
/// carried as one state per term, ζ = ψ + c X with c = w₀/b: ζ ← bζ + aX,
/// a = w₁ + c, and ψ = ζ − cX. Second order in Δt where the z layers'
/// recursion is first order; in the radial layer that is worth 10 dB at
/// small kr (DEVELOPERS.md, "Absorbers"). Zero when S = 0.
fn linear_factors(s: f64, alpha: f64, dt: f64) -> Lin {
    if s == 0.0 {
        return (0.0, 0.0, 0.0);
    }
    let x = (alpha + s) * dt / EPS0;
    let b = (-x).exp();
    let big_a = -s / (alpha + s) * (1.0 - b);
    // Where the kernel dies within a small fraction of a step (a thin layer
    // of great conductivity, x up to ~40 for 4 cells graded for 1e-16), c ≈
    // A eˣ/x and ζ − cX would cancel to nothing; there only the present X
    // counts, and the constant-X form is as accurate.
    if x > 12.0 {
        return (b, big_a, 0.0);
    }
    // q → ½ + x/12 as x → 0 (its series), where the closed form cancels.
    let q = if x < 1e-4 {
        0.5 + x / 12.0
    } else {
        1.0 / (1.0 - b) - 1.0 / x
    };
    let c = big_a * (1.0 - q) / b;
    (b, big_a * q + c, c)
}

/// The radial layer's (b, a, c) of one term: see [`linear_factors`].
type Lin = (f64, f64, f64);

/// The radial conductivity profile is graded for the square of the design
/// reflection (twice σ_max of [`sigma_max`]): with the second-order
/// recursion the radial layer then reflects least. Measured with
/// `solver/tests/pml_reflection.rs` (16 cells, m = 0 … 3, layer faces at 25
/// and 9 mm; worst case): factor 1 −60.1 dB, 1.5 −64.8, 2 −65.7, 2.5
/// −61.8, 3 −59.6. More conductivity reflects more from the grading where
/// the layer is near the axis; less leaves the top of the band
/// under-absorbed.
const RADIAL_GRADING: f64 = 2.0;

/// A run of columns `lo..hi` of a z layer whose ψ sits at `off..` in each
/// row of the layer's auxiliary fields.
#[derive(Debug, Clone, Copy)]
struct Segment {
    lo: usize,
    hi: usize,
    off: usize,
}

/// The radial layer's factors (b, a, c) (see [`linear_factors`]), by
/// absolute row index.
#[derive(Debug, Clone)]
struct Radial {
    /// First row (integer and half) of the layer.
    first: usize,
    /// r/r̃ (the m/r̃ terms of H_r) at integer rows 0..=nr.
    bar_int: Vec<Lin>,
    /// r/r̃ (the m/r̃ term of E_r) at half rows 0..nr.
    bar_half: Vec<Lin>,
    /// The dual-length stretch Δr/Δr̃ at integer rows.
    len_int: Vec<Lin>,
    /// The primal-length stretch Δr/Δr̃ at half rows.
    len_half: Vec<Lin>,
    /// r/r̄_i (E_z's 1/r terms; r̄_i Δr̃_i the stretched dual area) at
    /// integer rows.
    hat_int: Vec<Lin>,
    /// r/r̂ (H_z's 1/r terms; r̂ Δr̃ the stretched primal area) at half
    /// rows.
    hat_half: Vec<Lin>,
}

/// The fixed part of the absorbers: profiles and where they act.
#[derive(Debug, Clone)]
pub(crate) struct PmlParams {
    /// b and a of 1/s_z at integer positions j = 0..=nz.
    zb_int: Vec<f64>,
    za_int: Vec<f64>,
    /// b and a of 1/s_z at half positions j + ½, j = 0..nz.
    zb_half: Vec<f64>,
    za_half: Vec<f64>,
    /// Columns of the z layers in the H update (half positions) and in the
    /// E update (integer positions, the terminating PEC nodes excluded).
    zh: Vec<Segment>,
    ze: Vec<Segment>,
    radial: Option<Radial>,
}

/// The auxiliary fields ψ, each row-major with `j` contiguous.
#[derive(Debug, Clone)]
struct PsiState {
    /// z layers, rows 0..nr, `wh` (H) or `we` (E) columns per row.
    wh: usize,
    we: usize,
    hr_z: Vec<f64>,   // ∂z e_φ in the H_r update
    hphi_z: Vec<f64>, // ∂z e_r in the H_φ update
    er_z: Vec<f64>,   // ∂z h_φ in the E_r update
    ephi_z: Vec<f64>, // ∂z h_r in the E_φ update
    /// Radial layer, rows `first..nr`.
    first: usize,
    hr_bar: Vec<f64>, // (m/r) e_z
    hphi_d: Vec<f64>, // ∂r e_z
    hz_d: Vec<f64>,   // ∂r e_φ
    hz_bar: Vec<f64>, // (e_φ avg + m e_r)/r
    er_bar: Vec<f64>, // (m/r) h_z
    ephi_d: Vec<f64>, // ∂r h_z
    ez_d: Vec<f64>,   // ∂r h_φ
    ez_bar: Vec<f64>, // h_φ avg / r − (m/r) h_r
}

/// The absorbers of one run with their auxiliary fields.
#[derive(Debug, Clone)]
pub struct Pml {
    params: PmlParams,
    psi: PsiState,
    nz: usize,
}

/// The auxiliary fields of the H half step, split by row.
pub(crate) struct HPsi<'a> {
    hr_z: Rows<'a>,
    hphi_z: Rows<'a>,
    hr_bar: Rows<'a>,
    hphi_d: Rows<'a>,
    hz_d: Rows<'a>,
    hz_bar: Rows<'a>,
}

/// The auxiliary fields of the E half step, split by row.
pub(crate) struct EPsi<'a> {
    er_z: Rows<'a>,
    ephi_z: Rows<'a>,
    er_bar: Rows<'a>,
    ephi_d: Rows<'a>,
    ez_d: Rows<'a>,
    ez_bar: Rows<'a>,
}

macro_rules! split_rows {
    ($t:ident, $($f:ident),*) => {
        impl<'a> $t<'a> {
            /// No absorber.
            pub(crate) fn none() -> $t<'a> {
                $t { $($f: Rows::none()),* }
            }
            /// The same rows, borrowed for a shorter time.
            pub(crate) fn reborrow(&mut self) -> $t<'_> {
                $t { $($f: self.$f.reborrow()),* }
            }
            /// Rows before `i` and from `i` on.
            pub(crate) fn split_at(self, i: usize) -> ($t<'a>, $t<'a>) {
                $(let $f = self.$f.split_at(i);)*
                ($t { $($f: $f.0),* }, $t { $($f: $f.1),* })
            }
        }
    };
}
split_rows!(HPsi, hr_z, hphi_z, hr_bar, hphi_d, hz_d, hz_bar);
split_rows!(EPsi, er_z, ephi_z, er_bar, ephi_d, ez_d, ez_bar);

/// σ_max of an absorber of thickness `d` metres.
fn sigma_max(a: &Absorber, d: f64) -> f64 {
    -(a.order + 1.0) * a.reflection.ln() / (2.0 * ETA0 * d)
}

/// The columns of `range` where `a` is non-zero (they are contiguous: σ
/// grows monotonically into each layer), as a segment at `off`.
fn segment(a: &[f64], range: std::ops::Range<usize>, off: usize) -> Option<Segment> {
    let on: Vec<usize> = range.filter(|&j| a[j] != 0.0).collect();
    let (&lo, &last) = (on.first()?, on.last()?);
    debug_assert_eq!(on.len(), last + 1 - lo, "expected a contiguous layer");
    Some(Segment {
        lo,
        hi: last + 1,
        off,
    })
}

/// Columns a z layer's loops take at once: the eight lanes of a 512-bit
/// vector of f64 (two of a 256-bit one).
const LANES: usize = 8;

/// `s` widened toward the interior (upward for the bottom layer) over
/// columns within `allowed` where `a` is zero, until its length is a
/// multiple of [`LANES`] or no such column is left: the loops over a layer's
/// columns then run in whole vectors, without a scalar remainder. On an
/// added column b = a = 0, so its ψ stays zero and the field gains s·0
/// (which changes at most the sign of a field that is exactly zero).
fn widen(mut s: Segment, a: &[f64], allowed: std::ops::Range<usize>, at_bottom: bool) -> Segment {
    while (s.hi - s.lo) % LANES != 0 {
        if at_bottom && s.hi < allowed.end && a[s.hi] == 0.0 {
            s.hi += 1;
        } else if !at_bottom && s.lo > allowed.start && a[s.lo - 1] == 0.0 {
            s.lo -= 1;
        } else {
            break;
        }
    }
    s
}

impl Pml {
    /// The absorbers of `walls` on `grid` for time step `dt`, or `None` when
    /// no wall absorbs.
    pub fn new(grid: &Grid, walls: &Walls, dt: f64) -> Option<Pml> {
        let (nr, nz) = (grid.nr, grid.nz);
        let (bot, top, out) = (
            walls.bottom.absorber(),
            walls.top.absorber(),
            walls.outer.absorber(),
        );
        if bot.is_none() && top.is_none() && out.is_none() {
            return None;
        }
        // z profile: σ from each absorbing end, over its depth.
        let zsig = |z_idx: f64| -> (f64, f64) {
            let mut s = 0.0;
            let mut alpha = 0.0;
            if let Some(a) = bot {
                let d = a.cells as f64;
                let depth = (d - z_idx) / d;
                if depth > 0.0 {
                    s += sigma_max(&a, d * grid.dz) * depth.powf(a.order);
                    alpha = 2.0 * PI * EPS0 * a.shift_hz;
                }
            }
            if let Some(a) = top {
                let d = a.cells as f64;
                let depth = (z_idx - (nz as f64 - d)) / d;
                if depth > 0.0 {
                    s += sigma_max(&a, d * grid.dz) * depth.powf(a.order);
                    alpha = 2.0 * PI * EPS0 * a.shift_hz;
                }
            }
            (s, alpha)
        };
        let z_int: Vec<(f64, f64)> = (0..=nz)
            .map(|j| {
                let (s, al) = zsig(j as f64);
                factors(s, al, dt)
            })
            .collect();
        let z_half: Vec<(f64, f64)> = (0..nz)
            .map(|j| {
                let (s, al) = zsig(j as f64 + 0.5);
                factors(s, al, dt)
            })
            .collect();
        // Radial layer, discretised as finite integration in the stretched
        // coordinate r̃ (see the module docs, "Discrete stretching"):
        // r̃ = r + I(r)/p at every row, integer and half, with
        // I(r) = ∫₀^r σ_r dr' exact.
        let radial = out.map(|a| {
            let d = a.cells.min(nr) as f64;
            let r0 = nr as f64 - d; // the layer starts at this integer row
            let smax = RADIAL_GRADING * sigma_max(&a, d * grid.dr);
            let alpha = 2.0 * PI * EPS0 * a.shift_hz;
            let dr = grid.dr;
            // I at position x (in cells).
            let big_i = |x: f64| {
                let depth = ((x - r0) / d).max(0.0);
                smax * d * dr / (a.order + 1.0) * depth.powf(a.order + 1.0)
            };
            let at_int = |i: usize| big_i(i as f64);
            let at_half = |i: usize| big_i(i as f64 + 0.5);
            let r_int = |i: usize| i as f64 * dr;
            let r_half = |i: usize| (i as f64 + 0.5) * dr;
            let f = |s: f64| linear_factors(s, alpha, dt);
            // r/r̃ = 1/(1 + (I/r)/p).
            let bar_int = (0..=nr)
                .map(|i| f(if i == 0 { 0.0 } else { at_int(i) / r_int(i) }))
                .collect();
            let bar_half = (0..nr).map(|i| f(at_half(i) / r_half(i))).collect();
            // Lengths: primal Δr̃_{i+½} = r̃_{i+1} − r̃_i, dual Δr̃_i = r̃_{i+½} − r̃_{i−½}.
            let len_int = (0..=nr)
                .map(|i| {
                    let lo = if i == 0 { 0.0 } else { at_half(i - 1) };
                    f((at_half(i) - lo) / dr)
                })
                .collect();
            let len_half = (0..nr)
                .map(|i| f((at_int(i + 1) - at_int(i)) / dr))
                .collect();
            // Areas: E_z's r̄_i = (r̃_{i+½} + r̃_{i−½})/2, H_z's
            // r̂ = (r̃_i + r̃_{i+1})/2, each r + J/p with J the mean of I.
            let hat_int = (0..=nr)
                .map(|i| {
                    if i == 0 {
                        return (0.0, 0.0, 0.0);
                    }
                    f(0.5 * (at_half(i) + at_half(i - 1)) / r_int(i))
                })
                .collect();
            let hat_half = (0..nr)
                .map(|i| f(0.5 * (at_int(i) + at_int(i + 1)) / r_half(i)))
                .collect();
            Radial {
                first: nr - a.cells.min(nr),
                bar_int,
                bar_half,
                len_int,
                len_half,
                hat_int,
                hat_half,
            }
        });
        let (zb_int, za_int): (Vec<f64>, Vec<f64>) = z_int.into_iter().unzip();
        let (zb_half, za_half): (Vec<f64>, Vec<f64>) = z_half.into_iter().unzip();
        // Columns of each z layer: bottom [0, c] integer and [0, c) half,
        // top [nz − c, nz] and [nz − c, nz); the terminating PEC nodes
        // j = 0, nz are held and take no correction.
        let (mut zh, mut ze) = (Vec::new(), Vec::new());
        let (mut wh, mut we) = (0, 0);
        for (a, at_bottom) in [(bot, true), (top, false)] {
            let Some(a) = a else { continue };
            let c = a.cells.min(nz);
            let (ints, halves) = if at_bottom {
                (0..c + 1, 0..c)
            } else {
                (nz - c..nz + 1, nz - c..nz)
            };
            if let Some(s) = segment(&za_half, halves, wh) {
                let s = widen(s, &za_half, 0..nz, at_bottom);
                wh += s.hi - s.lo;
                zh.push(s);
            }
            let ints = ints.start.max(1)..ints.end.min(nz);
            if let Some(s) = segment(&za_int, ints, we) {
                let s = widen(s, &za_int, 1..nz, at_bottom);
                we += s.hi - s.lo;
                ze.push(s);
            }
        }
        let first = radial.as_ref().map_or(nr, |r| r.first);
        let nj1 = nz + 1;
        let rows = nr - first;
        let psi = PsiState {
            wh,
            we,
            hr_z: vec![0.0; nr * wh],
            hphi_z: vec![0.0; nr * wh],
            er_z: vec![0.0; nr * we],
            ephi_z: vec![0.0; nr * we],
            first,
            hr_bar: vec![0.0; rows * nz],
            hphi_d: vec![0.0; rows * nz],
            hz_d: vec![0.0; rows * nj1],
            hz_bar: vec![0.0; rows * nj1],
            er_bar: vec![0.0; rows * nj1],
            ephi_d: vec![0.0; rows * nj1],
            ez_d: vec![0.0; rows * nz],
            ez_bar: vec![0.0; rows * nz],
        };
        Some(Pml {
            params: PmlParams {
                zb_int,
                za_int,
                zb_half,
                za_half,
                zh,
                ze,
                radial,
            },
            psi,
            nz,
        })
    }

    /// The factors of the absorbers' recursions.
    pub(crate) fn params(&self) -> &PmlParams {
        &self.params
    }

    /// Bytes held by the auxiliary fields.
    pub fn bytes(&self) -> usize {
        let p = &self.psi;
        8 * [
            &p.hr_z, &p.hphi_z, &p.er_z, &p.ephi_z, &p.hr_bar, &p.hphi_d, &p.hz_d, &p.hz_bar,
            &p.er_bar, &p.ephi_d, &p.ez_d, &p.ez_bar,
        ]
        .iter()
        .map(|v| v.len())
        .sum::<usize>()
    }

    /// Adds the stretched-coordinate corrections to H after [`crate::kernel::update_h`].
    pub fn correct_h(&mut self, f: &mut Fields, c: &Coefficients) {
        h_half_step(f, c, Some(self), false, None);
    }

    /// Adds the stretched-coordinate corrections to E after [`crate::kernel::update_e`].
    pub fn correct_e(&mut self, f: &mut Fields, c: &Coefficients) {
        e_half_step(f, c, Some(self), false, None);
    }

    /// The factors and the H half step's auxiliary fields by row.
    pub(crate) fn split_h(&mut self) -> (&PmlParams, HPsi<'_>) {
        let (p, h, _) = self.split_both();
        (p, h)
    }

    /// The factors and the E half step's auxiliary fields by row.
    pub(crate) fn split_e(&mut self) -> (&PmlParams, EPsi<'_>) {
        let (p, _, e) = self.split_both();
        (p, e)
    }

    /// The factors and both half steps' auxiliary fields by row (they are
    /// separate arrays: a member of a stepping team holds its rows of both
    /// through many steps).
    pub(crate) fn split_both(&mut self) -> (&PmlParams, HPsi<'_>, EPsi<'_>) {
        let (nz, nj1) = (self.nz, self.nz + 1);
        let p = &mut self.psi;
        let first = p.first;
        (
            &self.params,
            HPsi {
                hr_z: Rows::new(&mut p.hr_z, p.wh, 0),
                hphi_z: Rows::new(&mut p.hphi_z, p.wh, 0),
                hr_bar: Rows::new(&mut p.hr_bar, nz, first),
                hphi_d: Rows::new(&mut p.hphi_d, nz, first),
                hz_d: Rows::new(&mut p.hz_d, nj1, first),
                hz_bar: Rows::new(&mut p.hz_bar, nj1, first),
            },
            EPsi {
                er_z: Rows::new(&mut p.er_z, p.we, 0),
                ephi_z: Rows::new(&mut p.ephi_z, p.we, 0),
                er_bar: Rows::new(&mut p.er_bar, nj1, first),
                ephi_d: Rows::new(&mut p.ephi_d, nj1, first),
                ez_d: Rows::new(&mut p.ez_d, nz, first),
                ez_bar: Rows::new(&mut p.ez_bar, nz, first),
            },
        )
    }
}

impl PmlParams {
    /// The first row of the radial layer, if there is one (its rows carry
    /// the most auxiliary terms; see [`crate::kernel`]'s row split).
    pub(crate) fn radial_first(&self) -> Option<usize> {
        self.radial.as_ref().map(|r| r.first)
    }

    /// The absorber's terms of H row `i` (H_r, H_φ, H_z; `hr` is `None`
    /// on the rows H_r does not update), added after its bulk update: the
    /// z layers' segments in order, then the radial layer's terms.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn h_row(
        &self,
        i: usize,
        c: &Coefficients,
        e: &EFields,
        mut hr: Option<&mut [f64]>,
        hphi: &mut [f64],
        hz: &mut [f64],
        psi: &mut HPsi,
    ) {
        let (nz, nj1) = (c.nz, c.nz + 1);
        let (ch, idr, idz) = (c.ch, c.inv_dr, c.inv_dz);
        let er = &e.er[i * nj1..(i + 1) * nj1];
        let ep = &e.ephi[i * nj1..(i + 1) * nj1];
        let ez = &e.ez[i * nz..(i + 1) * nz];
        if !self.zh.is_empty() {
            let p_hr = psi.hr_z.row(i).expect("a z-layer row");
            let p_hp = psi.hphi_z.row(i).expect("a z-layer row");
            for s in &self.zh {
                let (lo, hi, off) = (s.lo, s.hi, s.off);
                let n = hi - lo;
                let (b, a) = (&self.zb_half[lo..hi], &self.za_half[lo..hi]);
                // μ ∂t h_φ ∋ −∂z e_r, and μ ∂t h_r ∋ ∂z e_φ (rows 1..nr).
                let (w0, w1) = (&er[lo..hi], &er[lo + 1..hi + 1]);
                let (u, pu) = (&mut hphi[lo..hi], &mut p_hp[off..off + n]);
                match hr.as_deref_mut() {
                    Some(hr) => {
                        let (v0, v1) = (&ep[lo..hi], &ep[lo + 1..hi + 1]);
                        let (v, pv) = (&mut hr[lo..hi], &mut p_hr[off..off + n]);
                        let w = ((w0, w1), (v0, v1));
                        diff2::<f64, true, false>(u, pu, v, pv, w.0, w.1, (ch, ch), idz, b, a);
                    }
                    None => diff::<f64, true>(u, pu, w0, w1, idz, b, a, ch),
                }
            }
        }
        let Some(l) = &self.radial else { return };
        if i < l.first {
            return;
        }
        // μ ∂t h_r ∋ (m/r) e_z, stretched by r/r̃ (nothing for m = 0: its ψ
        // stays zero).
        if let (Some(hr), true) = (hr, c.m != 0) {
            let f = l.bar_int[i];
            if f.1 != 0.0 {
                let p = psi.hr_bar.row(i).expect("a radial row");
                scaled::<f64, false>(&mut hr[..nz], p, ez, c.m_over_r_int[i], f, ch);
            }
        }
        let ez1 = &e.ez[(i + 1) * nz..(i + 2) * nz];
        let ep1 = &e.ephi[(i + 1) * nj1..(i + 2) * nj1];
        let fd = l.len_half[i];
        // μ ∂t h_φ ∋ ∂r e_z, stretched by Δr/Δr̃.
        if fd.1 != 0.0 {
            let p = psi.hphi_d.row(i).expect("a radial row");
            radial_diff::<f64, false>(&mut hphi[..nz], p, ez, ez1, idr, fd, ch);
        }
        // μ ∂t h_z ∋ −∂r e_φ, stretched by Δr/Δr̃; then
        // μ ∂t h_z ∋ −(e_φ avg + m e_r)/r, stretched by r/r̂.
        let fh = l.hat_half[i];
        let r = (i as f64 + 0.5) / idr;
        let t = (c.m_over_r_half[i], er);
        let hz = &mut hz[..nj1];
        let pd = psi.hz_d.row(i).expect("a radial row");
        let pb = psi.hz_bar.row(i).expect("a radial row");
        match (fd.1 != 0.0, fh.1 != 0.0) {
            (true, true) => {
                diff_bar::<f64, true, false>(hz, pd, pb, ep, ep1, idr, r, t, (fd, fh), ch)
            }
            (true, false) => radial_diff::<f64, true>(hz, pd, ep, ep1, idr, fd, ch),
            (false, true) => bar::<f64, true, false>(hz, pb, ep, ep1, r, t, fh, ch),
            (false, false) => {}
        }
    }

    /// The absorber's terms of E row `i` (E_r, E_φ, E_z; `ephi` is `None`
    /// on the rows E_φ does not update), added after its bulk update and
    /// coupling: the z layers' segments in order, then the radial layer's
    /// terms.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn e_row(
        &self,
        i: usize,
        c: &Coefficients,
        h: &HFields,
        er: &mut [f64],
        mut ephi: Option<&mut [f64]>,
        ez: &mut [f64],
        psi: &mut EPsi,
    ) {
        let (nz, nj1) = (c.nz, c.nz + 1);
        let (idr, idz) = (c.inv_dr, c.inv_dz);
        let hp = &h.hphi[i * nz..(i + 1) * nz];
        let hr = &h.hr[i * nz..(i + 1) * nz];
        let hz = &h.hz[i * nj1..(i + 1) * nj1];
        let cbr = &c.cb_er[i * nj1..(i + 1) * nj1];
        let cbp = &c.cb_ephi[i * nj1..(i + 1) * nj1];
        if !self.ze.is_empty() {
            let p_er = psi.er_z.row(i).expect("a z-layer row");
            let p_ep = psi.ephi_z.row(i).expect("a z-layer row");
            for s in &self.ze {
                let (lo, hi, off) = (s.lo, s.hi, s.off);
                let n = hi - lo;
                let (b, a) = (&self.zb_int[lo..hi], &self.za_int[lo..hi]);
                // ε ∂t e_r ∋ −∂z h_φ, and ε ∂t e_φ ∋ ∂z h_r (rows 1..nr).
                let (w0, w1) = (&hp[lo - 1..hi - 1], &hp[lo..hi]);
                let (u, pu, cb) = (&mut er[lo..hi], &mut p_er[off..off + n], &cbr[lo..hi]);
                match ephi.as_deref_mut() {
                    Some(ep) => {
                        let (v0, v1) = (&hr[lo - 1..hi - 1], &hr[lo..hi]);
                        let (v, pv) = (&mut ep[lo..hi], &mut p_ep[off..off + n]);
                        let w = ((w0, w1), (v0, v1));
                        let cbs = (cb, &cbp[lo..hi]);
                        diff2::<&[f64], true, false>(u, pu, v, pv, w.0, w.1, cbs, idz, b, a);
                    }
                    None => diff::<&[f64], true>(u, pu, w0, w1, idz, b, a, cb),
                }
            }
        }
        let Some(l) = &self.radial else { return };
        if i < l.first {
            return;
        }
        // ε ∂t e_r ∋ (m/r) h_z, stretched by r/r̃ (nothing for m = 0).
        let fb = l.bar_half[i];
        if fb.1 != 0.0 && c.m != 0 {
            let p = psi.er_bar.row(i).expect("a radial row");
            scaled::<&[f64], false>(&mut er[..nj1], p, hz, c.m_over_r_half[i], fb, cbr);
        }
        // E_φ and E_z of the axis row take no radial term.
        let Some(ep) = ephi else { return };
        let fd = l.len_int[i];
        // ε ∂t e_φ ∋ −∂r h_z, stretched by Δr/Δr̃.
        if fd.1 != 0.0 {
            let hz0 = &h.hz[(i - 1) * nj1..i * nj1];
            let p = psi.ephi_d.row(i).expect("a radial row");
            radial_diff::<&[f64], true>(&mut ep[..nj1], p, hz0, hz, idr, fd, cbp);
        }
        let hp0 = &h.hphi[(i - 1) * nz..i * nz];
        let cbz = &c.cb_ez[i * nz..(i + 1) * nz];
        // ε ∂t e_z ∋ ∂r h_φ, stretched by Δr/Δr̃; then
        // ε ∂t e_z ∋ h_φ avg / r − (m/r) h_r, stretched by r/r̄.
        let fh = l.hat_int[i];
        let r = i as f64 / idr;
        let t = (c.m_over_r_int[i], hr);
        let ez = &mut ez[..nz];
        let pd = psi.ez_d.row(i).expect("a radial row");
        let pb = psi.ez_bar.row(i).expect("a radial row");
        match (fd.1 != 0.0, fh.1 != 0.0) {
            (true, true) => {
                diff_bar::<&[f64], false, true>(ez, pd, pb, hp0, hp, idr, r, t, (fd, fh), cbz)
            }
            (true, false) => radial_diff::<&[f64], false>(ez, pd, hp0, hp, idr, fd, cbz),
            (false, true) => bar::<&[f64], false, true>(ez, pb, hp0, hp, r, t, fh, cbz),
            (false, false) => {}
        }
    }
}

/// A factor by entry: one value for a whole row (f64) or one per entry
/// (a slice, indexed from the start of the span).
trait ByEntry: Copy {
    /// The first `n` entries (a no-op for a row value).
    fn fit(self, n: usize) -> Self;
    /// The value at entry `j`.
    fn at(self, j: usize) -> f64;
}

impl ByEntry for f64 {
    #[inline(always)]
    fn fit(self, _: usize) -> f64 {
        self
    }
    #[inline(always)]
    fn at(self, _: usize) -> f64 {
        self
    }
}

impl ByEntry for &[f64] {
    #[inline(always)]
    fn fit(self, n: usize) -> Self {
        &self[..n]
    }
    #[inline(always)]
    fn at(self, j: usize) -> f64 {
        self[j]
    }
}

/// One step of the recursive convolution: ψ ← bψ + aX, returned.
#[inline(always)]
fn advance(psi: &mut f64, b: f64, a: f64, x: f64) -> f64 {
    let p = b * *psi + a * x;
    *psi = p;
    p
}

/// u ± s·ψ (− when `NEG`) over a z-layer span, ψ ← bψ + aX with the
/// difference X = (w1 − w0)·k and b, a by column. `S` is the field's factor
/// (Δt/μ0, or Δt/ε by node). Not inlined, so that its slices are known not
/// to alias and the loop vectorises.
#[allow(clippy::too_many_arguments)]
#[inline(never)]
fn diff<S: ByEntry, const NEG: bool>(
    u: &mut [f64],
    psi: &mut [f64],
    w0: &[f64],
    w1: &[f64],
    k: f64,
    b: &[f64],
    a: &[f64],
    s: S,
) {
    let n = u.len();
    let (psi, w0, w1) = (&mut psi[..n], &w0[..n], &w1[..n]);
    let (b, a, s) = (&b[..n], &a[..n], s.fit(n));
    for j in 0..n {
        let x = (w1[j] - w0[j]) * k;
        let p = advance(&mut psi[j], b[j], a[j], x);
        add::<NEG>(&mut u[j], s.at(j), p);
    }
}

/// [`diff`] on two fields at once over the same z-layer span (same b, a):
/// u ∓ s·ψ_u with X_u = (w1 − w0)·k, then v ∓ t·ψ_v with X_v = (v1 − v0)·k
/// (− when `NEGU`, `NEGV`). Inlined into the row's terms: one call per row
/// and half step cost more than its two vectors of arithmetic
/// (solver/benches/RESULTS.md).
#[allow(clippy::too_many_arguments)]
#[inline(always)]
fn diff2<S: ByEntry, const NEGU: bool, const NEGV: bool>(
    u: &mut [f64],
    pu: &mut [f64],
    v: &mut [f64],
    pv: &mut [f64],
    (w0, w1): (&[f64], &[f64]),
    (v0, v1): (&[f64], &[f64]),
    (s, t): (S, S),
    k: f64,
    b: &[f64],
    a: &[f64],
) {
    let n = u.len();
    let (pu, w0, w1, s) = (&mut pu[..n], &w0[..n], &w1[..n], s.fit(n));
    let (v, pv, v0, v1, t) = (&mut v[..n], &mut pv[..n], &v0[..n], &v1[..n], t.fit(n));
    let (b, a) = (&b[..n], &a[..n]);
    for j in 0..n {
        let x = (w1[j] - w0[j]) * k;
        let p = advance(&mut pu[j], b[j], a[j], x);
        add::<NEGU>(&mut u[j], s.at(j), p);
        let x = (v1[j] - v0[j]) * k;
        let p = advance(&mut pv[j], b[j], a[j], x);
        add::<NEGV>(&mut v[j], t.at(j), p);
    }
}

/// u − s·p when `NEG`, else u + s·p.
#[inline(always)]
fn add<const NEG: bool>(u: &mut f64, s: f64, p: f64) {
    if NEG {
        *u -= s * p;
    } else {
        *u += s * p;
    }
}

/// One step of the radial layer's recursion ([`linear_factors`]):
/// ζ ← bζ + aX, returning ψ = ζ − cX.
#[inline(always)]
fn advance_linear(zeta: &mut f64, (b, a, c): Lin, x: f64) -> f64 {
    let z = b * *zeta + a * x;
    *zeta = z;
    z - c * x
}

/// u ± s·ψ over a row of the radial layer (− when `NEG`), ψ the recursion
/// of the difference X = (w1 − w0)·k.
#[allow(clippy::too_many_arguments)]
#[inline(never)]
fn radial_diff<S: ByEntry, const NEG: bool>(
    u: &mut [f64],
    zeta: &mut [f64],
    w0: &[f64],
    w1: &[f64],
    k: f64,
    f: Lin,
    s: S,
) {
    let n = u.len();
    let (zeta, w0, w1, s) = (&mut zeta[..n], &w0[..n], &w1[..n], s.fit(n));
    for j in 0..n {
        let x = (w1[j] - w0[j]) * k;
        let p = advance_linear(&mut zeta[j], f, x);
        add::<NEG>(&mut u[j], s.at(j), p);
    }
}

/// [`radial_diff`] then [`bar`] on the same field in one pass (the order of
/// each entry's two terms is kept).
#[allow(clippy::too_many_arguments)]
#[inline(never)]
fn diff_bar<S: ByEntry, const NEG: bool, const NEGT: bool>(
    u: &mut [f64],
    zd: &mut [f64],
    zb: &mut [f64],
    w0: &[f64],
    w1: &[f64],
    k: f64,
    r: f64,
    (mr, v): (f64, &[f64]),
    (fd, fb): (Lin, Lin),
    s: S,
) {
    let n = u.len();
    let (zd, zb) = (&mut zd[..n], &mut zb[..n]);
    let (w0, w1, v, s) = (&w0[..n], &w1[..n], &v[..n], s.fit(n));
    let h = 0.5 / r;
    for j in 0..n {
        let x = (w1[j] - w0[j]) * k;
        let p = advance_linear(&mut zd[j], fd, x);
        let mut e = u[j];
        add::<NEG>(&mut e, s.at(j), p);
        let x = if NEGT {
            (w1[j] + w0[j]) * h - mr * v[j]
        } else {
            (w1[j] + w0[j]) * h + mr * v[j]
        };
        let p = advance_linear(&mut zb[j], fb, x);
        add::<NEG>(&mut e, s.at(j), p);
        u[j] = e;
    }
}

/// u ± s·ψ over a row, ψ the recursion of X = k·w (the m/r terms).
#[allow(clippy::too_many_arguments)]
#[inline(never)]
fn scaled<S: ByEntry, const NEG: bool>(
    u: &mut [f64],
    zeta: &mut [f64],
    w: &[f64],
    k: f64,
    f: Lin,
    s: S,
) {
    let n = u.len();
    let (zeta, w, s) = (&mut zeta[..n], &w[..n], s.fit(n));
    for j in 0..n {
        let x = k * w[j];
        let p = advance_linear(&mut zeta[j], f, x);
        add::<NEG>(&mut u[j], s.at(j), p);
    }
}

/// u ± s·ψ over a row, ψ the recursion of the 1/r terms
/// X = ½(w1 + w0)/r ± m_r·v (− when `NEGT`).
#[allow(clippy::too_many_arguments)]
#[inline(never)]
fn bar<S: ByEntry, const NEG: bool, const NEGT: bool>(
    u: &mut [f64],
    zeta: &mut [f64],
    w0: &[f64],
    w1: &[f64],
    r: f64,
    (mr, v): (f64, &[f64]),
    f: Lin,
    s: S,
) {
    let n = u.len();
    let (zeta, w0, w1, v, s) = (&mut zeta[..n], &w0[..n], &w1[..n], &v[..n], s.fit(n));
    let h = 0.5 / r;
    for j in 0..n {
        let x = if NEGT {
            (w1[j] + w0[j]) * h - mr * v[j]
        } else {
            (w1[j] + w0[j]) * h + mr * v[j]
        };
        let p = advance_linear(&mut zeta[j], f, x);
        add::<NEG>(&mut u[j], s.at(j), p);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_radial_recursion_is_second_order_in_time() {
        // Transfer function of ζ ← bζ + aX, ψ = ζ − cX at z = e^{jωΔt},
        // against the continuous factor's ψ/X = −S/(S + jωε0) (α = 0): the
        // piecewise-linear form errs by about (ωΔt)²/12 (2.1e-4 at
        // ωΔt = 0.05), the constant-X form by about ωΔt/2 (2.5e-2).
        use num_complex::Complex64 as C;
        let dt = 1e-12;
        for x in [0.01, 0.5, 2.0, 5.0, 11.0] {
            let s = x * EPS0 / dt;
            let (b, a, c) = linear_factors(s, 0.0, dt);
            for w in [0.02, 0.05] {
                let zi = C::from_polar(1.0, -w);
                let disc = (a - c * (1.0 - b * zi)) / (1.0 - b * zi);
                let exact = C::new(-x, 0.0) / C::new(x, w);
                let err = (disc / exact - 1.0).norm();
                assert!(err < 0.12 * w * w, "x {x}, ωΔt {w}: {err:e}");
            }
        }
        // A very thin, very lossy layer stays finite (no cancellation).
        let (b, a, c) = linear_factors(40.0 * EPS0 / dt, 0.0, dt);
        assert!(b > 0.0 && a.is_finite() && c == 0.0);
    }

    #[test]
    fn widened_spans_cover_whole_lanes_and_only_columns_outside_the_layers() {
        // A 40-column profile: bottom layer on 1..=15, top layer on 25..=38
        // (the PEC ends 0 and 40 held).
        let mut a = vec![0.0; 41];
        a[1..16].fill(-1.0);
        a[25..39].fill(-1.0);
        let bottom = segment(&a, 1..17, 0).unwrap();
        assert_eq!((bottom.lo, bottom.hi), (1, 16));
        let w = widen(bottom, &a, 1..40, true);
        // 16 columns: grown upward by one.
        assert_eq!((w.lo, w.hi), (1, 17));
        let top = segment(&a, 20..40, 0).unwrap();
        assert_eq!((top.lo, top.hi), (25, 39));
        let w = widen(top, &a, 1..40, false);
        // 16 columns: grown downward by two.
        assert_eq!((w.lo, w.hi), (23, 39));
        // Close layers: the bottom span may not grow into the top layer's
        // columns (they would take its correction twice).
        let mut b = vec![-1.0; 21];
        b[0] = 0.0;
        b[20] = 0.0;
        b[10] = 0.0;
        let s = segment(&b, 1..10, 0).unwrap();
        let w = widen(s, &b, 1..20, true);
        assert_eq!((w.lo, w.hi), (1, 11)); // stops before column 11 (a ≠ 0)
        assert!(w.hi <= 11 && (w.lo..w.hi).all(|j| j < 10 || b[j] == 0.0));
    }
}
