//! The leapfrog update of one azimuthal order: the physics of every line.
//!
//! With E_r, E_z, H_φ ∝ cos mφ and E_φ, H_r, H_z ∝ sin mφ, Maxwell's curl
//! equations in a medium ε = ε0 ε_r, μ = μ0 become, for the real (r, z)
//! coefficients,
//!
//! ```text
//! ε ∂t e_r = (m/r) h_z − ∂z h_φ        μ ∂t h_r =  (m/r) e_z + ∂z e_φ
//! ε ∂t e_φ = ∂z h_r − ∂r h_z           μ ∂t h_φ = −∂z e_r + ∂r e_z
//! ε ∂t e_z = (1/r) ∂r(r h_φ) − (m/r) h_r
//!                                      μ ∂t h_z = −(1/r) ∂r(r e_φ) − (m/r) e_r
//! ```
//!
//! (a sign-consistent choice of the cos/sin split; Taflove & Hagness,
//! *Computational Electrodynamics* 3rd ed., ch. 12). On the staggered grid of
//! [`lathe_mesh::Component`] every term is a centred difference or a
//! co-located value. H is advanced from t_n to t_{n+½} by
//! [`update_h`], then E from t_n to t_{n+1} by [`update_e`].
//!
//! # Finite-integration form
//! The radial differences carry the radii, e.g. at H_z(i+½):
//! `(r_{i+1} e_φ(i+1) − r_i e_φ(i)) / (r_{i+½} Δr)`, which is Faraday's law
//! integrated over the annulus `r_i … r_{i+1}`. With node weights equal to
//! their radius (the volume element r dr dz) the discrete E-from-H operator
//! is then exactly the adjoint of the H-from-E operator. The scheme is
//! therefore energy-conserving and stable up to Δt = 2/√λ_max of the
//! discrete curl-curl operator, which [`crate::stability`] computes.
//!
//! # The axis r = 0
//! Regularity (E_z, H_z ∝ r^m; transverse components ∝ r^{m−1}) gives:
//! - **m = 0**: only E_z survives on the axis. It is advanced by Ampère's
//!   law on the disc of radius Δr/2: ε ∂t e_z(0) · π(Δr/2)² = 2π(Δr/2) h_φ(½),
//!   i.e. ε ∂t e_z(0) = 4 h_φ(½)/Δr. E_φ(0) and H_r(0) are zero.
//! - **m = 1**: E_z(0) = 0. E_φ(0) and H_r(0) are finite but are multiplied
//!   by r_0 = 0 wherever they would enter an off-axis update, so they are
//!   not unknowns of the scheme; single-valuedness of the Cartesian field on
//!   the axis gives them as e_φ(0) = −e_r(0) and h_r(0) = h_φ(0), which
//!   [`fill_axis`] evaluates (second order, from the even extension of e_r
//!   and h_φ across the axis) when fields are read out.
//! - **m ≥ 2**: every axis value is zero. Beyond that, the E nodes within
//!   r ≤ ⌊m/2⌋ Δr are held at zero by default (zero `cb`, a thin PEC rod;
//!   see [`crate::coefficients::axis_rod_rows`]): their m/r terms would set
//!   the time-step limit, while the fields there are O(r^(m−1)).
//!
//! The off-axis H_z(½) update uses the full annulus `0 … Δr` (its inner
//! coefficient is zero), so no axis value is needed there either.
//!
//! # Rows, threads and the absorber
//! Within each half step every row depends only on the other field, so a
//! half step is a loop over rows `i` that updates all three components of
//! the row ([`update_h`], [`update_e`]): the row's neighbours stay in the
//! fastest cache for the three of them, and every inner loop over `j` runs
//! over contiguous slices of checked length, which the compiler vectorises.
//! [`step`] adds the absorber's corrections ([`crate::pml`]) to each row
//! right after its bulk update, while the row is still in cache; every
//! entry takes exactly the operations of the bulk update followed by
//! [`Pml::correct_h`] / [`Pml::correct_e`], in the same order, so the two
//! ways give identical bits.
//!
//! Grids are updated row-parallel when [`Coefficients::row_parallel`] is
//! set and the step is given a [`Team`] ([`step_on`], [`steps_on`]): each
//! half step's rows are split in contiguous blocks of equal cost, one per
//! member, rows of the radial absorber weighing 2.5 plain rows, handed over
//! by spinning (see [`crate::team`]). [`steps_on`] keeps the blocks through
//! a stretch of steps, the members meeting at a barrier after each half
//! step. Each block runs in the floating-point mode of the owner
//! (flush-to-zero while a run steps). Every entry is computed by the same
//! expression on any thread, so results are bitwise identical for any
//! thread count.
//!
//! # Walls
//! PEC walls hold their tangential E nodes at zero (`cb = 0`, set in
//! [`crate::coefficients`]); a PMC z plane uses the odd image of tangential
//! H in the Ampère update of the E nodes on the plane.
use crate::boundary::ZWall;
use crate::coefficients::Coefficients;
use crate::fields::Fields;
use crate::pml::{EPsi, HPsi, Pml, PmlParams};
use crate::team::{Line, Team, MAX_MEMBERS};
use std::sync::Mutex;

