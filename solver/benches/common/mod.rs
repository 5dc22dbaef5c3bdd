//! Shared parts of the solver benchmarks: the benchmark problems, a plain
//! reference kernel, the full time step as a run takes it, timing helpers
//! and a description of the machine.
//!
//! Timing is wall-clock (`std::time::Instant`), repeated, and reported as
//! medians; it is printed, never asserted.
#![allow(dead_code)]

use lathe_mesh::{fill, Body, FillOptions, Grid, Material, MaterialMap, Shape};
use lathe_solver::coefficients::Coefficients;
use lathe_solver::consts::{C0, MU0};
use lathe_solver::excitation::{inject, read, Point};
use lathe_solver::kernel::{step, update_e, update_h};
use lathe_solver::pml::Pml;
use lathe_solver::{Absorber, Fields, OuterWall, Problem, RunOptions, Walls, ZWall};
use std::time::Instant;

const MM: f64 = 1e-3;
const GHZ: f64 = 1e9;

/// An ε_r 38 body on the z = 0 plane (`bottom`) in a square region of
/// `side` metres, band 4–8 GHz, `per_wavelength` cells per wavelength in
/// the dielectric at f_max (30 is the default resolution), with the
/// default 16-cell absorbers on the outer radius and the top, added beyond
/// the region as the scenario reader does.
fn open_eps38(side: f64, shape: Shape, bottom: ZWall, per_wavelength: f64) -> Problem {
    let (f_min, f_max, eps) = (4.0 * GHZ, 8.0 * GHZ, 38.0);
    let cell = C0 / (f_max * f64::sqrt(eps)) / per_wavelength;
    let region = Grid::new(side, 0.0, side, cell).unwrap();
    let absorber = Absorber::default_for(f_min);
    let n = absorber.cells;
    let grid = Grid {
        nr: region.nr + n,
        nz: region.nz + n,
        ..region
    };
    let body = Body {
        shape,
        material: Material::Dielectric {
            eps_r: eps,
            loss_tangent: 0.0,
        },
    };
    Problem {
        materials: fill(&grid, &[body], FillOptions::default()),
        walls: Walls {
            bottom,
            top: ZWall::Pml(absorber),
            outer: OuterWall::Pml(absorber),
        },
        f_min,
        f_max,
        options: RunOptions::default(),
    }
}

/// The upper half of the isolated ε_r 38 benchmark cylinder of
/// tests/open_resonator.rs (radius 5.25 mm, half height 2.3 mm on the
/// mid-plane `bottom`, region 16 mm × 16 mm; see [`open_eps38`]). 95 × 95
/// cells.
pub fn benchmark_half(bottom: ZWall) -> Problem {
    let cylinder = Shape::Cylinder {
        radius: 5.25 * MM,
        height: 2.3 * MM,
        base: 0.0,
    };
    open_eps38(16.0 * MM, cylinder, bottom, 30.0)
}

/// The dielectric sphere of tests/open_resonator.rs (ε_r 38, radius
/// 4.7 mm) on a PEC plane through its centre, region 14 mm × 14 mm (see
/// [`open_eps38`]): a curved surface, so the off-diagonal permittivity
/// coupling is active. `per_wavelength` cells per wavelength in the
/// dielectric at 8 GHz: 30 is the default resolution (86 × 86 cells), 30√2
/// and 60 the finer grids of `lathe modes --refine`.
pub fn sphere_half(per_wavelength: f64) -> Problem {
    let sphere = Shape::Sphere {
        radius: 4.7 * MM,
        center: 0.0,
    };
    open_eps38(14.0 * MM, sphere, ZWall::Pec, per_wavelength)
}

