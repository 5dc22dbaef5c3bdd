//! Closed cylindrical cavities against their exact resonances.
//!
//! Reference: f = c/(2π√ε_r)·√((x_mn/a)² + (pπ/d)²) with x_mn the zeros of
//! J_m (TM) or J'_m (TE) (Pozar, *Microwave Engineering*, §6.3; zeros as in
//! Abramowitz & Stegun Table 9.5 / DLMF §10.21, computed by
//! `lathe_solver::exact` and checked there against the table), the axial
//! index p set by the end walls (see `lathe_solver::exact::cavity`).
//! Dimensions, fillings and bands are our own.
use lathe::reference::match_modes;
use lathe::scenario::Scenario;
use lathe::solver::exact::{cylinder_cavity_modes, EndWall};
use lathe::solver::{solve, RunOutput, ZWall};

fn scenario(
    radius: f64,
    length: f64,
    eps: Option<f64>,
    ends: (&str, &str),
    band: (f64, f64),
    ms: &str,
    cell: Option<f64>,
) -> Scenario {
    let body = eps
        .map(|e| {
            format!(
                "[[body]]\nshape = \"cylinder\"\nradius = {radius}\nheight = {length}\nbase = 0.0\neps_r = {e}\n"
            )
        })
        .unwrap_or_default();
    let cell = cell.map(|c| format!("cell = {c}\n")).unwrap_or_default();
    let text = format!(
        "[region]\nradius = {radius}\nz_min = 0.0\nz_max = {length}\n{cell}\
         [boundary]\nouter = \"pec\"\nbottom = \"{}\"\ntop = \"{}\"\n{body}\
         [search]\nm = [{ms}]\nf_min = {}\nf_max = {}\n",
        ends.0, ends.1, band.0, band.1
    );
    Scenario::parse(&text, "test").unwrap()
}

fn wall(w: ZWall) -> EndWall {
    EndWall::from_wall(w).expect("closed cavities only")
}

/// Runs `s` and checks every exact mode is found within `tol` and nothing
/// else is; returns the runs and the worst error.
fn check_all_modes(s: &Scenario, tol: f64) -> (Vec<RunOutput>, f64) {
    check_all_modes_with(s, tol, true)
}

/// [`check_all_modes`] with the axis rod of orders m ≥ 2 on or off
/// (`RunOptions::axis_rod`).
fn check_all_modes_with(s: &Scenario, tol: f64, axis_rod: bool) -> (Vec<RunOutput>, f64) {
    let eps = s.max_eps_r();
    let mut problem = s.problem().unwrap();
    problem.options.axis_rod = axis_rod;
    let runs = solve(&problem, &s.m).unwrap();
    let mut worst: f64 = 0.0;
    for r in &runs {
        let m = r.report.m;
        let exact: Vec<(String, f64)> = cylinder_cavity_modes(
            s.radius,
            s.z_max - s.z_min,
            eps,
            wall(s.walls.bottom),
            wall(s.walls.top),
            m,
            s.f_min,
            s.f_max,
        )
        .iter()
        .map(|x| (x.label(), x.freq_hz))
        .collect();
        assert!(!exact.is_empty(), "m = {m}: test band holds no mode");
        let (matched, spurious) = match_modes(&r.modes, &exact, 0.02);
        for x in &matched {
            let e = x.rel_error().unwrap_or_else(|| {
                panic!(
                    "m = {m}: {} at {:.6} GHz missing",
                    x.label,
                    x.reference_hz / 1e9
                )
            });
            eprintln!(
                "m = {m} {:>10} exact {:.6} GHz  error {:+.4} %",
                x.label,
                x.reference_hz / 1e9,
                100.0 * e
            );
            assert!(
                e.abs() < tol,
                "m = {m}: {} off by {:.3} %",
                x.label,
                100.0 * e
            );
            worst = worst.max(e.abs());
        }
        assert!(
            spurious.is_empty(),
            "m = {m}: spurious modes {:?}",
            spurious.iter().map(|x| x.freq_hz).collect::<Vec<_>>()
        );
    }
    (runs, worst)
}

#[test]
fn empty_cavity_every_mode_of_m0_to_m3_at_default_resolution() {
    // 0.5 %: the acceptance figure for the default resolution.
    let s = scenario(
        7.9,
        13.7,
        None,
        ("pec", "pec"),
        (12.0, 31.0),
        "0, 1, 2, 3",
        None,
    );
    let (_, worst) = check_all_modes(&s, 5e-3);
    eprintln!("worst error {:.4} %", 100.0 * worst);
}

#[test]
fn filled_cavity_with_a_pmc_end_every_mode() {
    // Half of a symmetric cavity: PMC on the mid-plane; p = ½, 3/2, …
    let s = scenario(
        5.3,
        4.1,
        Some(2.33),
        ("pec", "pmc"),
        (14.0, 30.0),
        "0, 1, 2",
        None,
    );
    check_all_modes(&s, 5e-3);
}