/// Rows `first..` of a row-major array with rows of `len` entries, as one
/// mutable slice that can be split by row (for the row-parallel update).
pub(crate) struct Rows<'a> {
    data: &'a mut [f64],
    len: usize,
    first: usize,
}

impl<'a> Rows<'a> {
    /// `data` holding rows `first..` of `len` entries each.
    pub(crate) fn new(data: &'a mut [f64], len: usize, first: usize) -> Rows<'a> {
        Rows { data, len, first }
    }

    /// No rows at all.
    pub(crate) fn none() -> Rows<'a> {
        Rows {
            data: Default::default(),
            len: 0,
            first: 0,
        }
    }

    /// The same rows, borrowed for a shorter time.
    pub(crate) fn reborrow(&mut self) -> Rows<'_> {
        Rows {
            data: &mut *self.data,
            len: self.len,
            first: self.first,
        }
    }

    /// The rows before row `i` and the rows from `i` on.
    pub(crate) fn split_at(self, i: usize) -> (Rows<'a>, Rows<'a>) {
        let (len, first) = (self.len, self.first);
        let held = self.data.len().checked_div(len).unwrap_or(0);
        let k = i.saturating_sub(first).min(held);
        let (a, b) = self.data.split_at_mut(k * len);
        (
            Rows {
                data: a,
                len,
                first,
            },
            Rows {
                data: b,
                len,
                first: first + k,
            },
        )
    }

    /// Row `i`, if these rows hold it.
    #[inline]
    pub(crate) fn row(&mut self, i: usize) -> Option<&mut [f64]> {
        if self.len == 0 || i < self.first {
            return None;
        }
        let k = i - self.first;
        self.data.get_mut(k * self.len..(k + 1) * self.len)
    }
}

/// Mutable state of one half step that splits by row.
trait SplitRows: Sized + Send {
    fn split_at(self, i: usize) -> (Self, Self);
}

/// How a half step's rows are split over a team: in blocks of equal cost,
/// rows from `heavy` on (the radial absorber's, with eight auxiliary
/// recursions per cell besides the six field updates) weighing
/// [`RADIAL_ROW_WEIGHT`] times a plain row.
#[derive(Clone, Copy)]
struct Split {
    heavy: usize,
}

/// Cost of a radial-absorber row relative to a plain row: eight auxiliary
/// recursions besides the six field updates (ten when this was chosen, by
/// timing one 95 × 95 open run, solver/benches/common::benchmark_half,
/// alone on two threads with weights 2.0, 2.5 and 3.5: 2.5 stepped fastest,
/// 1.5–1.6× one thread; re-timed with stepping teams at 1.5, 2.5 and 3.5 on
/// another host: the same within the noise). The results do not depend on
/// it.
const RADIAL_ROW_WEIGHT: f64 = 2.5;

impl Split {
    /// The split of `nr` rows under the absorbers of `params` (none: every
    /// row plain).
    fn of(params: Option<&PmlParams>, nr: usize) -> Split {
        let heavy = params.and_then(|p| p.radial_first()).unwrap_or(nr);
        Split { heavy }
    }

    /// Cost of rows 0..i.
    fn cost(&self, i: usize) -> f64 {
        i as f64 + (RADIAL_ROW_WEIGHT - 1.0) * i.saturating_sub(self.heavy) as f64
    }

