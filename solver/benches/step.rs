//! One full leapfrog step (H then E update) on a 200 × 300 and a
//! 1000 × 1500 grid with a dielectric body, f64, on 1 and 2 threads;
//! prints cell updates per second. Run: `cargo bench -p lathe-solver`.
//!
//! Timing is the median of several repetitions after a warm-up, measured
//! with `std::time::Instant`; it is printed, never asserted.
use lathe_mesh::{fill, Body, FillOptions, Grid, Material, Shape};
use lathe_solver::coefficients::Coefficients;
use lathe_solver::kernel::{update_e, update_h};
use lathe_solver::{stability_limit, Fields, OuterWall, Walls, ZWall};
use std::time::Instant;

fn case(nr: usize, nz: usize) -> (lathe_mesh::MaterialMap, Walls) {
    let cell = 0.1e-3;
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

fn main() {
    println!("lathe-solver step benchmark (f64, m = 1)");
    println!(
        "{:>12} {:>8} {:>14} {:>16}",
        "grid", "threads", "ns/step", "cell updates/s"
    );
    for (nr, nz) in [(200, 300), (1000, 1500)] {
        let (map, walls) = case(nr, nz);
        let lim = stability_limit(&map, &walls, 1);
        for threads in [1, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            let mut c = Coefficients::new(&map, &walls, 1, 0.97 * lim.dt_max);
            c.row_parallel = threads > 1;
            let mut f = Fields::zeros(&map.grid);
            f.ez.iter_mut()
                .enumerate()
                .for_each(|(k, x)| *x = ((k % 97) as f64) * 1e-3);
            let steps = (2e8 / (nr * nz) as f64).ceil() as usize;
            let mut times = Vec::new();
            pool.install(|| {
                let _ftz = lathe_solver::fpu::FlushSubnormals::new();
                for rep in 0..6 {
                    let t = Instant::now();
                    for _ in 0..steps {
                        update_h(&mut f, &c);
                        update_e(&mut f, &c);
                    }
                    if rep > 0 {
                        times.push(t.elapsed().as_secs_f64() / steps as f64);
                    }
                }
            });
            times.sort_by(f64::total_cmp);
            let t = times[times.len() / 2];
            println!(
                "{:>12} {:>8} {:>14.0} {:>16.3e}",
                format!("{nr}×{nz}"),
                threads,
                t * 1e9,
                (nr * nz) as f64 / t
            );
        }
    }
}
