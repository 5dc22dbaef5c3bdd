//! Update coefficients of one run: everything the kernel multiplies by,
//! computed once from the grid, the materials, the walls, m and Δt.
use crate::boundary::{Walls, ZWall};
use crate::consts::{EPS0, MU0};
use crate::kernel::HFields;
use crate::skew;
use lathe_mesh::{Component, MaterialMap};

/// Per-node and per-row factors of the leapfrog update (see [`crate::kernel`]).
#[derive(Debug, Clone)]
pub struct Coefficients {
    /// Azimuthal order.
    pub m: u32,
    /// Radial cells.
    pub nr: usize,
    /// Axial cells.
    pub nz: usize,
    /// Time step Δt, s.
    pub dt: f64,
    /// Δt/μ0 (no magnetic materials).
    pub ch: f64,
    /// 1/Δr.
    pub inv_dr: f64,
    /// 1/Δz.
    pub inv_dz: f64,
    /// Δt/(ε0 ε_r) per E_r node; 0 where the node is held at zero.
    pub cb_er: Vec<f64>,
    /// Δt/(ε0 ε_r) per E_φ node; 0 where held (metal, PEC walls, axis).
    pub cb_ephi: Vec<f64>,
    /// Δt/(ε0 ε_r) per E_z node; 0 where held (metal, outer PEC wall, axis
    /// for m ≥ 1).
    pub cb_ez: Vec<f64>,
    /// m/r_i for integer rows (0 on the axis row, never used there).
    pub m_over_r_int: Vec<f64>,
    /// m/r_{i+½} for half-integer rows.
    pub m_over_r_half: Vec<f64>,
    /// r_{i+½}/(r_i Δr) for E_z rows i ≥ 1 (index i; 0 at i = 0).
    pub ez_out: Vec<f64>,
    /// r_{i−½}/(r_i Δr) for E_z rows i ≥ 1 (index i; 0 at i = 0).
    pub ez_in: Vec<f64>,
    /// r_{i+1}/(r_{i+½} Δr) for H_z rows.
    pub hz_out: Vec<f64>,
    /// r_i/(r_{i+½} Δr) for H_z rows (0 at i = 0: r E_φ vanishes on the axis).
    pub hz_in: Vec<f64>,
    /// Rows of the axis rod ([`axis_rod_rows`]): E nodes held at zero
    /// near the axis for orders m ≥ 2; 0 for none.
    pub axis_rod: usize,
    /// Split rows over the rayon pool (see [`crate::kernel`] and
    /// [`crate::RunOptions::row_parallel_cells`]).
    pub row_parallel: bool,
    /// Off-diagonal permittivity coupling of E_r and E_z at curved
    /// interfaces, if any (see [`Coupling`]).
    pub coupling: Option<Coupling>,
    /// Wall at z_min.
    pub bottom: ZWall,
    /// Wall at z_max.
    pub top: ZWall,
}

/// Rows of the axis rod for order `m`: ⌊m/2⌋ for m ≥ 2, none (0) below.
///
/// Near the axis the fields of order m ≥ 2 vanish as r^(m−1) (E_r, E_φ,
/// H_r, H_φ) and r^m (E_z, H_z), but the update's m/r terms grow as 1/r:
/// the nodes next to the axis carry the largest eigenvalue of the
/// curl-curl operator, and the step limit of [`crate::stability`] falls
/// roughly as 1/m. The rod holds every E node with r ≤ ρ = ⌊m/2⌋ Δr at zero
/// ([`in_axis_rod`]), as a PEC rod of radius ρ on the axis would. The
/// largest m/r left is then that of the first free E_r row,
/// m/((⌊m/2⌋ + ½)Δr) ≤ 2/Δr, the same as at m = 1, so every order steps at
/// about the m = 1 limit or better.
///
/// What the rod costs: the field a PEC rod of radius ρ scatters from a
/// field ∝ J_m(kr) is ∝ J_m(kρ)/Y_m(kρ) ≈ −π(kρ/2)^(2m)/(m!(m−1)!), so a
/// mode's frequency moves by O((kρ)^(2m)), k the wavenumber where the rod
/// stands (small-argument forms of J_m and Y_m, Abramowitz & Stegun 9.1.7
/// and 9.1.11). At the default resolution (kΔr ≈ 2π/30 in the densest
/// material) that is below 1e-4 at m = 2 and smaller for higher m; the
/// measured shifts are in `tests/axis_rod.rs`. The rod always stands well
/// inside the caustic r = m/k within which a field of order m is
/// evanescent: kρ = ⌊m/2⌋ kΔr ≤ m kΔr/2, a tenth of m at that resolution
/// and a third of it at 10 cells per wavelength.
///
/// The rod ends on a whole row of E_φ and E_z nodes, like every PEC wall of
/// the grid. Ending it half a row sooner (E_r of the last half row held,
/// E_φ and E_z beyond it free) leaves an H_z node driven by a single E_φ
/// node, and with the z absorbers that grew without bound at m = 2 and 4
/// (measured; the lossless operator itself stayed stable).
pub fn axis_rod_rows(m: u32) -> usize {
    if m >= 2 {
        (m / 2) as usize
    } else {
        0
    }
}

