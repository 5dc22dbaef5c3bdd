//! Cost growth: wall time of the full leapfrog step against the number of
//! cells, from 10^4 to 10^7 cells, with one and with two threads. Ideally
//! the time per step is ∝ cells (a fixed cost per cell update); where the
//! working set (fields, update coefficients, absorber auxiliary fields)
//! stops fitting a cache level, each cell update waits longer for memory
//! and the cost per cell update rises: a knee. Run:
//! `cargo bench -p lathe-solver --bench growth`.
//!
//! Problem: `common::puck_open(n, n)`, an open ε_r 24.3 puck on a PMC
//! mid-plane with the default 16-cell absorbers on the outer radius and the
//! top, at m = 1, for ten square grids whose cell count grows by 10^(1/3)
//! per size (100² … 3162²). The absorbers stay 16 cells thick, so their
//! share of the cells falls from 29 % to 1 % along the family (printed):
//! absorber cells cost more than bulk cells, which raises the small grids'
//! cost per cell update a little and so hides part of a knee, not makes one.
//!
//! Time step: the stability limit as a run plans it (`plan`, whose Lanczos
//! estimate of the largest eigenvalue of the curl-curl operator would be
//! slow at 10^7 cells), computed on the two smallest grids and the smaller
//! grid's Δt used for all: the cell is the same 0.1 mm everywhere, so the
//! limit is the same up to the estimate (both figures are printed).
//!
//! Each size: coefficients with `Coefficients::new`, absorbers with
//! `Pml::new`, seeded fields; then, in a rayon pool of one thread
//! (`row_parallel` off) and one of two threads (`row_parallel` on), a
//! warm-up step, a three-step calibration of the step count (at least 0.5 s
//! and at least three steps per timing), and five timed repeats of
//! `kernel::step` (bulk update fused with the absorber corrections),
//! alternating the two pools. Figures are medians over the repeats. The
//! timed loop allocates nothing. Every pool thread has flush-to-zero set
//! (`FlushSubnormals`), as a run sets it on its own thread, so no timing
//! sees slow subnormal arithmetic.
//!
//! Output: the table on stdout, `benches/growth.csv` (the same figures) and
//! `benches/growth.svg` (log-log plot of seconds per step against cells,
//! with the ideal ∝ cells lines and the cache sizes). The knee reported is
//! the first size past the first [`BASE_SIZES`] (all well inside L3) whose
//! cost per cell update exceeds their median by more than 15 % (a median,
//! because the smallest grids are the least steady, on two threads most:
//! there a half step is a few microseconds, against the threads' hand-over). Timing is
//! printed, never asserted.
mod common;

use common::*;
use lathe_solver::coefficients::Coefficients;
use lathe_solver::fpu::FlushSubnormals;
use lathe_solver::kernel::step_on;
use lathe_solver::pml::Pml;
use lathe_solver::team::with_team;
use lathe_solver::{plan, Fields};
use std::fmt::Write as _;
use std::io::Write as _;

/// Grid sides: cells 10^4 … 10^7, ×10^(1/3) per size.
const SIDES: [usize; 10] = [100, 147, 215, 316, 464, 681, 1000, 1468, 2154, 3162];
/// Timed repeats per thread count.
const REPEATS: usize = 5;
/// Least wall time of one timing, s.
const MIN_SECONDS: f64 = 0.5;
/// Thread counts timed.
const THREADS: [usize; 2] = [1, 2];
/// Knee threshold: cost per cell update above the base figure by this.
const KNEE: f64 = 1.15;
/// The base figure is the median over this many of the smallest sizes.
const BASE_SIZES: usize = 6;

/// The figures of one grid size.
struct Row {
    nr: usize,
    nz: usize,
    cells: usize,
    absorber_share: f64,
    bytes: usize,
    steps: [usize; 2],
    /// Median wall seconds per step, per thread count.
    seconds: [f64; 2],
}

impl Row {
    fn ns_per_cell(&self, t: usize) -> f64 {
        1e9 * self.seconds[t] / self.cells as f64
    }
}