    /// The bounds of `k` blocks of rows `lo..hi` of equal cost: block b is
    /// rows `bounds[b]..bounds[b + 1]`.
    fn bounds(&self, lo: usize, hi: usize, k: usize) -> [usize; MAX_MEMBERS + 1] {
        let mut bounds = [hi; MAX_MEMBERS + 1];
        bounds[0] = lo;
        for b in 1..k {
            bounds[b] = self
                .at_share(lo, hi, b as f64 / k as f64)
                .max(bounds[b - 1]);
        }
        bounds
    }

    /// The first row `i` in `lo..=hi` with cost(lo..i) ≥ `share` of
    /// cost(lo..hi).
    fn at_share(&self, lo: usize, hi: usize, share: f64) -> usize {
        let target = self.cost(lo) + share * (self.cost(hi) - self.cost(lo));
        let (mut a, mut b) = (lo, hi);
        while a < b {
            let mid = a + (b - a) / 2;
            if self.cost(mid) < target {
                a = mid + 1;
            } else {
                b = mid;
            }
        }
        a
    }
}

/// Runs `body(i, &mut views)` for every row `i` in `lo..hi`: in order on
/// this thread, or, with a team of k > 1 members, in k blocks of equal cost
/// ([`Split`]), block b on member b (see [`Team::run`]).
fn for_rows<V, F>(lo: usize, hi: usize, views: V, split: Split, team: Option<&Team>, body: &F)
where
    V: SplitRows,
    F: Fn(usize, &mut V) + Sync,
{
    let k = team
        .map_or(1, |t| t.members())
        .min(hi.saturating_sub(lo))
        .max(1);
    let Some(team) = team.filter(|_| k > 1) else {
        let mut views = views;
        for i in lo..hi {
            body(i, &mut views);
        }
        return;
    };
    // The blocks' views, on this stack (no allocation per half step).
    let slots: [Mutex<Option<V>>; MAX_MEMBERS] = std::array::from_fn(|_| Mutex::new(None));
    let bounds = split.bounds(lo, hi, k);
    let mut rest = views;
    for b in 1..k {
        let (block, r) = rest.split_at(bounds[b]);
        *slots[b - 1].lock().unwrap_or_else(|e| e.into_inner()) = Some(block);
        rest = r;
    }
    *slots[k - 1].lock().unwrap_or_else(|e| e.into_inner()) = Some(rest);
    team.run(k, &|b| {
        let mut views = slots[b]
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .take()
            .expect("each block is stepped once");
        for i in bounds[b]..bounds[b + 1] {
            body(i, &mut views);
        }
    });
}

/// The magnetic rows of one half step and the absorber's auxiliary fields
/// that go with them.
struct HViews<'a> {
    hr: Rows<'a>,
    hphi: Rows<'a>,
    hz: Rows<'a>,
    psi: HPsi<'a>,
}

/// The electric rows of one half step and their auxiliary fields.
struct EViews<'a> {
    er: Rows<'a>,
    ephi: Rows<'a>,
    ez: Rows<'a>,
    psi: EPsi<'a>,
}

/// Splits a half step's views by row: every field's rows and the auxiliary
/// fields' rows at the same row.
macro_rules! split_views {
    ($t:ident, $($f:ident),*) => {
        impl SplitRows for $t<'_> {
            fn split_at(self, i: usize) -> (Self, Self) {
                $(let $f = self.$f.split_at(i);)*
                ($t { $($f: $f.0),* }, $t { $($f: $f.1),* })
            }
        }
    };
}
split_views!(HViews, hr, hphi, hz, psi);
split_views!(EViews, er, ephi, ez, psi);

/// The electric field, read-only, for the H half step.
pub(crate) struct EFields<'a> {
    pub er: &'a [f64],
    pub ephi: &'a [f64],
    pub ez: &'a [f64],
}

/// The magnetic field, read-only, for the E half step.
pub(crate) struct HFields<'a> {
    pub hr: &'a [f64],
    pub hphi: &'a [f64],
    pub hz: &'a [f64],
}

/// Advances H by one step from E (Faraday's law).
pub fn update_h(f: &mut Fields, c: &Coefficients) {
    h_half_step(f, c, None, true, None);
}

