//! Kernel efficiency: the full leapfrog step of a realistic open-resonator
//! run — bulk update, absorber corrections, off-diagonal coupling, source
//! current and probe reads — against a plain reference kernel doing the
//! same six-component BOR arithmetic with no absorber and no sources,
//! measured side by side (interleaved rounds) in this process, f64, one
//! thread. Run: `cargo bench -p lathe-solver --bench step`.
//!
//! Cases: the upper half of the ε_r 38 benchmark cylinder (PMC mid-plane,
//! absorbers on the outer radius and the top; tests/open_resonator.rs) at
//! m = 0, 1, 2; the dielectric-resonator antenna of
//! examples/access_point_dra.toml on its ground disk (absorbers on the
//! outer radius, the bottom and the top: two z layers in every row) at
//! m = 0, 1, 2; and the ε_r 38 sphere on a PEC plane (curved surface: the
//! coupling is active) at m = 1, on the default grid and on the two finer
//! grids of `--refine` (the absorbers keep 16 cells, so they are a smaller
//! share of the grid). Each round times every variant for the same number
//! of steps; figures are medians over the rounds. Timing is printed, never
//! asserted.
mod common;

use common::*;
use lathe_solver::coefficients::Coefficients;
use lathe_solver::fpu::FlushSubnormals;
use lathe_solver::kernel::{update_e, update_h};
use lathe_solver::pml::Pml;
use lathe_solver::{plan, Fields, Problem, ZWall};

const ROUNDS: usize = 9;

fn efficiency(name: &str, problem: &Problem, m: u32) {
    let _ftz = FlushSubnormals::new();
    let p = plan(problem, m).unwrap();
    let map = &problem.materials;
    let g = &map.grid;
    let cells = g.cells() as f64;
    let mut c = Coefficients::new(map, &problem.walls, m, p.dt);
    c.row_parallel = false; // one thread: see main
    let reference = Reference::new(&c, g);
    // The reference does the library's bulk arithmetic (up to rounding).
    let (mut a, mut b) = (seeded_fields(g), seeded_fields(g));
    let mut uncoupled = c.clone();
    uncoupled.coupling = None;
    for _ in 0..200 {
        reference.step(&mut a);
        update_h(&mut b, &uncoupled);
        update_e(&mut b, &uncoupled);
    }
    let diff = relative_difference(&a, &b);
    let coupled = c
        .coupling
        .as_ref()
        .map_or(0, |cp| cp.er.len() + cp.ez.len());
    // Steps per timing: about 1.5e7 cell updates.
    let steps = (1.5e7 / cells).ceil() as usize;
    let table: Vec<f64> = (0..steps)
        .map(|n| p.pulse.current((n as f64 + 0.5) * p.dt))
        .collect();
    let mut signals: Vec<Vec<f64>> = p.probes.iter().map(|_| Vec::with_capacity(steps)).collect();
    let (mut t_ref, mut t_bulk, mut t_sep, mut t_full, mut ratio, mut ratio_sep) =
        (vec![], vec![], vec![], vec![], vec![], vec![]);
    for round in 0..=ROUNDS {
        let mut f = seeded_fields(g);
        let tr = seconds(|| {
            for _ in 0..steps {
                reference.step(&mut f);
            }
        });
        let mut f = seeded_fields(g);
        let tb = seconds(|| {
            for _ in 0..steps {
                update_h(&mut f, &c);
                update_e(&mut f, &c);
            }
        });
        let run =
            |f: &mut Fields, pml: &mut Option<Pml>, signals: &mut Vec<Vec<f64>>, fused: bool| {
                signals.iter_mut().for_each(|s| s.clear());
                for (n, &s) in table.iter().enumerate() {
                    if fused {
                        full_step(f, &c, pml, &p.sources, s);
                    } else {
                        separate_step(f, &c, pml, &p.sources, s);
                    }
                    if (n + 1) % p.decimation == 0 {
                        sample(f, &p.probes, signals);
                    }
                }
            };
        let mut f = seeded_fields(g);
        let mut pml = Pml::new(g, &problem.walls, p.dt);
        let ts = seconds(|| run(&mut f, &mut pml, &mut signals, false));
        let mut f = seeded_fields(g);
        let mut pml = Pml::new(g, &problem.walls, p.dt);
        let tf = seconds(|| run(&mut f, &mut pml, &mut signals, true));
        if round == 0 {
            continue; // warm-up
        }
        t_ref.push(tr);
        t_bulk.push(tb);
        t_sep.push(ts);
        t_full.push(tf);
        ratio.push(tr / tf);
        ratio_sep.push(tr / ts);
    }
    let rate = |t: &mut Vec<f64>| cells * steps as f64 / median(t);
    let (r_ref, r_bulk, r_sep, r_full) = (
        rate(&mut t_ref),
        rate(&mut t_bulk),
        rate(&mut t_sep),
        rate(&mut t_full),
    );
    let (q, q_sep) = (median(&mut ratio), median(&mut ratio_sep));
    println!(
        "{name:<22} {m:>2} {:>3}×{:<3} {:>9.3e} {:>9.3e} {:>9.3e} {:>9.3e}  {:>8.3} {:>8.3} {:>7}  {:>6.0e}  {}",
        g.nr,
        g.nz,
        r_ref,
        r_bulk,
        r_sep,
        r_full,
        q_sep,
        q,
        coupled,
        diff,
        if q >= 0.8 { "≥ 0.8: met" } else { "< 0.8: NOT met" }
    );
}

fn main() {
    // Everything in a pool of one thread: the figure is the kernel's, not
    // the row split's (solver/benches/parallel.rs measures that).
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("a rayon pool");
    pool.install(report);
}

fn report() {
    println!("lathe-solver kernel efficiency (f64, 1 thread)");
    println!("machine: {}", machine());
    println!(
        "cell updates/s, medians of {ROUNDS} interleaved rounds after a warm-up.\n\
         ref   = plain reference kernel (this file's common/mod.rs), no absorber, no sources\n\
         bulk  = library kernel alone (kernel::update_h + update_e, coupling included)\n\
         sep   = full step as whole passes (update_h, Pml::correct_h, update_e, Pml::correct_e),\n\
         \x20       + source current every step + probe reads every `decimation` steps\n\
         full  = the same with the row-fused kernel::step (identical bits)\n\
         sep/ref, full/ref = medians over rounds of the per-round rate ratios (target ≥ 0.8)\n\
         coupled = E nodes with an off-diagonal coupling; Δ = reference vs library bulk\n\
         \x20       (coupling off) after 200 steps, largest difference relative to the largest value"
    );
    println!(
        "{:<22} {:>2} {:>7} {:>9} {:>9} {:>9} {:>9}  {:>8} {:>8} {:>7}  {:>6}",
        "case", "m", "grid", "ref", "bulk", "sep", "full", "sep/ref", "full/ref", "coupled", "Δ"
    );
    let cyl = benchmark_half(ZWall::Pmc);
    for m in [0, 1, 2] {
        efficiency("cylinder ε 38, upper ½", &cyl, m);
    }
    let dra = dra_on_disk();
    for m in [0, 1, 2] {
        efficiency("DRA on a ground disk", &dra, m);
    }
    efficiency("sphere ε 38, PEC plane", &sphere_half(30.0), 1);
    // The same sphere on the finer grids of `--refine`: the absorbers keep
    // their 16 cells, so they are a smaller share of a larger grid.
    efficiency("  finer, 30√2 cells/λ", &sphere_half(30.0 * 2f64.sqrt()), 1);
    efficiency("  finer, 60 cells/λ", &sphere_half(60.0), 1);
}
