//! Update coefficients of one run: everything the kernel multiplies by,
//! computed once from the grid, the materials, the walls, m and Δt.
use crate::boundary::{Walls, ZWall};
use crate::consts::{EPS0, MU0};
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