/// Whether the E node of component `c` in row `i` lies in an axis rod of
/// `rod` rows ([`axis_rod_rows`]): E_φ and E_z of the integer rows
/// i ≤ `rod`, E_r of the half rows i + ½ < `rod`. Never an H node.
pub fn in_axis_rod(c: Component, i: usize, rod: usize) -> bool {
    rod > 0
        && match c {
            Component::Er => i < rod,
            Component::Ephi | Component::Ez => i <= rod,
            _ => false,
        }
}

impl Coefficients {
    /// Coefficients for order `m` and step `dt` on `map` with `walls`, with
    /// the axis rod of [`axis_rod_rows`].
    pub fn new(map: &MaterialMap, walls: &Walls, m: u32, dt: f64) -> Coefficients {
        Coefficients::with_axis_rod(map, walls, m, dt, axis_rod_rows(m))
    }

    /// Coefficients for order `m` and step `dt` on `map` with `walls`, E
    /// nodes held in an axis rod of `rod` rows ([`in_axis_rod`]; 0 for
    /// none).
    pub fn with_axis_rod(
        map: &MaterialMap,
        walls: &Walls,
        m: u32,
        dt: f64,
        rod: usize,
    ) -> Coefficients {
        let g = &map.grid;
        let (nr, nz) = (g.nr, g.nz);
        let cb = |c: Component| -> Vec<f64> {
            let nodes = map.component(c);
            let (ni, nj) = c.shape(g);
            let mut v: Vec<f64> = nodes
                .eps_r
                .iter()
                .zip(&nodes.pec)
                .map(|(&e, &p)| if p { 0.0 } else { dt / (EPS0 * e) })
                .collect();
            for i in 0..ni {
                for j in 0..nj {
                    let (r_int, z_int) = (!c.staggering().0, !c.staggering().1);
                    let held =
                        (z_int && j == 0 && walls.bottom.is_conducting() && c != Component::Ez)
                            || (z_int
                                && j == nj - 1
                                && walls.top.is_conducting()
                                && c != Component::Ez)
                            || (r_int && i == ni - 1)
                            || (r_int && i == 0 && (c == Component::Ephi || m >= 1))
                            || in_axis_rod(c, i, rod);
                    if held {
                        v[i * nj + j] = 0.0;
                    }
                }
            }
            v
        };
        let rf = RadialFactors::new(g, m);
        Coefficients {
            m,
            nr,
            nz,
            dt,
            ch: dt / MU0,
            inv_dr: 1.0 / g.dr,
            inv_dz: 1.0 / g.dz,
            cb_er: cb(Component::Er),
            cb_ephi: cb(Component::Ephi),
            cb_ez: cb(Component::Ez),
            m_over_r_int: rf.m_over_r_int,
            m_over_r_half: rf.m_over_r_half,
            ez_out: rf.ez_out,
            ez_in: rf.ez_in,
            hz_out: rf.hz_out,
            hz_in: rf.hz_in,
            axis_rod: rod,
            row_parallel: false,
            coupling: Coupling::new(map, walls, m, dt, rod),
            bottom: walls.bottom,
            top: walls.top,
        }
    }

    /// The same coefficients for another time step (scales every Δt factor).
    pub fn with_dt(&self, dt: f64) -> Coefficients {
        let s = dt / self.dt;
        let mut c = self.clone();
        c.dt = dt;
        c.ch *= s;
        for v in [&mut c.cb_er, &mut c.cb_ephi, &mut c.cb_ez] {
            v.iter_mut().for_each(|x| *x *= s);
        }
        if let Some(cp) = c.coupling.take() {
            let mut lists = [cp.er, cp.ez, cp.er_er, cp.ez_ez];
            for list in lists.iter_mut() {
                for (_, taps) in list.iter_mut() {
                    taps.iter_mut().for_each(|t| t.1 *= s);
                }
            }
            let [er, ez, er_er, ez_ez] = lists;
            c.coupling = Some(Coupling {
                correction: cp.correction,
                index: cp.index.rescaled(s),
                er,
                ez,
                er_er,
                ez_ez,
            });
        }
        c
    }