/// The dielectric-resonator antenna of examples/access_point_dra.toml: an
/// ε_r 12.8 puck (radius 6.05 mm, height 5.4 mm) on a PEC ground disk
/// (radius 26.5 mm, 1.5 mm thick, top face at z = 0), absorbers on the
/// outer radius, the bottom and the top, band 4.6–7.4 GHz, on the grid
/// `lathe check` prints for that file (121 × 120 cells of 0.3765 ×
/// 0.3747 mm from z = −20.529 mm, the absorbers' 16 cells included): the
/// main job's grid, with two z layers in every row.
pub fn dra_on_disk() -> Problem {
    let (f_min, f_max) = (4.6 * GHZ, 7.4 * GHZ);
    let grid = Grid {
        nr: 121,
        nz: 120,
        dr: 45.559 * MM / 121.0,
        dz: (24.429 + 20.529) * MM / 120.0,
        z0: -20.529 * MM,
    };
    let disk = Body {
        shape: Shape::Cylinder {
            radius: 26.5 * MM,
            height: 1.5 * MM,
            base: -1.5 * MM,
        },
        material: Material::Pec,
    };
    let puck = Body {
        shape: Shape::Cylinder {
            radius: 6.05 * MM,
            height: 5.4 * MM,
            base: 0.0,
        },
        material: Material::Dielectric {
            eps_r: 12.8,
            loss_tangent: 0.0,
        },
    };
    let absorber = Absorber::default_for(f_min);
    Problem {
        materials: fill(&grid, &[disk, puck], FillOptions::default()),
        walls: Walls {
            bottom: ZWall::Pml(absorber),
            top: ZWall::Pml(absorber),
            outer: OuterWall::Pml(absorber),
        },
        f_min,
        f_max,
        options: RunOptions::default(),
    }
}

/// A closed can of `nr × nz` cells of 0.1 mm (PEC bottom and outer wall,
/// PMC top) with an ε_r 24.3 puck, for grids of any size.
pub fn puck_can(nr: usize, nz: usize) -> (MaterialMap, Walls) {
    let cell = 0.1 * MM;
    let g = Grid::new(nr as f64 * cell, 0.0, nz as f64 * cell, cell).unwrap();
    let puck = Body {
        shape: Shape::Cylinder {
            radius: 0.4 * g.radius(),
            height: 0.3 * g.z_top(),
            base: 0.2 * g.z_top(),
        },
        material: Material::Dielectric {
            eps_r: 24.3,
            loss_tangent: 0.0,
        },
    };
    let walls = Walls {
        bottom: ZWall::Pec,
        top: ZWall::Pmc,
        outer: OuterWall::Pec,
    };
    (fill(&g, &[puck], FillOptions::default()), walls)
}

/// An open puck of `nr × nz` cells of 0.1 mm, for grids of any size: a
/// PMC bottom (the mid-plane of an isolated puck), the default 16-cell
/// absorber (cubic grading, terminated by PEC) on the outer radius and the
/// top, counted inside the `nr × nz` cells, and an ε_r 24.3 puck of radius
/// 0.4 and half height 0.3 of the region inside the absorbers, standing on
/// the mid-plane. Band 3.1–7.4 GHz (it sets the absorber's frequency shift
/// and the plan's pulse; the stepping cost does not depend on it).
pub fn puck_open(nr: usize, nz: usize) -> Problem {
    let (f_min, f_max) = (3.1 * GHZ, 7.4 * GHZ);
    let absorber = Absorber::default_for(f_min);
    let n = absorber.cells;
    assert!(
        nr > 2 * n && nz > 2 * n,
        "expected more than {} cells each way, got {nr} × {nz}",
        2 * n
    );
    let cell = 0.1 * MM;
    let g = Grid::new(nr as f64 * cell, 0.0, nz as f64 * cell, cell).unwrap();
    let (inner_r, inner_z) = ((nr - n) as f64 * cell, (nz - n) as f64 * cell);
    let puck = Body {
        shape: Shape::Cylinder {
            radius: 0.4 * inner_r,
            height: 0.3 * inner_z,
            base: 0.0,
        },
        material: Material::Dielectric {
            eps_r: 24.3,
            loss_tangent: 0.0,
        },
    };
    Problem {
        materials: fill(&g, &[puck], FillOptions::default()),
        walls: Walls {
            bottom: ZWall::Pmc,
            top: ZWall::Pml(absorber),
            outer: OuterWall::Pml(absorber),
        },
        f_min,
        f_max,
        options: RunOptions::default(),
    }
}

