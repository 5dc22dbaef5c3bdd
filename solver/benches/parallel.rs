//! Parallel efficiency on two threads, measured against one thread in the
//! same process. Run: `cargo bench -p lathe-solver --bench parallel`.
//!
//! 1. A three-order run (m = 0, 1, 2) of the upper half of the ε_r 38
//!    benchmark cylinder (common::benchmark_half, PMC mid-plane, absorbers on
//!    the outer radius and the top, 95 × 95 cells): the whole of `solve` —
//!    plans, stepping, harmonic inversion, mode fields, labels — timed in a
//!    1-thread and in a 2-thread rayon pool, in interleaved rounds. The
//!    three runs take turns on the two threads (`solve`'s default). Also
//!    timed: 2 threads with the row split switched off
//!    (`row_parallel_cells = usize::MAX`), where the last run steps alone.
//!    Target: 2 threads ≤ 0.56 × 1 thread.
//! 2. A single order on a large grid (1000 × 1000 cells, m = 1, a puck in an
//!    open region with 16-cell absorbers on the outer radius and the top):
//!    the full step's rate (`lathe_solver::bench::step_rate`) on 1 and on 2
//!    threads. Target: both cores used (the row split).
//!
//! 3. The last run of (1) alone: the full step's rate of the benchmark
//!    grid (95 × 95, m = 1) on 1 and on 2 threads, its rows split. This is
//!    how fast the last of the three runs steps once both threads are on
//!    it (the three orders came to 0.53–0.57 where it ran at 1.6–1.7×;
//!    solver/benches/RESULTS.md §3).
//!
//! The runs' results on 1 and 2 threads are compared bit for bit (they
//! must be identical). Timing is printed, never asserted.
mod common;

use common::*;
use lathe_mesh::{fill, Body, FillOptions, Grid, Material, Shape};
use lathe_solver::consts::C0;
use lathe_solver::{solve, Absorber, OuterWall, Problem, RunOptions, RunOutput, Walls, ZWall};

const ROUNDS: usize = 5;

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("a rayon pool")
}

/// A run's order, step count and the bits of each mode's (f, Q).
type Fingerprint = (u32, usize, Vec<(u64, u64)>);

/// Frequencies, Q and step counts of every run, for a bitwise comparison.
fn fingerprint(runs: &[RunOutput]) -> Vec<Fingerprint> {
    runs.iter()
        .map(|r| {
            let modes = r
                .modes
                .iter()
                .map(|md| (md.freq_hz.to_bits(), md.q.to_bits()))
                .collect();
            (r.report.m, r.report.steps, modes)
        })
        .collect()
}