    /// The E-node update factor array of component `c` (electric only).
    pub fn cb(&self, c: Component) -> &[f64] {
        match c {
            Component::Er => &self.cb_er,
            Component::Ephi => &self.cb_ephi,
            Component::Ez => &self.cb_ez,
            _ => panic!("expected an electric component, got {c:?}"),
        }
    }
}

/// The per-row factors of the radial differences and the m/r terms (see
/// the fields of [`Coefficients`] of the same names).
struct RadialFactors {
    m_over_r_int: Vec<f64>,
    m_over_r_half: Vec<f64>,
    ez_out: Vec<f64>,
    ez_in: Vec<f64>,
    hz_out: Vec<f64>,
    hz_in: Vec<f64>,
}

impl RadialFactors {
    fn new(g: &lathe_mesh::Grid, m: u32) -> RadialFactors {
        let (nr, mf) = (g.nr, m as f64);
        let r_int = |i: usize| i as f64 * g.dr;
        let r_half = |i: usize| (i as f64 + 0.5) * g.dr;
        RadialFactors {
            m_over_r_int: (0..=nr)
                .map(|i| if i == 0 { 0.0 } else { mf / r_int(i) })
                .collect(),
            m_over_r_half: (0..nr).map(|i| mf / r_half(i)).collect(),
            ez_out: (0..=nr)
                .map(|i| {
                    if i == 0 {
                        0.0
                    } else {
                        r_half(i) / (r_int(i) * g.dr)
                    }
                })
                .collect(),
            ez_in: (0..=nr)
                .map(|i| {
                    if i == 0 {
                        0.0
                    } else {
                        r_half(i - 1) / (r_int(i) * g.dr)
                    }
                })
                .collect(),
            hz_out: (0..nr).map(|i| r_int(i + 1) / (r_half(i) * g.dr)).collect(),
            hz_in: (0..nr).map(|i| r_int(i) / (r_half(i) * g.dr)).collect(),
        }
    }
}

/// The off-diagonal part of the anisotropic permittivity at curved
/// interfaces: E_r at (i+½, j) takes (Δt/ε0)·Σ M_lk C_z(k) over its four
/// neighbouring E_z nodes k, and E_z takes (Δt/ε0)·Σ M_kl C_r(l) over its
/// four E_r neighbours, C the curl of H at the node (the D increment over
/// ε0 Δt).
///
/// The pair coefficient t = ⅛ (T_rz(l) + T_rz(k)) — the mean of the two
/// nodes' off-diagonal inverse permittivities, over the four neighbours —
/// is split as M_lk = t·w_k/w̄, M_kl = t·w_l/w̄ (w the node volume weights,
/// w̄ their mean), so that M_lk/w_k = M_kl/w_l: the whole E-from-D map stays
/// symmetric in the energy inner product, which keeps the scheme's modes
/// real (a stability requirement for anisotropic FDTD; Werner & Cary, J.
/// Comput. Phys. 226, 2007, make the same point). That pair mean alone is
/// first order; the correction Y of `solver/src/skew.rs` (symmetric, positive
/// semi-definite, within one cell of each node) is added to it, E_r and E_z
/// nodes then also tapping their own kind ([`Coupling::er_er`],
/// [`Coupling::ez_ez`]), and the scheme converges at second order while
/// staying stable.
///
/// While stepping, the curl of H at every tapped node is computed once per
/// E half step (`Coupling::curls`, into the work space of
/// [`crate::Fields`]), and each node's taps are multiply-adds on it.
///
/// The kernel applies the coupling row by row, from an index built with
/// the lists (node rows, each tap as its entry of the curl buffer, and the
/// curl stencils, so that no flat index is divided while stepping); the
/// lists are therefore read-only.
#[derive(Debug, Clone)]
pub struct Coupling {
    /// Whether the curved-surface correction of `solver/src/skew.rs` is in
    /// the lists (without it, frequencies converge at first order in the
    /// cell where the coupling acts, not second).
    pub correction: SurfaceCorrection,
    /// Per E_r node: its flat index and (E_z index, coefficient) taps.
    pub er: Vec<(usize, Vec<(usize, f64)>)>,
    /// Per E_z node: its flat index and (E_r index, coefficient) taps.
    pub ez: Vec<(usize, Vec<(usize, f64)>)>,
    /// Per E_r node: its flat index and (E_r index, coefficient) taps (the
    /// correction of `solver/src/skew.rs`, its own node included).
    pub er_er: Vec<(usize, Vec<(usize, f64)>)>,
    /// Per E_z node: its flat index and (E_z index, coefficient) taps.
    pub ez_ez: Vec<(usize, Vec<(usize, f64)>)>,
    index: CouplingIndex,
}

