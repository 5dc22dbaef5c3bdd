//! Results must not depend on the number of threads: orders run in
//! parallel, and rows are updated in parallel on large grids. Compared
//! bitwise, with the row-parallel update forced on.
use lathe::scenario::Scenario;
use lathe::solver::solve;

const PUCK: &str = r#"
[region]
radius = 6.7
z_min = 0.0
z_max = 5.9
cell = 0.3
[[body]]
shape = "ring"
inner_radius = 0.8
outer_radius = 3.1
height = 2.2
base = 1.1
eps_r = 21.7
[search]
m = [0, 1, 2]
f_min = 8.0
f_max = 21.0
"#;

#[test]
fn one_and_two_threads_give_identical_bits() {
    let s = Scenario::parse(PUCK, "puck").unwrap();
    let mut problem = s.problem().unwrap();
    problem.options.row_parallel_cells = 0;
    let run_with = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| solve(&problem, &s.m).unwrap())
    };
    let one = run_with(1);
    let two = run_with(2);
    let mut n = 0;
    for (a, b) in one.iter().zip(&two) {
        assert_eq!(a.modes, b.modes, "m = {}", a.report.m);
        assert_eq!(a.report.steps, b.report.steps);
        assert!(a.signals == b.signals);
        assert!(a.fields == b.fields);
        n += a.modes.len();
    }
    assert!(
        n >= 3,
        "too few modes ({n}) for the comparison to mean much"
    );
}