#[test]
fn cavity_between_two_pmc_planes_has_its_p0_te_modes() {
    // PMC at both ends admits TE_mn0 (H_z uniform in z).
    let s = scenario(
        6.2,
        3.3,
        None,
        ("pmc", "pmc"),
        (12.0, 36.0),
        "0, 1, 2",
        None,
    );
    let (runs, _) = check_all_modes(&s, 5e-3);
    assert!(runs.iter().map(|r| r.modes.len()).sum::<usize>() >= 3);
}

#[test]
fn frequency_error_falls_as_the_square_of_the_cell() {
    // Halving the cell must divide the error by 4 (3.5 – 4.5 accepted: the
    // issue's figure; higher-order terms and axis corrections stay below it).
    // The scheme's own rate, so without the axis rod of m ≥ 2: the rod adds
    // a term of order Δr^(2m) (tests/axis_rod.rs checks it at that rate),
    // here at m = 2 a quarter of TE211's small error on the coarse grid
    // (ratio 4.8 with it). With the rod the errors are checked below.
    let coarse = scenario(
        7.9,
        13.7,
        None,
        ("pec", "pec"),
        (12.0, 26.0),
        "0, 1, 2",
        Some(0.4),
    );
    let fine = scenario(
        7.9,
        13.7,
        None,
        ("pec", "pec"),
        (12.0, 26.0),
        "0, 1, 2",
        Some(0.2),
    );
    let (rc, _) = check_all_modes_with(&coarse, 5e-3, false);
    let (rf, _) = check_all_modes_with(&fine, 5e-3, false);
    let (_, worst_coarse) = check_all_modes(&coarse, 5e-3);
    let (_, worst_fine) = check_all_modes(&fine, 5e-3);
    assert!(
        worst_fine < worst_coarse / 3.5,
        "{worst_fine} against {worst_coarse}"
    );
    let mut checked = 0;
    for (a, b) in rc.iter().zip(&rf) {
        let m = a.report.m;
        let exact: Vec<(String, f64)> = cylinder_cavity_modes(
            7.9e-3,
            13.7e-3,
            1.0,
            EndWall::Pec,
            EndWall::Pec,
            m,
            12e9,
            26e9,
        )
        .iter()
        .map(|x| (x.label(), x.freq_hz))
        .collect();
        let (ma, _) = match_modes(&a.modes, &exact, 0.02);
        let (mb, _) = match_modes(&b.modes, &exact, 0.02);
        for (x, y) in ma.iter().zip(&mb) {
            let ratio = x.rel_error().unwrap() / y.rel_error().unwrap();
            eprintln!("m = {m} {:>8}: error ratio {ratio:.3}", x.label);
            assert!(
                (3.5..=4.5).contains(&ratio),
                "m = {m} {}: ratio {ratio}",
                x.label
            );
            checked += 1;
        }
    }
    assert!(checked >= 8);
}

#[test]
fn refinement_extrapolates_toward_the_exact_value_and_its_error_bar_covers_it() {
    // Three grids (0.4, 0.4/√2, 0.2 mm) of the empty can; second-order
    // convergence makes Richardson's value far closer to the exact one
    // (5× is a floor: measured 9× to 200×).
    let s = scenario(
        7.9,
        13.7,
        None,
        ("pec", "pec"),
        (12.0, 26.0),
        "0, 1",
        Some(0.4),
    );
    let r = lathe::refine::refine(&s).unwrap();
    let mut n = 0;
    for m in &r.modes {
        let exact: Vec<(String, f64)> = cylinder_cavity_modes(
            7.9e-3,
            13.7e-3,
            1.0,
            EndWall::Pec,
            EndWall::Pec,
            m.finest.m,
            12e9,
            26e9,
        )
        .iter()
        .map(|x| (x.label(), x.freq_hz))
        .collect();
        let (matched, _) = match_modes(std::slice::from_ref(&m.finest), &exact, 0.02);
        let Some(x) = matched.iter().find(|x| x.computed.is_some()) else {
            continue;
        };
        let fine_err = (m.finest.freq_hz - x.reference_hz).abs();
        let ext_err = (m.freq_hz - x.reference_hz).abs();
        eprintln!(
            "m = {} {}: finest {:+.4} %, extrapolated {:+.5} % ± {:.5} %, order {:?}",
            m.finest.m,
            x.label,
            100.0 * (m.finest.freq_hz / x.reference_hz - 1.0),
            100.0 * (m.freq_hz / x.reference_hz - 1.0),
            100.0 * m.freq_err_hz / x.reference_hz,
            m.order_f
        );
        assert!(
            ext_err < 0.2 * fine_err,
            "{}: extrapolation did not help",
            x.label
        );
        assert!(
            ext_err <= m.freq_err_hz,
            "{}: error bar {} does not cover {}",
            x.label,
            m.freq_err_hz,
            ext_err
        );
        n += 1;
    }
    assert!(n >= 6, "only {n} modes refined");
}