/// The state of the curved-surface correction of a [`Coupling`] (see
/// `solver/src/skew.rs`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SurfaceCorrection {
    /// Computed and in the coupling's lists: second order at curved
    /// interfaces.
    Applied,
    /// Left out: its saddle-point system could not be assembled or
    /// factorised. The coupling is the symmetric pair mean alone (stable,
    /// first order at curved interfaces).
    Singular,
    /// Left out: it came out with a non-finite entry (as [`Self::Singular`]
    /// otherwise).
    NonFinite,
}

impl SurfaceCorrection {
    /// Whether the correction is in the coupling.
    pub fn applied(self) -> bool {
        self == SurfaceCorrection::Applied
    }

    /// Why it was left out, in words (`None` when applied).
    pub fn reason(self) -> Option<&'static str> {
        match self {
            SurfaceCorrection::Applied => None,
            SurfaceCorrection::Singular => Some("its linear system could not be factorised"),
            SurfaceCorrection::NonFinite => Some("it came out with a non-finite entry"),
        }
    }
}

/// (∇×H)_z at an E_z node as the kernel computes it ([`crate::kernel`]):
/// c0·h_φ(k0) − c1·h_φ(k1) − c2·h_r(k2), or 4h_φ(½)/Δr on the m = 0 axis
/// (c0·h_φ(k0)).
#[derive(Debug, Clone, Copy)]
struct ZTap {
    c: [f64; 3],
    k: [usize; 3],
    axis: bool,
}

/// (∇×H)_r at an E_r node: (m/r)·h_z(k0) − (s0·h_φ(k1) − s1·h_φ(k2))/Δz,
/// s = 1 inside and the odd image factor across a z wall.
#[derive(Debug, Clone, Copy)]
struct RTap {
    mr: f64,
    s: [f64; 2],
    k: [usize; 3],
}

/// One of [`Coupling`]'s lists by grid row: the nodes of row i are
/// `nodes[row[i]..row[i + 1]]`, each (column j, range of its taps).
#[derive(Debug, Clone)]
struct RowIndex<T> {
    row: Vec<usize>,
    nodes: Vec<(usize, usize, usize)>,
    taps: Vec<T>,
}

impl<T> RowIndex<T> {
    /// The index of `list` for nodes in rows 0..rows of `node_len` entries,
    /// each tap (flat index, coefficient) resolved by `tap`.
    fn new(
        list: &[(usize, Vec<(usize, f64)>)],
        rows: usize,
        node_len: usize,
        tap: impl Fn(usize, f64) -> T,
    ) -> RowIndex<T> {
        let mut ix = RowIndex {
            row: vec![0; rows + 1],
            nodes: Vec::new(),
            taps: Vec::new(),
        };
        for (l, taps) in list {
            let start = ix.taps.len();
            ix.taps.extend(taps.iter().map(|&(k, w)| tap(k, w)));
            ix.nodes.push((l % node_len, start, ix.taps.len()));
            ix.row[l / node_len + 1] += 1;
        }
        for i in 0..rows {
            ix.row[i + 1] += ix.row[i];
        }
        ix
    }

    /// Nodes of row `i`.
    #[inline]
    fn of_row(&self, i: usize) -> &[(usize, usize, usize)] {
        match self.row.get(i + 1) {
            Some(&end) => &self.nodes[self.row[i]..end],
            None => &[],
        }
    }
}