/// A non-zero start so that no branch of the arithmetic sees only zeros.
pub fn seeded_fields(g: &Grid) -> Fields {
    let mut f = Fields::zeros(g);
    for (k, x) in f.ez.iter_mut().enumerate() {
        *x = 1e-3 * ((k % 97) as f64);
    }
    for (k, x) in f.ephi.iter_mut().enumerate() {
        *x = 1e-3 * ((k % 89) as f64) - 0.04;
    }
    f
}

/// The full leapfrog step by whole passes, as solver/src/run.rs calls it:
/// H update, absorber correction, E update (with the off-diagonal
/// coupling, if any), absorber correction, then the source current `s`.
pub fn separate_step(
    f: &mut Fields,
    c: &Coefficients,
    pml: &mut Option<Pml>,
    sources: &[Point],
    s: f64,
) {
    update_h(f, c);
    if let Some(p) = pml.as_mut() {
        p.correct_h(f, c);
    }
    update_e(f, c);
    if let Some(p) = pml.as_mut() {
        p.correct_e(f, c);
    }
    if !sources.is_empty() {
        inject(f, c, sources, s);
    }
}

/// The same full step with the row-fused kernel (`kernel::step`, same
/// bits), then the source current `s`.
pub fn full_step(
    f: &mut Fields,
    c: &Coefficients,
    pml: &mut Option<Pml>,
    sources: &[Point],
    s: f64,
) {
    step(f, c, pml.as_mut());
    if !sources.is_empty() {
        inject(f, c, sources, s);
    }
}

/// Reads every probe into `out` (one sample each), as a run does every
/// `decimation` steps.
pub fn sample(f: &Fields, probes: &[Point], out: &mut [Vec<f64>]) {
    for (sig, p) in out.iter_mut().zip(probes) {
        sig.push(read(f, p));
    }
}

/// A plain reference kernel: the six BOR curl equations of
/// `lathe_solver::kernel` (module docs), written directly, with no
/// absorber, no sources, no probes and no coupling. Per-node factors
/// Δt/(ε0 ε_r) (zero on held nodes) come from `Coefficients`; the radial
/// factors are computed here from the radii.
pub struct Reference {
    nr: usize,
    nz: usize,
    m: f64,
    ch: f64,
    dr: f64,
    dz: f64,
    cb_er: Vec<f64>,
    cb_ephi: Vec<f64>,
    cb_ez: Vec<f64>,
    /// Odd image factor of tangential H below j = 0 and above j = nz
    /// (−1 on a PMC plane, 0 where the E node is held).
    img_bottom: f64,
    img_top: f64,
}

impl Reference {
    pub fn new(c: &Coefficients, g: &Grid) -> Reference {
        let img = |w: ZWall| if w == ZWall::Pmc { -1.0 } else { 0.0 };
        Reference {
            nr: g.nr,
            nz: g.nz,
            m: c.m as f64,
            ch: c.dt / MU0,
            dr: g.dr,
            dz: g.dz,
            cb_er: c.cb_er.clone(),
            cb_ephi: c.cb_ephi.clone(),
            cb_ez: c.cb_ez.clone(),
            img_bottom: img(c.bottom),
            img_top: img(c.top),
        }
    }