/// Advances E by one step from H (Ampère's law, no sources), with the
/// off-diagonal permittivity coupling at curved interfaces.
pub fn update_e(f: &mut Fields, c: &Coefficients) {
    e_half_step(f, c, None, true, None);
}

/// One full leapfrog step: H from E, then E from H, each row followed at
/// once by the absorber's terms of `pml` (while it is in cache). Gives the
/// same bits as [`update_h`], [`Pml::correct_h`], [`update_e`],
/// [`Pml::correct_e`] in turn, in less time.
pub fn step(f: &mut Fields, c: &Coefficients, pml: Option<&mut Pml>) {
    step_on(f, c, pml, None);
}

/// [`step`] with the rows of each half step split over `team` when
/// [`Coefficients::row_parallel`] is set (the same bits on any team).
pub fn step_on(f: &mut Fields, c: &Coefficients, mut pml: Option<&mut Pml>, team: Option<&Team>) {
    let team = team.filter(|_| c.row_parallel);
    h_half_step(f, c, pml.as_deref_mut(), true, team);
    e_half_step(f, c, pml, true, team);
}

/// `n` full steps of [`step_on`], with the same bits. With a team (and
/// [`Coefficients::row_parallel`]) the `n` steps are one job of
/// [`Team::run_phases`]: each member keeps its block of rows — the same
/// blocks as [`step_on`]'s — and its block's absorber fields through all `n`
/// steps, and the members meet at a barrier after each half step (and after
/// the coupling's curls, which member 0 takes, where the grid has coupled
/// nodes) instead of being handed each half step by the owner.
pub fn steps_on(
    f: &mut Fields,
    c: &Coefficients,
    mut pml: Option<&mut Pml>,
    team: Option<&Team>,
    n: usize,
) {
    let k = team
        .filter(|_| c.row_parallel)
        .map_or(1, |t| t.members())
        .min(c.nr);
    let Some(team) = team.filter(|_| k > 1 && n > 0) else {
        for _ in 0..n {
            step_on(f, c, pml.as_deref_mut(), team);
        }
        return;
    };
    let (nr, nz) = (c.nr, c.nz);
    let nj1 = nz + 1;
    let bounds = Split::of(pml.as_deref().map(Pml::params), nr).bounds(0, nr, k);
    if let Some(cp) = &c.coupling {
        f.curls.resize(cp.curl_len(), 0.0);
    }
    // Each member's absorber rows of both half steps, on a line of its own.
    let blocks: [Line<Mutex<Option<PsiBlock>>>; MAX_MEMBERS] = Default::default();
    let params = match pml {
        Some(p) => {
            let (params, mut h, mut e) = p.split_both();
            for b in 1..k {
                let (hb, hr) = h.split_at(bounds[b]);
                let (eb, er) = e.split_at(bounds[b]);
                *blocks[b - 1].0.lock().unwrap_or_else(|e| e.into_inner()) = Some((hb, eb));
                (h, e) = (hr, er);
            }
            *blocks[k - 1].0.lock().unwrap_or_else(|e| e.into_inner()) = Some((h, e));
            Some(params)
        }
        None => None,
    };
    let raw = RawFields::new(f);
    // Phases of one step: H, the coupling's curls where there are any, E.
    let per_step = if c.coupling.is_some() { 3 } else { 2 };
    let job = |b: usize, phase: usize| {
        let (lo, hi) = (bounds[b], bounds[b + 1]);
        let mut held = blocks[b].0.lock().unwrap_or_else(|e| e.into_inner());
        let (hpsi, epsi) = match held.as_mut() {
            Some((h, e)) => (h.reborrow(), e.reborrow()),
            None => (HPsi::none(), EPsi::none()),
        };
        // SAFETY (every `unsafe` below): within a phase, the members write
        // disjoint blocks of rows of one field (H in the H phase, E in the
        // E phase, the curls on member 0 alone in their phase) and only
        // read the other field and the curls, which no one writes in that
        // phase; `Team::run_phases` puts a barrier (Release/Acquire)
        // between phases, and every reference made here dies with its
        // phase. `raw` was taken from `f`, which this function borrows
        // mutably until the job has ended.
        match (phase % per_step, per_step) {
            (0, _) => {
                let e = unsafe { raw.e() };
                let mut v = HViews {
                    hr: unsafe { raw.hr.rows(nz, lo, hi) },
                    hphi: unsafe { raw.hphi.rows(nz, lo, hi) },
                    hz: unsafe { raw.hz.rows(nj1, lo, hi) },
                    psi: hpsi,
                };
                for i in lo..hi {
                    h_row(c, &e, params, true, i, &mut v);
                }
            }
            (1, 3) => {
                if let (0, Some(cp)) = (b, &c.coupling) {
                    let h = unsafe { raw.h() };
                    cp.curls(&h, unsafe { raw.curls.all_mut() });
                }
            }
            _ => {
                let h = unsafe { raw.h() };
                let curls = unsafe { raw.curls.all() };
                let mut v = EViews {
                    er: unsafe { raw.er.rows(nj1, lo, hi) },
                    ephi: unsafe { raw.ephi.rows(nj1, lo, hi) },
                    ez: unsafe { raw.ez.rows(nz, lo, hi) },
                    psi: epsi,
                };
                for i in lo..hi {
                    e_row(c, &h, curls, params, true, i, &mut v);
                }
            }
        }
    };
    team.run_phases(k, n * per_step, &job);
}