/// Bytes the step reads and writes: the six field arrays, the coefficient
/// arrays, the off-diagonal coupling taps (none for this puck: its faces
/// lie along r and z) and the absorber's auxiliary fields. The absorber's
/// per-row and per-column profiles (a few kB) are left out.
fn working_set(f: &Fields, c: &Coefficients, pml: &Option<Pml>) -> usize {
    let coefficients = [
        &c.cb_er,
        &c.cb_ephi,
        &c.cb_ez,
        &c.m_over_r_int,
        &c.m_over_r_half,
        &c.ez_out,
        &c.ez_in,
        &c.hz_out,
        &c.hz_in,
    ]
    .iter()
    .map(|v| 8 * v.len())
    .sum::<usize>();
    let coupling = c.coupling.as_ref().map_or(0, |cp| {
        cp.er
            .iter()
            .chain(&cp.ez)
            .map(|(_, taps)| 8 + 16 * taps.len())
            .sum()
    });
    f.bytes() + coefficients + coupling + pml.as_ref().map_or(0, Pml::bytes)
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        // Flush-to-zero for the life of each worker thread.
        .start_handler(|_| std::mem::forget(FlushSubnormals::new()))
        .build()
        .expect("a rayon thread pool")
}

/// Times one size in both pools.
fn measure(side: usize, dt: f64, pools: &[rayon::ThreadPool; 2]) -> Row {
    let problem = puck_open(side, side);
    let walls = problem.walls;
    let g = problem.materials.grid.clone();
    let mut c = Coefficients::new(&problem.materials, &walls, 1, dt);
    drop(problem); // the material map is not touched by the step
    let mut pml = Pml::new(&g, &walls, dt);
    let mut f = seeded_fields(&g);
    let bytes = working_set(&f, &c, &pml);
    let (ao, at, ab) = (walls.outer.cells(), walls.top.cells(), walls.bottom.cells());
    let bulk = (g.nr - ao) * (g.nz - at - ab);
    let absorber_share = 1.0 - bulk as f64 / g.cells() as f64;

    let mut steps = [0usize; 2];
    for (k, p) in pools.iter().enumerate() {
        c.row_parallel = THREADS[k] > 1;
        let t = p.install(|| {
            with_team(c.row_parallel, |team| {
                step_on(&mut f, &c, pml.as_mut(), team); // warm-up
                seconds(|| {
                    for _ in 0..3 {
                        step_on(&mut f, &c, pml.as_mut(), team);
                    }
                })
            })
        });
        // 10 % over the least time, for the scatter of the estimate.
        steps[k] = ((1.1 * MIN_SECONDS * 3.0 / t).ceil() as usize).max(3);
    }
    let mut times = [Vec::with_capacity(REPEATS), Vec::with_capacity(REPEATS)];
    for _ in 0..REPEATS {
        for (k, p) in pools.iter().enumerate() {
            c.row_parallel = THREADS[k] > 1;
            let n = steps[k];
            let t = p.install(|| {
                with_team(c.row_parallel, |team| {
                    seconds(|| {
                        for _ in 0..n {
                            step_on(&mut f, &c, pml.as_mut(), team);
                        }
                    })
                })
            });
            times[k].push(t / n as f64);
        }
    }
    let [t1, t2] = &mut times;
    Row {
        nr: g.nr,
        nz: g.nz,
        cells: g.cells(),
        absorber_share,
        bytes,
        steps,
        seconds: [median(t1), median(t2)],
    }
}

const MIB: f64 = 1048576.0;

/// Median cost per cell update of the first [`BASE_SIZES`] sizes, for
/// thread count index `t`.
fn base(rows: &[Row], t: usize) -> f64 {
    let mut v: Vec<f64> = rows
        .iter()
        .take(BASE_SIZES)
        .map(|r| r.ns_per_cell(t))
        .collect();
    median(&mut v)
}

/// Which size first costs more than `KNEE` times the base figure per cell
/// update, for thread count index `t`.
fn knee(rows: &[Row], t: usize) -> Option<&Row> {
    let b = base(rows, t);
    rows.iter()
        .skip(BASE_SIZES)
        .find(|r| r.ns_per_cell(t) > KNEE * b)
}

/// The minor decade ticks 2…9 × 10^k, unless decade k is the axis' last.
fn minor(k: i32, last: f64) -> impl Iterator<Item = f64> {
    (2..10)
        .filter(move |_| k < last as i32)
        .map(move |m| m as f64 * 10f64.powi(k))
}

