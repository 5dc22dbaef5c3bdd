//! Open resonators against exact and published values, and the absorber's
//! independence.
//!
//! - A dielectric sphere in free space, split by a PEC or a PMC plane through
//!   its centre (each family of modes, and the PEC half is also the
//!   hemisphere on an infinite ground plane): exact complex resonances of
//!   the characteristic equations (Stratton 1941; Gastine, Courtois &
//!   Dormann 1967), solved in `lathe_solver::exact::sphere`.
//! - The isolated ε_r = 38 cylinder, radius 5.25 mm, height 4.6 mm (Kajfez,
//!   Glisson & James, IEEE T-MTT 32(12), 1984; values from memory).
//! - The same cylinder with lean settings (region ±10 mm, 20 cells per
//!   wavelength, 10-cell absorbers) against lathe's own converged answer
//!   and two independent eigen-solvers: all five modes within 0.5 % in f
//!   and 3 % in Q, in ≤ 0.5 × 10⁹ cell updates.
//! - Moving the absorber outward by a quarter wavelength, or doubling its
//!   thickness, must not move f or Q (common practice, no single source):
//!   < 0.05 % in f, < 0.5 % in Q.
use lathe::reference::match_modes;
use lathe::scenario::Scenario;
use lathe::solver::exact::{sphere_mode, SphereFamily, SphereMode};
use lathe::solver::{solve, Mode};
use lathe::study::run_study;

fn scenario(text: &str) -> Scenario {
    Scenario::parse(text, "test").unwrap()
}

/// The modes of every run of `s`, each run's curved-surface correction
/// required to be `curved` (applied: `Some(true)`; no curved face: `None`).
fn modes_of(s: &Scenario, curved: Option<bool>) -> Vec<Vec<Mode>> {
    solve(&s.problem().unwrap(), &s.m)
        .unwrap()
        .into_iter()
        .map(|r| {
            let got = r.report.surface_correction.map(|c| c.applied());
            assert_eq!(
                got, curved,
                "m {}: {:?}",
                r.report.m, r.report.surface_correction
            );
            r.modes
        })
        .collect()
}

fn sphere_case(eps: f64, wall: &str, band: (f64, f64)) -> Scenario {
    scenario(&format!(
        r#"
[region]
radius = 14.0
z_min = 0.0
z_max = 14.0
[boundary]
outer = "pml"
bottom = "{wall}"
top = "pml"
[[body]]
shape = "sphere"
radius = 4.7
center = 0.0
eps_r = {eps}
[search]
m = [0, 1, 2]
f_min = {}
f_max = {}
"#,
        band.0, band.1
    ))
}

/// The exact TE1, TM1 and TE2 modes of the 4.7 mm sphere (Stratton 1941;
/// Gastine, Courtois & Dormann 1967; `lathe_solver::exact::sphere`) of
/// order `m` on the `wall` plane, below `f_max`.
fn exact_sphere_modes(eps: f64, wall: &str, m: u32, f_max: f64) -> Vec<SphereMode> {
    [
        (SphereFamily::Te, 1),
        (SphereFamily::Tm, 1),
        (SphereFamily::Te, 2),
    ]
    .into_iter()
    .map(|(fam, n)| sphere_mode(fam, n, eps, 4.7e-3).unwrap())
    .filter(|x| m <= x.n && x.survives_pec_plane(m) == (wall == "pec") && x.freq_hz < f_max)
    .collect()
}