fn three_orders() {
    let problem = benchmark_half(ZWall::Pmc);
    let mut unsplit = problem.clone();
    unsplit.options.row_parallel_cells = usize::MAX;
    let ms = [0, 1, 2];
    let (p1, p2) = (pool(1), pool(2));
    let (mut t1, mut t2, mut t2u, mut q, mut qu) = (vec![], vec![], vec![], vec![], vec![]);
    let mut reference = None;
    let mut identical = true;
    let mut steps = Vec::new();
    for round in 0..ROUNDS {
        let mut out = None;
        let a = seconds(|| out = Some(p1.install(|| solve(&problem, &ms)).expect("runs")));
        let out1 = out.take().unwrap();
        let b = seconds(|| out = Some(p2.install(|| solve(&problem, &ms)).expect("runs")));
        let out2 = out.take().unwrap();
        let c = seconds(|| out = Some(p2.install(|| solve(&unsplit, &ms)).expect("runs")));
        let out3 = out.take().unwrap();
        let f1 = fingerprint(&out1);
        identical &= f1 == fingerprint(&out2) && f1 == fingerprint(&out3);
        if round == 0 {
            steps = out1.iter().map(|r| (r.report.m, r.report.steps)).collect();
            reference = Some(f1);
        } else {
            identical &= reference.as_ref() == Some(&f1);
        }
        println!(
            "  round {}: 1 thread {a:.2} s, 2 threads {b:.2} s ({:.3}), 2 threads unsplit {c:.2} s ({:.3})",
            round + 1,
            b / a,
            c / a
        );
        t1.push(a);
        t2.push(b);
        t2u.push(c);
        q.push(b / a);
        qu.push(c / a);
    }
    let (m1, m2, m2u) = (median(&mut t1), median(&mut t2), median(&mut t2u));
    let (mq, mqu) = (median(&mut q), median(&mut qu));
    println!(
        "three orders (m = 0, 1, 2), benchmark cylinder upper half 95 × 95, steps {}",
        steps
            .iter()
            .map(|(m, n)| format!("m{m} {n}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    println!("  median 1 thread {m1:.2} s, 2 threads {m2:.2} s, 2 threads unsplit {m2u:.2} s");
    println!(
        "  2 threads / 1 thread = {mq:.3} (target ≤ 0.56: {}); unsplit {mqu:.3}",
        if mq <= 0.56 { "met" } else { "NOT met" }
    );
    println!(
        "  results identical on 1 and 2 threads, split or not, every round: {}",
        if identical { "yes" } else { "NO" }
    );
}

/// An ε_r 24.3 puck (radius 30 % of the region, height 20 %, on a PEC
/// plane) in an open region of `n × n` cells of 0.05 mm, with 16-cell
/// absorbers on the outer radius and the top.
fn open_puck(n: usize) -> (Problem, f64) {
    let cell = 0.05e-3;
    let absorber = Absorber {
        cells: 16,
        ..Absorber::default_for(4e9)
    };
    let side = (n - absorber.cells) as f64 * cell;
    let region = Grid::new(side, 0.0, side, cell).expect("a grid");
    let grid = Grid {
        nr: n,
        nz: n,
        ..region
    };
    let puck = Body {
        shape: Shape::Cylinder {
            radius: 0.3 * side,
            height: 0.2 * side,
            base: 0.0,
        },
        material: Material::Dielectric {
            eps_r: 24.3,
            loss_tangent: 0.0,
        },
    };
    let problem = Problem {
        materials: fill(&grid, &[puck], FillOptions::default()),
        walls: Walls {
            bottom: ZWall::Pec,
            top: ZWall::Pml(absorber),
            outer: OuterWall::Pml(absorber),
        },
        f_min: 4e9,
        f_max: 8e9,
        options: RunOptions::default(),
    };
    // Half the 2D Courant limit Δ/(c√2): stable, and the rate does not
    // depend on Δt.
    (problem, 0.35 * cell / C0)
}

fn large_single() {
    let (problem, dt) = open_puck(1000);
    let (p1, p2) = (pool(1), pool(2));
    let (mut r1, mut r2, mut q) = (vec![], vec![], vec![]);
    for _ in 0..ROUNDS {
        let a = p1.install(|| lathe_solver::bench::step_rate(&problem, 1, dt, 2.0));
        let b = p2.install(|| lathe_solver::bench::step_rate(&problem, 1, dt, 2.0));
        r1.push(a);
        r2.push(b);
        q.push(a / b);
    }
    let (a, b, mq) = (median(&mut r1), median(&mut r2), median(&mut q));
    println!("single order (m = 1) on 1000 × 1000 cells with absorbers, full step");
    println!(
        "  1 thread {a:.3e} cell updates/s, 2 threads {b:.3e}; time 2 threads / 1 thread = {mq:.3} ({})",
        if mq < 0.75 {
            "both cores used"
        } else {
            "NOT using both cores"
        }
    );
}

fn small_split() {
    let problem = benchmark_half(ZWall::Pmc);
    // Half the 2D Courant limit: stable, and the rate does not depend on Δt.
    let dt = 0.35 * problem.materials.grid.dr / C0;
    let (p1, p2) = (pool(1), pool(2));
    let mut q = vec![];
    for _ in 0..ROUNDS {
        let a = p1.install(|| lathe_solver::bench::step_rate(&problem, 1, dt, 0.3));
        let b = p2.install(|| lathe_solver::bench::step_rate(&problem, 1, dt, 0.3));
        q.push(b / a);
    }
    let rounds = q
        .iter()
        .map(|x| format!("{x:.2}"))
        .collect::<Vec<_>>()
        .join(", ");
    let mq = median(&mut q);
    println!("the benchmark grid alone (95 × 95, m = 1), full step, rows split on 2 threads");
    println!("  2 threads / 1 thread rate = {mq:.2}× (rounds {rounds})");
}

fn main() {
    println!("lathe-solver parallel efficiency (f64), medians of {ROUNDS} interleaved rounds");
    println!("machine: {}", machine());
    three_orders();
    large_single();
    small_split();
    if let Some(cpu) = cpu_seconds() {
        println!("process CPU time {cpu:.1} s");
    }
}