fn csv(rows: &[Row]) -> String {
    let mut s = String::from(
        "cells,nr,nz,absorber_share,working_set_bytes,steps_1t,steps_2t,\
         seconds_per_step_1t,seconds_per_step_2t,ns_per_cell_update_1t,\
         ns_per_cell_update_2t,speedup_2t_over_1t,ratio_to_smallest_1t,\
         ratio_to_smallest_2t\n",
    );
    let (b1, b2) = (rows[0].ns_per_cell(0), rows[0].ns_per_cell(1));
    for r in rows {
        writeln!(
            s,
            "{},{},{},{:.4},{},{},{},{:.6e},{:.6e},{:.4},{:.4},{:.4},{:.4},{:.4}",
            r.cells,
            r.nr,
            r.nz,
            r.absorber_share,
            r.bytes,
            r.steps[0],
            r.steps[1],
            r.seconds[0],
            r.seconds[1],
            r.ns_per_cell(0),
            r.ns_per_cell(1),
            r.seconds[0] / r.seconds[1],
            r.ns_per_cell(0) / b1,
            r.ns_per_cell(1) / b2,
        )
        .unwrap();
    }
    s
}

/// Log-log plot of seconds per step against cells, as SVG text: points and
/// joining lines for each thread count, the dashed ideal lines ∝ cells
/// through each series' smallest grid, and dotted verticals where the
/// working set equals the L2 and L3 sizes.
fn svg(rows: &[Row], l2: Option<usize>, l3: Option<usize>) -> String {
    let (w, h) = (640.0, 420.0);
    let (left, right, top, bottom) = (78.0, w - 24.0, 44.0, h - 58.0);
    let (c0, c1) = (rows[0].cells as f64, rows[rows.len() - 1].cells as f64);
    let ideal = |t: usize, x: f64| rows[0].seconds[t] * x / c0;
    let mut ys: Vec<f64> = rows.iter().flat_map(|r| r.seconds).collect();
    ys.extend([ideal(0, c1), ideal(1, c1)]);
    let decades = |lo: f64, hi: f64| {
        let (a, b) = (lo.log10().floor(), hi.log10().ceil());
        (a, if b > a { b } else { a + 1.0 })
    };
    let (x0, x1) = decades(c0, c1);
    let (y0, y1) = decades(
        ys.iter().copied().fold(f64::INFINITY, f64::min),
        ys.iter().copied().fold(0.0, f64::max),
    );
    let px = |x: f64| left + (x.log10() - x0) / (x1 - x0) * (right - left);
    let py = |y: f64| bottom - (y.log10() - y0) / (y1 - y0) * (bottom - top);
    let mut s = String::new();
    writeln!(
        s,
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n\
         <svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" \
         viewBox=\"0 0 {w} {h}\" font-family=\"sans-serif\" font-size=\"12\">\n\
         <rect width=\"{w}\" height=\"{h}\" fill=\"white\"/>\n\
         <text x=\"{:.1}\" y=\"24\" text-anchor=\"middle\" font-size=\"14\">\
         lathe-solver: wall time per step against cells (open puck, m = 1)</text>",
        w / 2.0
    )
    .unwrap();
    // Decade grid lines, ticks and labels; minor ticks at 2…9.
    for k in x0 as i32..=x1 as i32 {
        let x = px(10f64.powi(k));
        writeln!(
            s,
            "<line x1=\"{x:.1}\" y1=\"{top}\" x2=\"{x:.1}\" y2=\"{bottom}\" stroke=\"#ddd\"/>\n\
             <line x1=\"{x:.1}\" y1=\"{bottom}\" x2=\"{x:.1}\" y2=\"{:.1}\" stroke=\"black\"/>\n\
             <text x=\"{x:.1}\" y=\"{:.1}\" text-anchor=\"middle\">10<tspan dy=\"-6\" \
             font-size=\"9\">{k}</tspan></text>",
            bottom + 6.0,
            bottom + 22.0
        )
        .unwrap();
        for x in minor(k, x1).map(px) {
            let y2 = bottom + 3.0;
            let tick = format!("x1=\"{x:.1}\" y1=\"{bottom}\" x2=\"{x:.1}\" y2=\"{y2:.1}\"");
            writeln!(s, "<line {tick} stroke=\"black\"/>").unwrap();
        }
    }
    for k in y0 as i32..=y1 as i32 {
        let y = py(10f64.powi(k));
        writeln!(
            s,
            "<line x1=\"{left}\" y1=\"{y:.1}\" x2=\"{right}\" y2=\"{y:.1}\" stroke=\"#ddd\"/>\n\
             <line x1=\"{:.1}\" y1=\"{y:.1}\" x2=\"{left}\" y2=\"{y:.1}\" stroke=\"black\"/>\n\
             <text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\">10<tspan dy=\"-6\" \
             font-size=\"9\">{k}</tspan></text>",
            left - 6.0,
            left - 9.0,
            y + 4.0
        )
        .unwrap();
        for y in minor(k, y1).map(py) {
            let x1 = left - 3.0;
            let tick = format!("x1=\"{x1:.1}\" y1=\"{y:.1}\" x2=\"{left}\" y2=\"{y:.1}\"");
            writeln!(s, "<line {tick} stroke=\"black\"/>").unwrap();
        }
    }
    writeln!(
        s,
        "<rect x=\"{left}\" y=\"{top}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"none\" \
         stroke=\"black\"/>\n\
         <text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">cells</text>\n\
         <text x=\"18\" y=\"{:.1}\" text-anchor=\"middle\" transform=\"rotate(-90 18 {:.1})\">\
         wall seconds per step</text>",
        right - left,
        bottom - top,
        0.5 * (left + right),
        h - 14.0,
        0.5 * (top + bottom),
        0.5 * (top + bottom)
    )
    .unwrap();
    // Cache sizes as cell counts, at the largest grid's bytes per cell.
    let last = &rows[rows.len() - 1];
    let per_cell = last.bytes as f64 / last.cells as f64;
    for (name, bytes) in [("L2 (per core)", l2), ("L3", l3)] {
        let Some(b) = bytes else { continue };
        let cells = b as f64 / per_cell;
        if !(cells > 10f64.powf(x0) && cells < 10f64.powf(x1)) {
            continue;
        }
        let x = px(cells);
        writeln!(
            s,
            "<line x1=\"{x:.1}\" y1=\"{top}\" x2=\"{x:.1}\" y2=\"{bottom}\" stroke=\"#777\" \
             stroke-dasharray=\"2 3\"/>\n\
             <text x=\"{:.1}\" y=\"{:.1}\" font-size=\"10\" fill=\"#555\">{name} = {:.0} MiB</text>",
            x + 3.0,
            bottom - 6.0,
            b as f64 / MIB
        )
        .unwrap();
    }
    let colours = ["#1f5fa8", "#c0392b"];
    for (t, colour) in colours.iter().enumerate() {
        writeln!(
            s,
            "<line x1=\"{:.1}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"{colour}\" \
             stroke-dasharray=\"6 4\"/>",
            px(c0),
            py(ideal(t, c0)),
            px(c1),
            py(ideal(t, c1))
        )
        .unwrap();
        let points: Vec<String> = rows
            .iter()
            .map(|r| format!("{:.1},{:.1}", px(r.cells as f64), py(r.seconds[t])))
            .collect();
        writeln!(
            s,
            "<polyline points=\"{}\" fill=\"none\" stroke=\"{colour}\"/>",
            points.join(" ")
        )
        .unwrap();
        for r in rows {
            let (x, y) = (px(r.cells as f64), py(r.seconds[t]));
            if t == 0 {
                writeln!(
                    s,
                    "<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"3.5\" fill=\"{colour}\"/>"
                )
            } else {
                writeln!(
                    s,
                    "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"7\" height=\"7\" fill=\"{colour}\"/>",
                    x - 3.5,
                    y - 3.5
                )
            }
            .unwrap();
        }
    }
    // Legend, top left inside the plot.
    let (lx, ly) = (left + 12.0, top + 16.0);
    writeln!(
        s,
        "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"300\" height=\"62\" fill=\"white\" stroke=\"#999\"/>\n\
         <circle cx=\"{:.1}\" cy=\"{ly:.1}\" r=\"3.5\" fill=\"{colour0}\"/>\n\
         <text x=\"{:.1}\" y=\"{:.1}\">1 thread</text>\n\
         <rect x=\"{:.1}\" y=\"{:.1}\" width=\"7\" height=\"7\" fill=\"{colour1}\"/>\n\
         <text x=\"{:.1}\" y=\"{:.1}\">2 threads</text>\n\
         <line x1=\"{lx:.1}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"#444\" \
         stroke-dasharray=\"6 4\"/>\n\
         <text x=\"{:.1}\" y=\"{:.1}\">ideal ∝ cells, through the smallest grid</text>\n\
         </svg>",
        lx - 6.0,
        ly - 10.0,
        lx + 10.0,
        lx + 28.0,
        ly + 4.0,
        lx + 6.5,
        ly + 16.5,
        lx + 28.0,
        ly + 24.0,
        ly + 40.0,
        lx + 20.0,
        ly + 40.0,
        lx + 28.0,
        ly + 44.0,
        colour0 = colours[0],
        colour1 = colours[1],
    )
    .unwrap();
    s
}