#[test]
fn sphere_and_hemisphere_modes_match_the_exact_resonances() {
    // Tolerances: f 0.5 %, Q 3 % at the default resolution (the issue's
    // figures). The anisotropic average on the sphere's surface converges at
    // second order (DEVELOPERS.md, "Material averaging"): measured
    // 2026-12-02 the worst are f −0.098 % (ε 10, TM1) and Q +1.29 % (ε 38,
    // TM1 at m = 1).
    let mut checked = 0;
    for (eps, band) in [(38.0, (4.0, 8.0)), (10.0, (7.0, 15.0))] {
        for wall in ["pec", "pmc"] {
            let s = sphere_case(eps, wall, band);
            // A sphere's cut cells carry the coupling and its correction.
            let runs = modes_of(&s, Some(true));
            for (k, m) in s.m.iter().enumerate() {
                let expected: Vec<(String, f64, f64)> = exact_sphere_modes(eps, wall, *m, s.f_max)
                    .iter()
                    .map(|x| (x.label(), x.freq_hz, x.q))
                    .collect();
                let refs: Vec<(String, f64)> =
                    expected.iter().map(|e| (e.0.clone(), e.1)).collect();
                let (matched, _) = match_modes(&runs[k], &refs, 0.02);
                for (x, e) in matched.iter().zip(&expected) {
                    let c = x
                        .computed
                        .as_ref()
                        .unwrap_or_else(|| panic!("ε {eps} {wall} m {m}: {} missing", e.0));
                    let df = c.freq_hz / e.1 - 1.0;
                    let dq = c.q / e.2 - 1.0;
                    eprintln!(
                        "ε {eps} {wall} m = {m} {}: f {:.5} GHz ({:+.3} %), Q {:.2} ({:+.2} %)",
                        e.0,
                        c.freq_hz / 1e9,
                        100.0 * df,
                        c.q,
                        100.0 * dq
                    );
                    assert!(
                        df.abs() < 5e-3,
                        "ε {eps} {wall} m {m} {}: f off {:.3} %",
                        e.0,
                        100.0 * df
                    );
                    assert!(
                        dq.abs() < 3e-2,
                        "ε {eps} {wall} m {m} {}: Q off {:.2} %",
                        e.0,
                        100.0 * dq
                    );
                    checked += 1;
                }
            }
        }
    }
    assert!(checked >= 12, "only {checked} modes checked");
}

#[test]
fn refined_sphere_and_hemisphere_modes_match_the_exact_resonances_closer() {
    // `--refine` on the same cases: the issue's figures with refinement,
    // f within 0.1 % and Q within 1 % of the exact roots (Stratton 1941;
    // Gastine, Courtois & Dormann 1967). The stated uncertainties estimate
    // the grid's error only (the region's and the absorber's are not in
    // them), so they are printed,
    // not held against the exact value; tests/closed_cavity.rs checks them
    // where the grid is the only error.
    let mut checked = 0;
    let mut falls = 0;
    for (eps, band) in [(38.0, (4.0, 8.0)), (10.0, (7.0, 15.0))] {
        for wall in ["pec", "pmc"] {
            let s = sphere_case(eps, wall, band);
            let r = lathe::refine::refine(&s).unwrap();
            for &m in &s.m {
                for x in exact_sphere_modes(eps, wall, m, s.f_max) {
                    let got = r
                        .modes
                        .iter()
                        .filter(|g| g.finest.m == m)
                        .min_by(|a, b| {
                            (a.freq_hz - x.freq_hz)
                                .abs()
                                .total_cmp(&(b.freq_hz - x.freq_hz).abs())
                        })
                        .unwrap_or_else(|| panic!("ε {eps} {wall} m {m} {}: missing", x.label()));
                    let df = got.freq_hz / x.freq_hz - 1.0;
                    let dq = got.q / x.q - 1.0;
                    eprintln!(
                        "ε {eps} {wall} m = {m} {}: f {:+.4} % ± {:.4} % (finest {:+.4} %, order {:.2?}{}), \
                         Q {:+.3} % ± {:.3} % (finest {:+.3} %{}) grids f {:?} Q {:?}",
                        x.label(),
                        100.0 * df,
                        100.0 * got.freq_err_hz / x.freq_hz,
                        100.0 * (got.finest.freq_hz / x.freq_hz - 1.0),
                        got.order_f,
                        if got.asymptotic_f { "" } else { ", formal" },
                        100.0 * dq,
                        100.0 * got.q_err / x.q,
                        100.0 * (got.finest.q / x.q - 1.0),
                        if got.asymptotic_q { "" } else { ", formal" },
                        got.freq_hz_grids,
                        got.q_grids,
                    );
                    assert!(
                        df.abs() < 1e-3,
                        "ε {eps} {wall} m {m} {}: f off {:.4} %",
                        x.label(),
                        100.0 * df
                    );
                    // The rate: where the coarsest grid's error stands above
                    // the floors of the region and the absorber (0.05 %),
                    // halving the cell must cut it by 2.5 or more (order 1.3;
                    // measured 4.2 and 2.9 for the two TM1 on the PEC plane;
                    // the first-order pair mean alone gave 2.2).
                    let e: Vec<f64> = got
                        .freq_hz_grids
                        .iter()
                        .map(|f| f / x.freq_hz - 1.0)
                        .collect();
                    if e[0].abs() > 5e-4 {
                        let fall = e[0].abs() / e[e.len() - 1].abs();
                        assert!(
                            fall >= 2.5,
                            "ε {eps} {wall} m {m} {}: errors {e:?} fall only {fall:.2}× over the grids",
                            x.label()
                        );
                        falls += 1;
                    }
                    assert!(
                        dq.abs() < 1e-2,
                        "ε {eps} {wall} m {m} {}: Q off {:.3} %",
                        x.label(),
                        100.0 * dq
                    );
                    checked += 1;
                }
            }
        }
    }
    assert!(checked >= 12, "only {checked} modes checked");
    assert!(
        falls >= 2,
        "only {falls} modes with errors above the floors"
    );
}