    /// One step: H from E (Faraday), then E from H (Ampère). Not inlined,
    /// like the library's step, so both are timed as calls.
    #[inline(never)]
    pub fn step(&self, f: &mut Fields) {
        let (nr, nz, m, ch) = (self.nr, self.nz, self.m, self.ch);
        let dr = self.dr;
        let (idr, idz) = (1.0 / self.dr, 1.0 / self.dz);
        let nj1 = nz + 1;
        let r = |x: f64| x * dr; // radius of row position x (in cells)
                                 // μ ∂t h_r = (m/r) e_z + ∂z e_φ  (rows 1..nr; the axis row is derived)
        for i in 1..nr {
            let mr = m / r(i as f64);
            let ez = &f.ez[i * nz..(i + 1) * nz];
            let ep = &f.ephi[i * nj1..(i + 1) * nj1];
            let hr = &mut f.hr[i * nz..(i + 1) * nz];
            for j in 0..nz {
                hr[j] += ch * (mr * ez[j] + (ep[j + 1] - ep[j]) * idz);
            }
        }
        // μ ∂t h_φ = −∂z e_r + ∂r e_z
        for i in 0..nr {
            let er = &f.er[i * nj1..(i + 1) * nj1];
            let ez0 = &f.ez[i * nz..(i + 1) * nz];
            let ez1 = &f.ez[(i + 1) * nz..(i + 2) * nz];
            let hp = &mut f.hphi[i * nz..(i + 1) * nz];
            for j in 0..nz {
                hp[j] += ch * ((ez1[j] - ez0[j]) * idr - (er[j + 1] - er[j]) * idz);
            }
        }
        // μ ∂t h_z = −(1/r) ∂r(r e_φ) − (m/r) e_r, as the annulus integral
        // (r_{i+1} e_φ(i+1) − r_i e_φ(i)) / (r_{i+½} Δr)
        for i in 0..nr {
            let (r0, r1, rh) = (r(i as f64), r(i as f64 + 1.0), r(i as f64 + 0.5));
            let (a, b, mr) = (r1 / (rh * dr), r0 / (rh * dr), m / rh);
            let ep0 = &f.ephi[i * nj1..(i + 1) * nj1];
            let ep1 = &f.ephi[(i + 1) * nj1..(i + 2) * nj1];
            let er = &f.er[i * nj1..(i + 1) * nj1];
            let hz = &mut f.hz[i * nj1..(i + 1) * nj1];
            for j in 0..nj1 {
                hz[j] -= ch * (a * ep1[j] - b * ep0[j] + mr * er[j]);
            }
        }
        // ε ∂t e_r = (m/r) h_z − ∂z h_φ
        for i in 0..nr {
            let mr = m / r(i as f64 + 0.5);
            let cb = &self.cb_er[i * nj1..(i + 1) * nj1];
            let hz = &f.hz[i * nj1..(i + 1) * nj1];
            let hp = &f.hphi[i * nz..(i + 1) * nz];
            let er = &mut f.er[i * nj1..(i + 1) * nj1];
            er[0] += cb[0] * (mr * hz[0] - (1.0 - self.img_bottom) * hp[0] * idz);
            for j in 1..nz {
                er[j] += cb[j] * (mr * hz[j] - (hp[j] - hp[j - 1]) * idz);
            }
            er[nz] += cb[nz] * (mr * hz[nz] - (self.img_top - 1.0) * hp[nz - 1] * idz);
        }
        // ε ∂t e_φ = ∂z h_r − ∂r h_z  (rows 1..nr)
        for i in 1..nr {
            let cb = &self.cb_ephi[i * nj1..(i + 1) * nj1];
            let hr = &f.hr[i * nz..(i + 1) * nz];
            let hz0 = &f.hz[(i - 1) * nj1..i * nj1];
            let hz1 = &f.hz[i * nj1..(i + 1) * nj1];
            let ep = &mut f.ephi[i * nj1..(i + 1) * nj1];
            ep[0] += cb[0] * ((1.0 - self.img_bottom) * hr[0] * idz - (hz1[0] - hz0[0]) * idr);
            for j in 1..nz {
                ep[j] += cb[j] * ((hr[j] - hr[j - 1]) * idz - (hz1[j] - hz0[j]) * idr);
            }
            ep[nz] +=
                cb[nz] * ((self.img_top - 1.0) * hr[nz - 1] * idz - (hz1[nz] - hz0[nz]) * idr);
        }
        // ε ∂t e_z = (1/r) ∂r(r h_φ) − (m/r) h_r, as
        // (r_{i+½} h_φ(i+½) − r_{i−½} h_φ(i−½)) / (r_i Δr)  (rows 1..nr)
        for i in 1..nr {
            let (ri, rp, rm) = (r(i as f64), r(i as f64 + 0.5), r(i as f64 - 0.5));
            let (a, b, mr) = (rp / (ri * dr), rm / (ri * dr), m / ri);
            let cb = &self.cb_ez[i * nz..(i + 1) * nz];
            let hp0 = &f.hphi[(i - 1) * nz..i * nz];
            let hp1 = &f.hphi[i * nz..(i + 1) * nz];
            let hr = &f.hr[i * nz..(i + 1) * nz];
            let ez = &mut f.ez[i * nz..(i + 1) * nz];
            for j in 0..nz {
                ez[j] += cb[j] * (a * hp1[j] - b * hp0[j] - mr * hr[j]);
            }
        }
        // m = 0 axis: ε ∂t e_z(0) = 4 h_φ(½)/Δr (cb is zero there for m ≥ 1)
        if self.m == 0.0 {
            for j in 0..nz {
                f.ez[j] += self.cb_ez[j] * 4.0 * f.hphi[j] * idr;
            }
        }
    }
}

