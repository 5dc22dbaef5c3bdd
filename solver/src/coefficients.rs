//! Update coefficients of one run: everything the kernel multiplies by,
//! computed once from the grid, the materials, the walls, m and Δt.
use crate::boundary::{Walls, ZWall};
use crate::consts::{EPS0, MU0};
use crate::kernel::{curl_r, curl_z, HFields};
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
    /// Update rows in parallel (for large grids; see [`crate::kernel`]).
    pub row_parallel: bool,
    /// Off-diagonal permittivity coupling of E_r and E_z at curved
    /// interfaces, if any (see [`Coupling`]).
    pub coupling: Option<Coupling>,
    /// Wall at z_min.
    pub bottom: ZWall,
    /// Wall at z_max.
    pub top: ZWall,
}

impl Coefficients {
    /// Coefficients for order `m` and step `dt` on `map` with `walls`.
    pub fn new(map: &MaterialMap, walls: &Walls, m: u32, dt: f64) -> Coefficients {
        let g = &map.grid;
        let (nr, nz) = (g.nr, g.nz);
        let mf = m as f64;
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
                            || (r_int && i == 0 && (c == Component::Ephi || m >= 1));
                    if held {
                        v[i * nj + j] = 0.0;
                    }
                }
            }
            v
        };
        let r_int = |i: usize| i as f64 * g.dr;
        let r_half = |i: usize| (i as f64 + 0.5) * g.dr;
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
            row_parallel: false,
            coupling: Coupling::new(map, walls, m, dt),
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
            let (mut er, mut ez) = (cp.er, cp.ez);
            for list in [&mut er, &mut ez] {
                for (_, taps) in list.iter_mut() {
                    taps.iter_mut().for_each(|t| t.1 *= s);
                }
            }
            c.coupling = Some(Coupling::indexed(er, ez, c.nr, c.nz));
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
/// Comput. Phys. 226, 2007, make the same point).
///
/// The kernel applies the coupling row by row, from an index built with
/// the lists (node rows and the (i, j) of every tap, so that no flat index
/// is divided while stepping); the lists are therefore read-only.
#[derive(Debug, Clone)]
pub struct Coupling {
    /// Per E_r node: its flat index and (E_z index, coefficient) taps.
    pub er: Vec<(usize, Vec<(usize, f64)>)>,
    /// Per E_z node: its flat index and (E_r index, coefficient) taps.
    pub ez: Vec<(usize, Vec<(usize, f64)>)>,
    index: CouplingIndex,
}

/// [`Coupling`] by grid row: for the nodes of row i,
/// `nodes[row[i]..row[i + 1]]` holds (column j, taps range), and each tap
/// is (i, j) of the node it reads and its coefficient.
#[derive(Debug, Clone, Default)]
struct RowIndex {
    row: Vec<usize>,
    nodes: Vec<(usize, usize, usize)>,
    taps: Vec<(usize, usize, f64)>,
}

impl RowIndex {
    /// The index of `list` for nodes in rows of `node_len` entries (rows
    /// 0..rows) reading nodes in rows of `tap_len` entries.
    fn new(
        list: &[(usize, Vec<(usize, f64)>)],
        rows: usize,
        node_len: usize,
        tap_len: usize,
    ) -> RowIndex {
        let mut ix = RowIndex {
            row: vec![0; rows + 1],
            ..Default::default()
        };
        for (l, taps) in list {
            let start = ix.taps.len();
            ix.taps
                .extend(taps.iter().map(|&(k, w)| (k / tap_len, k % tap_len, w)));
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

#[derive(Debug, Clone, Default)]
struct CouplingIndex {
    er: RowIndex,
    ez: RowIndex,
}

impl Coupling {
    /// The coupling of `map` for order `m` and step `dt`, or `None` when no
    /// node has an off-diagonal permittivity.
    pub fn new(map: &MaterialMap, walls: &Walls, m: u32, dt: f64) -> Option<Coupling> {
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
        };
        let held_ez = |i: usize, j: usize| map.ez.pec[i * nz + j] || i == nr || (i == 0 && m >= 1);
        let w_er = |i: usize, j: usize| {
            let mut w = g.r_half(i);
            if (j == 0 && walls.bottom == ZWall::Pmc) || (j == nz && walls.top == ZWall::Pmc) {
                w *= 0.5;
            }
            w
        };
        let w_ez = |i: usize| if i == 0 { g.dr / 8.0 } else { g.r_int(i) };
        let scale = dt / crate::consts::EPS0;
        let mut er = Vec::new();
        let mut ez: Vec<(usize, Vec<(usize, f64)>)> = Vec::new();
        let mut ez_taps: std::collections::BTreeMap<usize, Vec<(usize, f64)>> = Default::default();
        for i in 0..nr {
            for j in 0..=nz {
                if held_er(i, j) {
                    continue;
                }
                let l = i * nj1 + j;
                let tl = map.er.inv_eps_rz[l];
                let mut taps = Vec::new();
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
                    let t = 0.125 * (tl + map.ez.inv_eps_rz[k]);
                    if t == 0.0 {
                        continue;
                    }
                    let (wl, wk) = (w_er(i, j), w_ez(ki));
                    let wbar = 0.5 * (wl + wk);
                    taps.push((k, scale * t * wk / wbar));
                    ez_taps
                        .entry(k)
                        .or_default()
                        .push((l, scale * t * wl / wbar));
                }
                if !taps.is_empty() {
                    er.push((l, taps));
                }
            }
        }
        ez.extend(ez_taps);
        Some(Coupling::indexed(er, ez, nr, nz))
    }

    /// The coupling of these lists (sorted by node, as [`Coupling::new`]
    /// makes them), with its row index.
    fn indexed(
        er: Vec<(usize, Vec<(usize, f64)>)>,
        ez: Vec<(usize, Vec<(usize, f64)>)>,
        nr: usize,
        nz: usize,
    ) -> Coupling {
        let index = CouplingIndex {
            er: RowIndex::new(&er, nr, nz + 1, nz),
            ez: RowIndex::new(&ez, nr + 1, nz, nz + 1),
        };
        Coupling { er, ez, index }
    }

    /// Adds the coupling to the E_r and E_z nodes of row `i` (after their
    /// bulk update): Δe_r(l) = Σ_k M_lk C_z(k), Δe_z(k) = Σ_l M_kl C_r(l),
    /// C the curl of H at the tap ([`crate::kernel`]).
    #[inline]
    pub(crate) fn apply_row(
        &self,
        i: usize,
        c: &Coefficients,
        h: &HFields,
        er: &mut [f64],
        ez: &mut [f64],
    ) {
        let ix = &self.index;
        for &(j, a, b) in ix.er.of_row(i) {
            let s: f64 = ix.er.taps[a..b]
                .iter()
                .map(|&(ki, kj, w)| w * curl_z(h, c, ki, kj))
                .sum();
            er[j] += s;
        }
        for &(j, a, b) in ix.ez.of_row(i) {
            let s: f64 = ix.ez.taps[a..b]
                .iter()
                .map(|&(li, lj, w)| w * curl_r(h, c, li, lj))
                .sum();
            ez[j] += s;
        }
    }
}