fn benchmark_cylinder(wall: &str, extra_region: f64, pml_cells: Option<u32>, ms: &str) -> Scenario {
    let r = 16.0 + extra_region;
    let cells = pml_cells
        .map(|c| format!("pml_cells = {c}\n"))
        .unwrap_or_default();
    scenario(&format!(
        r#"
[region]
radius = {r}
z_min = 0.0
z_max = {r}
[boundary]
outer = "pml"
bottom = "{wall}"
top = "pml"
{cells}
[[body]]
shape = "cylinder"
radius = 5.25
height = 2.3
base = 0.0
eps_r = 38.0
[search]
m = [{ms}]
f_min = 4.0
f_max = 8.0
"#
    ))
}

/// The whole isolated benchmark cylinder in a region ±`r` mm, absorbers all
/// round, orders 0–2, with extra `[region]` and `[boundary]` lines.
fn whole_cylinder(r: f64, region: &str, boundary: &str) -> Scenario {
    scenario(&format!(
        r#"
[region]
radius = {r}
z_min = -{r}
z_max = {r}
{region}
[boundary]
outer = "pml"
bottom = "pml"
top = "pml"
{boundary}
[[body]]
shape = "cylinder"
radius = 5.25
height = 4.6
base = -2.3
eps_r = 38.0
[search]
m = [0, 1, 2]
f_min = 4.0
f_max = 8.0
"#
    ))
}

#[test]
fn benchmark_cylinder_modes_are_found_labelled_and_match_the_published_table() {
    // The whole isolated cylinder, absorbers above and below: lathe solves it
    // as two halves (PEC and PMC mid-plane) and labels both together.
    // (label, f GHz, Q): Kajfez, Glisson & James 1984, from memory. TE01δ is
    // checked in f only: our value (4.857 GHz, Q 40.8) is converged in cell
    // and region size and the same code path reproduces the exact TE1 sphere
    // mode to 0.03 % in f and 0.1 % in Q; an independent frequency-domain
    // eigen-solver (solver/tests/m0_eigen.rs) agrees with it within 0.05 %
    // in f and 1 % in Q, and matches the recalled TM01δ of the same table.
    // So we report the 11 % Q difference to the recalled 45.8 as a likely
    // slip of memory, to be re-read (validation/REPORT.md).
    let table = lathe::reference::BENCHMARK_CYLINDER;
    let s = whole_cylinder(16.0, "", "");
    let study = run_study(&s).unwrap();
    assert_eq!(study.runs.len(), 6, "expected two halves × three orders");
    let modes = study.modes();
    for (label, f, q) in table {
        let (c, _) = modes
            .iter()
            .find(|(m, _)| m.label == label)
            .unwrap_or_else(|| {
                panic!(
                    "{label} not found; have {:?}",
                    modes
                        .iter()
                        .map(|m| (&m.0.label, m.0.freq_hz))
                        .collect::<Vec<_>>()
                )
            });
        let (df, dq) = (c.freq_hz / (f * 1e9) - 1.0, c.q / q - 1.0);
        eprintln!(
            "{label}: {:.4} GHz ({:+.2} %), Q {:.1} ({:+.1} %)",
            c.freq_hz / 1e9,
            100.0 * df,
            c.q,
            100.0 * dq
        );
        assert!(df.abs() < 0.01, "{label}: f off {:.2} %", 100.0 * df);
        if label != "TE01δ" {
            assert!(dq.abs() < 0.05, "{label}: Q off {:.1} %", 100.0 * dq);
        }
    }
}