/// Largest |a − b| over every component, relative to the largest |a|.
pub fn relative_difference(a: &Fields, b: &Fields) -> f64 {
    use lathe_mesh::Component;
    let mut worst: f64 = 0.0;
    let mut scale: f64 = 0.0;
    for c in Component::ALL {
        for (x, y) in a.get(c).iter().zip(b.get(c)) {
            worst = worst.max((x - y).abs());
            scale = scale.max(x.abs());
        }
    }
    worst / scale.max(f64::MIN_POSITIVE)
}

/// Median of `v` (sorted in place).
pub fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// Wall seconds of `f`.
pub fn seconds(f: impl FnOnce()) -> f64 {
    let t = Instant::now();
    f();
    t.elapsed().as_secs_f64()
}

/// CPU seconds (user + system) of this process so far, from /proc/self/stat
/// (Linux; `None` elsewhere). Clock ticks are taken as 100 per second, the
/// Linux USER_HZ on every common platform.
pub fn cpu_seconds() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/stat").ok()?;
    // Fields after the command name (which is parenthesised and may hold
    // spaces): state is field 3, utime 14, stime 15.
    let rest = &s[s.rfind(')')? + 2..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    let ut: f64 = f.get(11)?.parse().ok()?;
    let st: f64 = f.get(12)?.parse().ok()?;
    Some((ut + st) / 100.0)
}

/// One data or unified cache of CPU 0, as /sys describes it.
pub struct Cache {
    /// Level (1, 2, 3, ...).
    pub level: u32,
    /// "d" for a data cache, "" for a unified one.
    pub kind: &'static str,
    /// Size as /sys writes it, e.g. "2048K".
    pub size: String,
    /// Size in bytes (K, M, G read as powers of 1024).
    pub bytes: usize,
}

/// The data and unified caches of CPU 0 from /sys (Linux; empty elsewhere),
/// innermost first; instruction caches are left out.
pub fn caches() -> Vec<Cache> {
    let read = |p: &str| std::fs::read_to_string(p).ok();
    let mut out = Vec::new();
    for k in 0..8 {
        let base = format!("/sys/devices/system/cpu/cpu0/cache/index{k}");
        let (Some(level), Some(kind), Some(size)) = (
            read(&format!("{base}/level")),
            read(&format!("{base}/type")),
            read(&format!("{base}/size")),
        ) else {
            continue;
        };
        let kind = match kind.trim() {
            "Data" => "d",
            "Instruction" => continue,
            _ => "",
        };
        let (Ok(level), size) = (level.trim().parse(), size.trim().to_string()) else {
            continue;
        };
        let (digits, unit) = size.split_at(size.trim_end_matches(char::is_alphabetic).len());
        let scale = match unit {
            "" => 1,
            "K" => 1 << 10,
            "M" => 1 << 20,
            "G" => 1 << 30,
            _ => continue,
        };
        let Ok(n) = digits.parse::<usize>() else {
            continue;
        };
        out.push(Cache {
            level,
            kind,
            size,
            bytes: n * scale,
        });
    }
    out
}

/// The machine: CPU model, online CPUs, cache sizes and the load average,
/// from /proc and /sys (Linux); what is unavailable is left out.
pub fn machine() -> String {
    let read = |p: &str| std::fs::read_to_string(p).ok();
    let model = read("/proc/cpuinfo")
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split(':').nth(1))
                .map(|x| x.trim().to_string())
        })
        .unwrap_or_else(|| "unknown CPU".into());
    let cpus = std::thread::available_parallelism().map_or(0, |n| n.get());
    let caches: Vec<String> = caches()
        .iter()
        .map(|c| format!("L{}{} {}", c.level, c.kind, c.size))
        .collect();
    let load = read("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_default();
    format!(
        "{model}, {cpus} CPUs, caches per core/shared: {}; load average {load}",
        caches.join(", ")
    )
}