/// One member's rows of the absorber's auxiliary fields, both half steps.
type PsiBlock<'a> = (HPsi<'a>, EPsi<'a>);

/// One array of [`Fields`] as a raw pointer and length, shared by the
/// members of a stepping team for [`steps_on`].
#[derive(Clone, Copy)]
struct RawArray {
    ptr: *mut f64,
    len: usize,
}

// SAFETY: a `RawArray` is only turned into references under the phase
// discipline of `steps_on` (disjoint writes, barrier between phases).
unsafe impl Send for RawArray {}
unsafe impl Sync for RawArray {}

impl RawArray {
    fn new(v: &mut [f64]) -> RawArray {
        RawArray {
            ptr: v.as_mut_ptr(),
            len: v.len(),
        }
    }

    /// The whole array, read-only.
    ///
    /// # Safety
    /// No one may write the array while the slice lives.
    unsafe fn all<'a>(self) -> &'a [f64] {
        unsafe { std::slice::from_raw_parts(self.ptr, self.len) }
    }

    /// The whole array, writable.
    ///
    /// # Safety
    /// No one else may read or write the array while the slice lives.
    unsafe fn all_mut<'a>(self) -> &'a mut [f64] {
        unsafe { std::slice::from_raw_parts_mut(self.ptr, self.len) }
    }

    /// Rows `lo..hi` of `len` entries (those the array holds), writable:
    /// what [`Rows::split_at`] at `lo` and `hi` gives.
    ///
    /// # Safety
    /// No one else may read or write those rows while the view lives.
    unsafe fn rows<'a>(self, len: usize, lo: usize, hi: usize) -> Rows<'a> {
        let (a, b) = ((lo * len).min(self.len), (hi * len).min(self.len));
        let data = unsafe { std::slice::from_raw_parts_mut(self.ptr.add(a), b - a) };
        Rows::new(data, len, lo)
    }
}

/// The six field arrays and the coupling's curls of one [`Fields`].
struct RawFields {
    er: RawArray,
    ephi: RawArray,
    ez: RawArray,
    hr: RawArray,
    hphi: RawArray,
    hz: RawArray,
    curls: RawArray,
}

impl RawFields {
    fn new(f: &mut Fields) -> RawFields {
        RawFields {
            er: RawArray::new(&mut f.er),
            ephi: RawArray::new(&mut f.ephi),
            ez: RawArray::new(&mut f.ez),
            hr: RawArray::new(&mut f.hr),
            hphi: RawArray::new(&mut f.hphi),
            hz: RawArray::new(&mut f.hz),
            curls: RawArray::new(&mut f.curls),
        }
    }

    /// E, read-only.
    ///
    /// # Safety
    /// No one may write E while the view lives.
    unsafe fn e<'a>(&self) -> EFields<'a> {
        unsafe {
            EFields {
                er: self.er.all(),
                ephi: self.ephi.all(),
                ez: self.ez.all(),
            }
        }
    }