#[test]
fn benchmark_cylinder_five_modes_in_half_a_billion_cell_updates() {
    // The speed issue's work-to-answer figure: all five modes of the whole
    // isolated cylinder, f within 0.5 % and Q within 3 %, in ≤ 0.5 × 10⁹
    // cell updates (runs' `cell_updates` summed: a count, not a time).
    // Reference: lathe's own converged answer (region ±24 mm, 40 cells per
    // wavelength, 16-cell absorbers, 7.46 × 10⁹ cell updates; command and
    // table in solver/benches/RESULTS.md), since the published table is
    // recalled from memory and disagrees with it in TE01δ's Q even when
    // converged (see the test above).
    let converged = [
        ("TE01δ", 4.8565, 40.84),
        ("HEM11δ", 6.3383, 30.85),
        ("HEM12δ", 6.6458, 49.89),
        ("TM01δ", 7.5310, 77.30),
        ("HEM21δ", 7.7544, 337.86),
    ];
    // And against the two independent frequency-domain eigen-solvers
    // (solver/tests/m0_eigen.rs for m = 0: TE01δ at 0.05 mm, TM01δ at 0.025 mm;
    // solver/tests/hem_eigen.rs for m ≥ 1 at 0.025 mm; complex scaling,
    // sparse LU, no time stepping), which the target is held to as well:
    // they agree with the recalled table in 7 of its 10 figures and
    // contradict it in TE01δ's Q (40.8 against 45.8), HEM12δ's Q (49.6
    // against 52.1) and HEM21δ's Q (337 against 327).
    let independent = [
        ("TE01δ", 4.8571, 40.82),
        ("HEM11δ", 6.3404, 30.832),
        ("HEM12δ", 6.6461, 49.61),
        ("TM01δ", 7.5333, 76.75),
        ("HEM21δ", 7.7567, 337.39),
    ];
    // Region ±10 mm (the absorber 4.75 mm from the body's side), 20 cells
    // per wavelength, 10-cell absorbers: measured 1.901 × 10⁸ cell updates,
    // every f within 0.08 % and every Q within 1.41 % of both references
    // (HEM12δ's Q the largest).
    let s = whole_cylinder(10.0, "cells_per_wavelength = 20", "pml_cells = 10");
    let study = run_study(&s).unwrap();
    let work: u64 = study
        .runs
        .iter()
        .map(|r| r.output.report.cell_updates)
        .sum();
    eprintln!("benchmark cylinder, lean settings: {work:.3e} cell updates");
    assert!(work <= 500_000_000, "{work} cell updates");
    let modes = study.modes();
    for (label, f, q) in converged {
        let (c, _) = modes
            .iter()
            .find(|(m, _)| m.label == label)
            .unwrap_or_else(|| panic!("{label} not found"));
        let (_, fi, qi) = independent.iter().find(|x| x.0 == label).unwrap();
        let (df, dq) = (c.freq_hz / (f * 1e9) - 1.0, c.q / q - 1.0);
        let (dfi, dqi) = (c.freq_hz / (fi * 1e9) - 1.0, c.q / qi - 1.0);
        eprintln!(
            "{label}: {:.4} GHz, Q {:.2}; against converged f {:+.3} %, Q {:+.2} %; against the eigen-solvers f {:+.3} %, Q {:+.2} %",
            c.freq_hz / 1e9,
            c.q,
            100.0 * df,
            100.0 * dq,
            100.0 * dfi,
            100.0 * dqi
        );
        for (what, df, dq) in [("converged", df, dq), ("eigen-solvers", dfi, dqi)] {
            assert!(
                df.abs() < 0.005,
                "{label} against {what}: f off {:.3} %",
                100.0 * df
            );
            assert!(
                dq.abs() < 0.03,
                "{label} against {what}: Q off {:.2} %",
                100.0 * dq
            );
        }
    }
}

#[test]
fn absorber_position_and_thickness_do_not_move_f_or_q() {
    // A quarter free-space wavelength at 6.3 GHz is 11.9 mm.
    for (wall, m) in [("pec", 1u32), ("pmc", 0)] {
        let ms = m.to_string();
        // A cylinder's faces take exact directional means: no coupling.
        let base = modes_of(&benchmark_cylinder(wall, 0.0, None, &ms), None);
        let far = modes_of(&benchmark_cylinder(wall, 11.9, None, &ms), None);
        let thick = modes_of(&benchmark_cylinder(wall, 0.0, Some(32), &ms), None);
        let a = &base[0][0];
        for (what, other) in [("moved out λ/4", &far), ("doubled", &thick)] {
            let b = &other[0][0];
            let df = (b.freq_hz / a.freq_hz - 1.0).abs();
            let dq = (b.q / a.q - 1.0).abs();
            eprintln!(
                "{wall} m = {m}, absorber {what}: Δf {:.4} %, ΔQ {:.3} %",
                100.0 * df,
                100.0 * dq
            );
            assert!(
                df < 5e-4 && dq < 5e-3,
                "{wall} m {m} {what}: Δf {df:e}, ΔQ {dq:e}"
            );
        }
    }
}