#[derive(Debug, Clone)]
struct CouplingIndex {
    /// The curl stencils at the tapped E_r nodes, then at the tapped E_z
    /// nodes: entries of the curl buffer (see [`Coupling::curls`]).
    curl_r: Vec<RTap>,
    curl_z: Vec<ZTap>,
    /// Taps as (curl buffer entry, coefficient), by target node row.
    er: RowIndex<(usize, f64)>,
    ez: RowIndex<(usize, f64)>,
    er_er: RowIndex<(usize, f64)>,
    ez_ez: RowIndex<(usize, f64)>,
    inv_dz: f64,
}

impl CouplingIndex {
    /// The same index with every coefficient times `s` (as
    /// [`Coefficients::with_dt`] scales the lists).
    fn rescaled(&self, s: f64) -> CouplingIndex {
        let mut ix = self.clone();
        for list in [&mut ix.er, &mut ix.ez, &mut ix.er_er, &mut ix.ez_ez] {
            list.taps.iter_mut().for_each(|t| t.1 *= s);
        }
        ix
    }
}

impl Coupling {
    /// The coupling of `map` for order `m` and step `dt` with an axis rod
    /// of `rod` rows ([`in_axis_rod`]), or `None` when no node has an
    /// off-diagonal permittivity.
    pub fn new(map: &MaterialMap, walls: &Walls, m: u32, dt: f64, rod: usize) -> Option<Coupling> {
        let g = &map.grid;
        if map
            .er
            .inv_eps_rz
            .iter()
            .chain(&map.ez.inv_eps_rz)
            .all(|&x| x == 0.0)
        {
            return None;
        }
        let (nr, nz) = (g.nr, g.nz);
        let nj1 = nz + 1;
        let held_er = |i: usize, j: usize| {
            map.er.pec[i * nj1 + j]
                || (j == 0 && walls.bottom.is_conducting())
                || (j == nz && walls.top.is_conducting())
                || in_axis_rod(Component::Er, i, rod)
        };
        let held_ez = |i: usize, j: usize| {
            map.ez.pec[i * nz + j]
                || i == nr
                || (i == 0 && m >= 1)
                || in_axis_rod(Component::Ez, i, rod)
        };
        let w_er = |i: usize, j: usize| {
            let mut w = g.r_half(i);
            if (j == 0 && walls.bottom == ZWall::Pmc) || (j == nz && walls.top == ZWall::Pmc) {
                w *= 0.5;
            }
            w
        };
        let w_ez = |i: usize| if i == 0 { g.dr / 8.0 } else { g.r_int(i) };
        // The symmetric pair values of N_s (unscaled): (E_r l, E_z k, M_lk,
        // M_kl) for every pair of free neighbours either of which has an
        // off-diagonal entry.
        let mut pairs: Vec<(usize, usize, f64, f64)> = Vec::new();
        for i in 0..nr {
            for j in 0..=nz {
                if held_er(i, j) {
                    continue;
                }
                let l = i * nj1 + j;
                let tl = map.er.inv_eps_rz[l];
                for (ki, kj) in [
                    (i, j.wrapping_sub(1)),
                    (i, j),
                    (i + 1, j.wrapping_sub(1)),
                    (i + 1, j),
                ] {
                    if kj >= nz || held_ez(ki, kj) {
                        continue;
                    }
                    let k = ki * nz + kj;
                    let tk = map.ez.inv_eps_rz[k];
                    if tl == 0.0 && tk == 0.0 {
                        continue;
                    }
                    let t = 0.125 * (tl + tk);
                    let (wl, wk) = (w_er(i, j), w_ez(ki));
                    let wbar = 0.5 * (wl + wk);
                    pairs.push((l, k, t * wk / wbar, t * wl / wbar));
                }
            }
        }
        // The correction that stands in for the consistent form.
        let held_ephi = |i: usize, j: usize| {
            map.ephi.pec[i * nj1 + j]
                || (j == 0 && walls.bottom.is_conducting())
                || (j == nz && walls.top.is_conducting())
                || i == nr
                || i == 0
                || in_axis_rod(Component::Ephi, i, rod)
        };
        let free = |(c, k): skew::Node| match c {
            0 => !held_er(k / nj1, k % nj1),
            1 => !held_ephi(k / nj1, k % nj1),
            _ => !held_ez(k / nz, k % nz),
        };
        let diag = |(c, k): skew::Node| match c {
            0 => 1.0 / map.er.eps_r[k],
            1 => 1.0 / map.ephi.eps_r[k],
            _ => 1.0 / map.ez.eps_r[k],
        };
        let weight = |(c, k): skew::Node| match c {
            0 => w_er(k / nj1, k % nj1),
            1 => {
                let (i, j) = (k / nj1, k % nj1);
                let pmc =
                    (j == 0 && walls.bottom == ZWall::Pmc) || (j == nz && walls.top == ZWall::Pmc);
                g.r_int(i) * if pmc { 0.5 } else { 1.0 }
            }
            _ => w_ez(k / nz),
        };
        let t = |(c, k): skew::Node| match c {
            0 => map.er.inv_eps_rz[k],
            2 => map.ez.inv_eps_rz[k],
            _ => 0.0,
        };
        let layout = skew::Layout {
            nr,
            nz,
            m,
            dr: g.dr,
            dz: g.dz,
            free: &free,
            diag: &diag,
            weight: &weight,
        };
        let (y, correction) = match skew::correction(&layout, &pairs, &t) {
            Ok(y) => (y, SurfaceCorrection::Applied),
            Err(why) => (Vec::new(), why),
        };
        // Merge: cross entries into the pair taps, same-type entries into
        // their own lists; scaled by Δt/ε0.
        let scale = dt / crate::consts::EPS0;
        let mut cross: std::collections::BTreeMap<(usize, usize), f64> = Default::default();
        let mut back: std::collections::BTreeMap<(usize, usize), f64> = Default::default();
        for &(l, k, mlk, mkl) in &pairs {
            *cross.entry((l, k)).or_default() += mlk;
            *back.entry((k, l)).or_default() += mkl;
        }
        let mut rr: std::collections::BTreeMap<(usize, usize), f64> = Default::default();
        let mut zz: std::collections::BTreeMap<(usize, usize), f64> = Default::default();
        for &((ca, a), (cc, c), v) in &y {
            match (ca, cc) {
                (0, 2) => *cross.entry((a, c)).or_default() += v,
                (2, 0) => *back.entry((a, c)).or_default() += v,
                (0, 0) => *rr.entry((a, c)).or_default() += v,
                (2, 2) => *zz.entry((a, c)).or_default() += v,
                _ => {}
            }
        }
        let lists = |m: std::collections::BTreeMap<(usize, usize), f64>| {
            let mut out: Vec<(usize, Vec<(usize, f64)>)> = Vec::new();
            for ((a, b), v) in m {
                if v == 0.0 {
                    continue;
                }
                match out.last_mut() {
                    Some((n, taps)) if *n == a => taps.push((b, scale * v)),
                    _ => out.push((a, vec![(b, scale * v)])),
                }
            }
            out
        };
        let (er, ez, er_er, ez_ez) = (lists(cross), lists(back), lists(rr), lists(zz));
        let mut cp = Coupling::indexed(er, ez, er_er, ez_ez, g, walls, m);
        cp.correction = correction;
        Some(cp)
    }