    /// H, read-only.
    ///
    /// # Safety
    /// No one may write H while the view lives.
    unsafe fn h<'a>(&self) -> HFields<'a> {
        unsafe {
            HFields {
                hr: self.hr.all(),
                hphi: self.hphi.all(),
                hz: self.hz.all(),
            }
        }
    }
}

/// The H half step: every row's bulk update (if `bulk`), then the row's
/// absorber terms (if `pml`).
pub(crate) fn h_half_step(
    f: &mut Fields,
    c: &Coefficients,
    pml: Option<&mut Pml>,
    bulk: bool,
    team: Option<&Team>,
) {
    let (nr, nz) = (c.nr, c.nz);
    let nj1 = nz + 1;
    let Fields {
        er,
        ephi,
        ez,
        hr,
        hphi,
        hz,
        ..
    } = f;
    let e = EFields { er, ephi, ez };
    let (params, psi): (Option<&PmlParams>, HPsi) = match pml {
        Some(p) => {
            let (a, b) = p.split_h();
            (Some(a), b)
        }
        None => (None, HPsi::none()),
    };
    let views = HViews {
        hr: Rows::new(hr, nz, 0),
        hphi: Rows::new(hphi, nz, 0),
        hz: Rows::new(hz, nj1, 0),
        psi,
    };
    let body = |i: usize, v: &mut HViews| h_row(c, &e, params, bulk, i, v);
    for_rows(0, nr, views, Split::of(params, nr), team, &body);
}

/// The E half step: every row's bulk update and off-diagonal coupling (if
/// `bulk`), then the row's absorber terms (if `pml`).
pub(crate) fn e_half_step(
    f: &mut Fields,
    c: &Coefficients,
    pml: Option<&mut Pml>,
    bulk: bool,
    team: Option<&Team>,
) {
    let (nr, nz) = (c.nr, c.nz);
    let nj1 = nz + 1;
    let Fields {
        er,
        ephi,
        ez,
        hr,
        hphi,
        hz,
        curls,
        ..
    } = f;
    let h = HFields { hr, hphi, hz };
    // The coupling's curls, once for the half step (H is complete).
    if let (true, Some(cp)) = (bulk, &c.coupling) {
        curls.resize(cp.curl_len(), 0.0);
        cp.curls(&h, curls);
    }
    let curls: &[f64] = curls;
    let (params, psi): (Option<&PmlParams>, EPsi) = match pml {
        Some(p) => {
            let (a, b) = p.split_e();
            (Some(a), b)
        }
        None => (None, EPsi::none()),
    };
    let views = EViews {
        er: Rows::new(er, nj1, 0),
        ephi: Rows::new(ephi, nj1, 0),
        ez: Rows::new(ez, nz, 0),
        psi,
    };
    let body = |i: usize, v: &mut EViews| e_row(c, &h, curls, params, bulk, i, v);
    for_rows(0, nr, views, Split::of(params, nr), team, &body);
}

/// H row `i`: its bulk update (if `bulk`), then its absorber terms (if
/// `params`).
#[inline]
fn h_row(
    c: &Coefficients,
    e: &EFields,
    params: Option<&PmlParams>,
    bulk: bool,
    i: usize,
    v: &mut HViews,
) {
    // The axis row of H_r is derived, its outer-wall row is normal H on a
    // PEC wall and stays zero: H_r rows 1..nr.
    let mut hr = if i >= 1 { v.hr.row(i) } else { None };
    let hphi = v.hphi.row(i).expect("an H_φ row");
    let hz = v.hz.row(i).expect("an H_z row");
    if bulk {
        h_bulk(c, e, i, hr.as_deref_mut(), hphi, hz);
    }
    if let Some(p) = params {
        p.h_row(i, c, e, hr, hphi, hz, &mut v.psi);
    }
}

/// E row `i`: its bulk update and off-diagonal coupling (if `bulk`), then
/// its absorber terms (if `params`).
#[inline]
fn e_row(
    c: &Coefficients,
    h: &HFields,
    curls: &[f64],
    params: Option<&PmlParams>,
    bulk: bool,
    i: usize,
    v: &mut EViews,
) {
    let er = v.er.row(i).expect("an E_r row");
    // E_φ: axis derived, outer wall held: rows 1..nr. E_z: rows 1..nr, and
    // the axis row for m = 0.
    let mut ephi = if i >= 1 { v.ephi.row(i) } else { None };
    let ez = v.ez.row(i).expect("an E_z row");
    if bulk {
        e_bulk(c, h, i, er, ephi.as_deref_mut(), ez);
        if let Some(cp) = &c.coupling {
            cp.apply_row(i, curls, er, ez);
        }
    }
    if let Some(p) = params {
        p.e_row(i, c, h, er, ephi, ez, &mut v.psi);
    }
}