fn main() {
    println!("lathe-solver cost growth: full step (kernel::step, bulk + absorbers), f64, m = 1");
    println!("machine: {}", machine());
    let cache = |level: u32| caches().into_iter().find(|c| c.level == level);
    let (l2, l3) = (cache(2), cache(3));
    let p0 = plan(&puck_open(SIDES[0], SIDES[0]), 1).unwrap();
    let p1 = plan(&puck_open(SIDES[1], SIDES[1]), 1).unwrap();
    let dt = p0.dt;
    println!(
        "time step {dt:.6e} s from plan on {0} × {0} (on {1} × {1}: {2:.6e} s, relative \
         difference {3:.1e}); used for every size",
        SIDES[0],
        SIDES[1],
        p1.dt,
        (p1.dt - dt).abs() / dt
    );
    println!(
        "medians of {REPEATS} repeats, ≥ {MIN_SECONDS} s and ≥ 3 steps each, after a warm-up step;\n\
         absorber = share of cells in the 16-cell absorbers; working set = fields + coefficients\n\
         + absorber auxiliary fields; ns = wall ns per cell update; ×small = ns per cell update\n\
         over the smallest grid's"
    );
    println!(
        "{:>9} {:>11} {:>8} {:>11} {:>11} {:>9} {:>9} {:>7} {:>8} {:>8}",
        "cells",
        "grid",
        "absorber",
        "working set",
        "steps 1T/2T",
        "ns 1T",
        "ns 2T",
        "2T/1T",
        "×small 1T",
        "×small 2T"
    );
    let pools = THREADS.map(pool);
    let mut rows: Vec<Row> = Vec::with_capacity(SIDES.len());
    for side in SIDES {
        let r = measure(side, dt, &pools);
        let (b1, b2) = rows
            .first()
            .map_or((r.ns_per_cell(0), r.ns_per_cell(1)), |b| {
                (b.ns_per_cell(0), b.ns_per_cell(1))
            });
        println!(
            "{:>9.3e} {:>11} {:>7.1}% {:>7.1} MiB {:>11} {:>9.3} {:>9.3} {:>7.2} {:>9.2} {:>9.2}",
            r.cells as f64,
            format!("{} × {}", r.nr, r.nz),
            100.0 * r.absorber_share,
            r.bytes as f64 / MIB,
            format!("{}/{}", r.steps[0], r.steps[1]),
            r.ns_per_cell(0),
            r.ns_per_cell(1),
            r.seconds[0] / r.seconds[1],
            r.ns_per_cell(0) / b1,
            r.ns_per_cell(1) / b2
        );
        std::io::stdout().flush().unwrap();
        rows.push(r);
    }
    let size = |c: &Option<Cache>| c.as_ref().map_or("unknown".into(), |c| c.size.clone());
    for (t, threads) in THREADS.iter().enumerate() {
        match knee(&rows, t) {
            Some(r) => println!(
                "knee, {threads} thread(s): {} × {} ({:.3e} cells), {:.2} ns per cell update = \
                 {:.2} × the small grids' median; working set {:.1} MiB (L2 {} per core, L3 {})",
                r.nr,
                r.nz,
                r.cells as f64,
                r.ns_per_cell(t),
                r.ns_per_cell(t) / base(&rows, t),
                r.bytes as f64 / MIB,
                size(&l2),
                size(&l3)
            ),
            None => println!(
                "no knee, {threads} thread(s): every size within {:.0} % of the small grids' \
                 median cost per cell update (L2 {} per core, L3 {})",
                100.0 * (KNEE - 1.0),
                size(&l2),
                size(&l3)
            ),
        }
    }
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/benches");
    let (csv_path, svg_path) = (format!("{dir}/growth.csv"), format!("{dir}/growth.svg"));
    std::fs::write(&csv_path, csv(&rows)).unwrap();
    std::fs::write(
        &svg_path,
        svg(&rows, l2.map(|c| c.bytes), l3.map(|c| c.bytes)),
    )
    .unwrap();
    println!("wrote {csv_path} and {svg_path}");
    let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    println!(
        "load average at the end: {}",
        load.split_whitespace()
            .take(3)
            .collect::<Vec<_>>()
            .join(" ")
    );
}