    /// The coupling of these lists (sorted by node, as [`Coupling::new`]
    /// makes them), with its row index and the curl stencils of its taps,
    /// marked [`SurfaceCorrection::Applied`] (the caller says otherwise).
    fn indexed(
        er: Vec<(usize, Vec<(usize, f64)>)>,
        ez: Vec<(usize, Vec<(usize, f64)>)>,
        er_er: Vec<(usize, Vec<(usize, f64)>)>,
        ez_ez: Vec<(usize, Vec<(usize, f64)>)>,
        g: &lathe_mesh::Grid,
        walls: &Walls,
        m: u32,
    ) -> Coupling {
        let (nr, nz) = (g.nr, g.nz);
        let nj1 = nz + 1;
        let rf = RadialFactors::new(g, m);
        let inv_dr = 1.0 / g.dr;
        let img = |w: ZWall| if w == ZWall::Pmc { -1.0 } else { 0.0 };
        let z_tap = |k: usize| {
            let (i, j) = (k / nz, k % nz);
            if i == 0 {
                ZTap {
                    c: [4.0 * inv_dr, 0.0, 0.0],
                    k: [j, 0, 0],
                    axis: true,
                }
            } else {
                ZTap {
                    c: [rf.ez_out[i], rf.ez_in[i], rf.m_over_r_int[i]],
                    k: [i * nz + j, (i - 1) * nz + j, i * nz + j],
                    axis: false,
                }
            }
        };
        let r_tap = |l: usize| {
            let (i, j) = (l / nj1, l % nj1);
            let (s0, k1) = if j < nz {
                (1.0, i * nz + j)
            } else {
                (img(walls.top), i * nz + nz - 1)
            };
            let (s1, k2) = if j > 0 {
                (1.0, i * nz + j - 1)
            } else {
                (img(walls.bottom), i * nz)
            };
            RTap {
                mr: rf.m_over_r_half[i],
                s: [s0, s1],
                k: [l, k1, k2],
            }
        };
        // Every curl a tap reads, once: the E_r nodes' then the E_z nodes'.
        let mut at_r: std::collections::BTreeMap<usize, usize> = Default::default();
        let mut at_z: std::collections::BTreeMap<usize, usize> = Default::default();
        for (_, taps) in ez.iter().chain(&er_er) {
            at_r.extend(taps.iter().map(|t| (t.0, 0)));
        }
        for (_, taps) in er.iter().chain(&ez_ez) {
            at_z.extend(taps.iter().map(|t| (t.0, 0)));
        }
        let nr_curls = at_r.len();
        for (q, v) in at_r.values_mut().enumerate() {
            *v = q;
        }
        for (q, v) in at_z.values_mut().enumerate() {
            *v = nr_curls + q;
        }
        let index = CouplingIndex {
            curl_r: at_r.keys().map(|&l| r_tap(l)).collect(),
            curl_z: at_z.keys().map(|&k| z_tap(k)).collect(),
            er: RowIndex::new(&er, nr, nj1, |k, w| (at_z[&k], w)),
            ez: RowIndex::new(&ez, nr + 1, nz, |l, w| (at_r[&l], w)),
            er_er: RowIndex::new(&er_er, nr, nj1, |l, w| (at_r[&l], w)),
            ez_ez: RowIndex::new(&ez_ez, nr + 1, nz, |k, w| (at_z[&k], w)),
            inv_dz: 1.0 / g.dz,
        };
        Coupling {
            correction: SurfaceCorrection::Applied,
            er,
            ez,
            er_er,
            ez_ez,
            index,
        }
    }