/// The bulk update of H row `i` (H_r on rows 1..nr only). On rows i ≥ 1
/// the three components are updated in one pass over j, which loads each
/// E value once for the three of them.
#[inline]
fn h_bulk(
    c: &Coefficients,
    e: &EFields,
    i: usize,
    hr: Option<&mut [f64]>,
    hp: &mut [f64],
    hz: &mut [f64],
) {
    let (nz, nj1) = (c.nz, c.nz + 1);
    let (ch, idr, idz) = (c.ch, c.inv_dr, c.inv_dz);
    let (a, b, mrh) = (c.hz_out[i], c.hz_in[i], c.m_over_r_half[i]);
    let ez0 = &e.ez[i * nz..(i + 1) * nz];
    let ez1 = &e.ez[(i + 1) * nz..(i + 2) * nz];
    let ep0 = &e.ephi[i * nj1..(i + 1) * nj1];
    let ep1 = &e.ephi[(i + 1) * nj1..(i + 2) * nj1];
    let er = &e.er[i * nj1..(i + 1) * nj1];
    let (hp, hz) = (&mut hp[..nz], &mut hz[..nj1]);
    let (p0, p0n, p1) = (&ep0[..nz], &ep0[1..], &ep1[..nz]);
    let (r0, r0n) = (&er[..nz], &er[1..]);
    match hr {
        Some(hr) => {
            let hr = &mut hr[..nz];
            let mri = c.m_over_r_int[i];
            for j in 0..nz {
                // μ ∂t h_r = (m/r) e_z + ∂z e_φ
                hr[j] += ch * (mri * ez0[j] + (p0n[j] - p0[j]) * idz);
                // μ ∂t h_φ = −∂z e_r + ∂r e_z
                hp[j] += ch * ((ez1[j] - ez0[j]) * idr - (r0n[j] - r0[j]) * idz);
                // μ ∂t h_z = −(1/r) ∂r(r e_φ) − (m/r) e_r, the radial term
                // as Faraday's law on the annulus r_i … r_{i+1}
                hz[j] -= ch * (a * p1[j] - b * p0[j] + mrh * r0[j]);
            }
        }
        None => {
            for j in 0..nz {
                hp[j] += ch * ((ez1[j] - ez0[j]) * idr - (r0n[j] - r0[j]) * idz);
                hz[j] -= ch * (a * p1[j] - b * p0[j] + mrh * r0[j]);
            }
        }
    }
    hz[nz] -= ch * (a * ep1[nz] - b * ep0[nz] + mrh * er[nz]);
}

/// Odd image factor of tangential H across a z wall: −1 across a PMC
/// plane; across a PEC plane the E node is held (cb = 0) and the value is
/// irrelevant (0).
fn image(w: ZWall) -> f64 {
    if w == ZWall::Pmc {
        -1.0
    } else {
        0.0
    }
}

