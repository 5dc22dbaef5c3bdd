//! The fused full step (`kernel::step`: each row's bulk update, then at
//! once the absorber's terms of that row, its z-layer spans and its radial
//! terms) gives the same bits as the step taken as whole passes
//! (`update_h`, `Pml::correct_h`, `update_e`, `Pml::correct_e`), on one
//! thread and with rows split over a team of two and of three, one step at
//! a time (`step_on`) or many per job of the team (`steps_on`). An exact
//! check (no tolerance): both ways do the same operations on every entry in
//! the same order.
use lathe_mesh::{fill, Body, Component, FillOptions, Grid, Material, Shape};
use lathe_solver::coefficients::Coefficients;
use lathe_solver::fpu::FlushSubnormals;
use lathe_solver::kernel::{step_on, steps_on, update_e, update_h};
use lathe_solver::pml::Pml;
use lathe_solver::team::with_team;
use lathe_solver::{stability_limit, Absorber, Fields, OuterWall, Walls, ZWall};

const CELL: f64 = 0.2e-3;

fn absorber(cells: usize) -> Absorber {
    Absorber {
        cells,
        ..Absorber::default_for(4.3e9)
    }
}

/// How `advance` steps.
#[derive(Clone, Copy, PartialEq)]
enum Way {
    /// `update_h`, `Pml::correct_h`, `update_e`, `Pml::correct_e`.
    Passes,
    /// `step_on`, one step per call.
    Fused,
    /// `steps_on`, in stretches of 1, 7, 13, 1, 7, 13, … steps.
    Stretches,
}

/// Fields after `steps` steps from a seeded start, stepped `way`.
fn advance(
    g: &Grid,
    bodies: &[Body],
    walls: &Walls,
    m: u32,
    steps: usize,
    way: Way,
    threads: usize,
) -> Fields {
    let map = fill(g, bodies, FillOptions::default());
    let dt = 0.97 * stability_limit(&map, walls, m).dt_max;
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    pool.install(|| {
        with_team(threads > 1, |team| {
            let _ftz = FlushSubnormals::new();
            let mut c = Coefficients::new(&map, walls, m, dt);
            c.row_parallel = threads > 1;
            let mut pml = Pml::new(g, walls, dt);
            let mut f = Fields::zeros(g);
            for (k, x) in f.ez.iter_mut().enumerate() {
                *x = 1e-3 * ((k % 97) as f64) - 0.03;
            }
            for (k, x) in f.er.iter_mut().enumerate() {
                *x = 1e-3 * ((k % 89) as f64) - 0.04;
            }
            for (k, x) in f.ephi.iter_mut().enumerate() {
                *x = 1e-3 * ((k % 79) as f64) - 0.035;
            }
            for (k, x) in f.hphi.iter_mut().enumerate() {
                *x = 1e-6 * ((k % 83) as f64) - 4e-5;
            }
            if threads > 1 {
                // Every helper attached before the first step, so that the
                // rows really are split over `threads` blocks.
                let t = team.expect("a team on several threads");
                while t.members() < threads {
                    std::hint::spin_loop();
                }
            }
            if way == Way::Stretches {
                let mut done = 0;
                for n in [1, 7, 13].into_iter().cycle() {
                    let n = n.min(steps - done);
                    steps_on(&mut f, &c, pml.as_mut(), team, n);
                    done += n;
                    if done == steps {
                        break;
                    }
                }
                return f;
            }
            for _ in 0..steps {
                if way == Way::Fused {
                    step_on(&mut f, &c, pml.as_mut(), team);
                } else {
                    update_h(&mut f, &c);
                    if let Some(p) = pml.as_mut() {
                        p.correct_h(&mut f, &c);
                    }
                    update_e(&mut f, &c);
                    if let Some(p) = pml.as_mut() {
                        p.correct_e(&mut f, &c);
                    }
                }
            }
            f
        })
    })
}

fn assert_same_bits(a: &Fields, b: &Fields, what: &str) {
    for comp in Component::ALL {
        let (x, y) = (a.get(comp), b.get(comp));
        let differ = x
            .iter()
            .zip(y)
            .filter(|(p, q)| p.to_bits() != q.to_bits())
            .count();
        assert_eq!(differ, 0, "{what}: {differ} entries of {comp:?} differ");
        assert!(
            x.iter().any(|v| *v != 0.0),
            "{what}: {comp:?} is all zero, the check would be empty"
        );
    }
}

fn dielectric(shape: Shape, eps_r: f64) -> Body {
    Body {
        shape,
        material: Material::Dielectric {
            eps_r,
            loss_tangent: 0.0,
        },
    }
}

#[test]
fn fused_step_gives_the_bits_of_whole_passes() {
    let grid = |nr: usize, nz: usize, z0: f64| Grid {
        nr,
        nz,
        dr: CELL,
        dz: CELL,
        z0,
    };
    let puck = dielectric(
        Shape::Cylinder {
            radius: 3.1e-3,
            height: 2.7e-3,
            base: 0.0,
        },
        21.6,
    );
    // A sphere reaching into the top and outer absorbers: curved faces
    // (off-diagonal coupling) inside the layers.
    let ball = dielectric(
        Shape::Sphere {
            radius: 9.5e-3,
            center: 0.0,
        },
        6.7,
    );
    let pml = |n| OuterWall::Pml(absorber(n));
    let zpml = |n| ZWall::Pml(absorber(n));
    // (name, grid (nr, nz, z0), body, walls (bottom, top, outer), orders)
    let cases = [
        (
            "PMC floor, absorbers top and outer",
            grid(52, 47, 0.0),
            &puck,
            (ZWall::Pmc, zpml(12), pml(12)),
            &[0, 1, 2][..],
        ),
        (
            "absorbers on all three walls",
            grid(48, 61, -6.1e-3),
            &puck,
            (zpml(10), zpml(10), pml(10)),
            &[1],
        ),
        (
            "overlapping z layers",
            grid(30, 20, -2.0e-3),
            &puck,
            (zpml(12), zpml(12), OuterWall::Pec),
            &[0, 1],
        ),
        (
            "outer absorber only",
            grid(44, 33, 0.0),
            &puck,
            (ZWall::Pec, ZWall::Pmc, pml(14)),
            &[1, 3],
        ),
        (
            "curved faces inside the absorbers",
            grid(56, 56, 0.0),
            &ball,
            (ZWall::Pec, zpml(12), pml(12)),
            &[0, 1],
        ),
    ];
    for (name, g, body, (bottom, top, outer), ms) in cases {
        let walls = Walls { bottom, top, outer };
        let bodies = std::slice::from_ref(body);
        for &m in ms {
            let what = format!("{name}, m = {m}");
            let passes = advance(&g, bodies, &walls, m, 60, Way::Passes, 1);
            for threads in [1, 2, 3] {
                let fused = advance(&g, bodies, &walls, m, 60, Way::Fused, threads);
                assert_same_bits(&passes, &fused, &format!("{what}, {threads} thread(s)"));
                let s = advance(&g, bodies, &walls, m, 60, Way::Stretches, threads);
                let how = format!("{what}, {threads} thread(s), stretches of steps");
                assert_same_bits(&passes, &s, &how);
            }
        }
    }
}