    /// Entries of the curl buffer [`Coupling::curls`] fills.
    pub(crate) fn curl_len(&self) -> usize {
        self.index.curl_r.len() + self.index.curl_z.len()
    }

    /// The curl of H at every tapped node (the D increment over ε0 Δt, by
    /// the kernel's own arithmetic, [`crate::kernel`]) into `out`, once per
    /// E half step before its rows.
    pub(crate) fn curls(&self, h: &HFields, out: &mut [f64]) {
        let ix = &self.index;
        let (hr, hphi, hz) = (h.hr, h.hphi, h.hz);
        let idz = ix.inv_dz;
        let (a, b) = out.split_at_mut(ix.curl_r.len());
        for (o, t) in a.iter_mut().zip(&ix.curl_r) {
            // (∇×H)_r at an E_r node.
            let above = t.s[0] * hphi[t.k[1]];
            let below = t.s[1] * hphi[t.k[2]];
            *o = t.mr * hz[t.k[0]] - (above - below) * idz;
        }
        for (o, t) in b.iter_mut().zip(&ix.curl_z) {
            // (∇×H)_z at an E_z node.
            *o = if t.axis {
                t.c[0] * hphi[t.k[0]]
            } else {
                t.c[0] * hphi[t.k[0]] - t.c[1] * hphi[t.k[1]] - t.c[2] * hr[t.k[2]]
            };
        }
    }

    /// Adds the coupling to the E_r and E_z nodes of row `i` (after their
    /// bulk update): Δe_r(l) = Σ_k M_lk C(k) over its E_z and E_r taps,
    /// Δe_z(k) likewise, C the curls [`Coupling::curls`] put in `curl`.
    #[inline]
    pub(crate) fn apply_row(&self, i: usize, curl: &[f64], er: &mut [f64], ez: &mut [f64]) {
        let ix = &self.index;
        let sum = |taps: &[(usize, f64)]| taps.iter().map(|&(q, w)| w * curl[q]).sum::<f64>();
        for &(j, a, b) in ix.er.of_row(i) {
            er[j] += sum(&ix.er.taps[a..b]);
        }
        for &(j, a, b) in ix.er_er.of_row(i) {
            er[j] += sum(&ix.er_er.taps[a..b]);
        }
        for &(j, a, b) in ix.ez.of_row(i) {
            ez[j] += sum(&ix.ez.taps[a..b]);
        }
        for &(j, a, b) in ix.ez_ez.of_row(i) {
            ez[j] += sum(&ix.ez_ez.taps[a..b]);
        }
    }
}