/// The bulk update of E row `i`: E_r everywhere; E_φ and E_z on rows
/// 1..nr, in one pass with E_r over the interior j; E_z of the axis for
/// m = 0.
#[inline]
fn e_bulk(
    c: &Coefficients,
    h: &HFields,
    i: usize,
    er: &mut [f64],
    ephi: Option<&mut [f64]>,
    ez: &mut [f64],
) {
    let (nz, nj1) = (c.nz, c.nz + 1);
    let (idr, idz) = (c.inv_dr, c.inv_dz);
    let (ib, it) = (image(c.bottom), image(c.top));
    let mrh = c.m_over_r_half[i];
    let cbr = &c.cb_er[i * nj1..(i + 1) * nj1];
    let hz1 = &h.hz[i * nj1..(i + 1) * nj1];
    let hp1 = &h.hphi[i * nz..(i + 1) * nz];
    let er = &mut er[..nj1];
    // End nodes of E_r, with the image of H_φ across the z walls.
    er[0] += cbr[0] * (mrh * hz1[0] - (hp1[0] - ib * hp1[0]) * idz);
    er[nz] += cbr[nz] * (mrh * hz1[nz] - (it * hp1[nz - 1] - hp1[nz - 1]) * idz);
    let n = nz - 1;
    let (g, cbr, z1) = (&mut er[1..nz], &cbr[1..nz], &hz1[1..nz]);
    let (q0, q1) = (&hp1[..n], &hp1[1..]);
    let Some(ep) = ephi else {
        // The axis row: E_r, and E_z of the axis for m = 0 (cb is zero
        // there for m ≥ 1): ε ∂t e_z(0) = 4 h_φ(½)/Δr.
        for j in 0..n {
            g[j] += cbr[j] * (mrh * z1[j] - (q1[j] - q0[j]) * idz);
        }
        if c.m == 0 {
            let (ez, cb, hp) = (&mut ez[..nz], &c.cb_ez[..nz], &h.hphi[..nz]);
            for j in 0..nz {
                ez[j] += cb[j] * 4.0 * idr * hp[j];
            }
        }
        return;
    };
    let (a, b, mri) = (c.ez_out[i], c.ez_in[i], c.m_over_r_int[i]);
    let cbp = &c.cb_ephi[i * nj1..(i + 1) * nj1];
    let cbz = &c.cb_ez[i * nz..(i + 1) * nz];
    let hz0 = &h.hz[(i - 1) * nj1..i * nj1];
    let hp0 = &h.hphi[(i - 1) * nz..i * nz];
    let hr = &h.hr[i * nz..(i + 1) * nz];
    let (ep, ez) = (&mut ep[..nj1], &mut ez[..nz]);
    // End nodes of E_φ with the image of H_r, and the first E_z.
    ep[0] += cbp[0] * ((hr[0] - ib * hr[0]) * idz - (hz1[0] - hz0[0]) * idr);
    ep[nz] += cbp[nz] * ((it * hr[nz - 1] - hr[nz - 1]) * idz - (hz1[nz] - hz0[nz]) * idr);
    ez[0] += cbz[0] * (a * hp1[0] - b * hp0[0] - mri * hr[0]);
    let (f, ez, cbp, cbz) = (&mut ep[1..nz], &mut ez[1..], &cbp[1..nz], &cbz[1..]);
    let (z0, p0) = (&hz0[1..nz], &hp0[1..]);
    let (r0, r1) = (&hr[..n], &hr[1..]);
    for j in 0..n {
        // ε ∂t e_r = (m/r) h_z − ∂z h_φ
        g[j] += cbr[j] * (mrh * z1[j] - (q1[j] - q0[j]) * idz);
        // ε ∂t e_φ = ∂z h_r − ∂r h_z
        f[j] += cbp[j] * ((r1[j] - r0[j]) * idz - (z1[j] - z0[j]) * idr);
        // ε ∂t e_z = (1/r) ∂r(r h_φ) − (m/r) h_r, the radial term as
        // Ampère's law on the annulus r_{i−½} … r_{i+½}
        ez[j] += cbz[j] * (a * q1[j] - b * p0[j] - mri * r1[j]);
    }
}

/// Writes the derived axis values of order m = 1 (e_φ(0) = −e_r(0),
/// h_r(0) = h_φ(0), with e_r and h_φ extrapolated to r = 0 from their even
/// extension: f(0) ≈ (9 f(½Δr) − f(3/2 Δr))/8, error O(Δr²)). For other
/// orders the axis values are already right (zero, or advanced for m = 0).
pub fn fill_axis(f: &mut Fields, m: u32) {
    if m != 1 {
        return;
    }
    let (nr, nz) = (f.nr, f.nz);
    let nj1 = nz + 1;
    let at0 = |a: f64, b: f64| if nr >= 2 { (9.0 * a - b) / 8.0 } else { a };
    for j in 0..nj1 {
        let b = if nr >= 2 { f.er[nj1 + j] } else { 0.0 };
        f.ephi[j] = -at0(f.er[j], b);
    }
    for j in 0..nz {
        let b = if nr >= 2 { f.hphi[nz + j] } else { 0.0 };
        f.hr[j] = at0(f.hphi[j], b);
    }
}
