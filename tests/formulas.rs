//! The closed-form fits (Mongia & Bhartia 1994, see `lathe::formulas`)
//! against the full-wave solver for isolated cylinders of our own choosing
//! across the range the issue names (a/h 0.5 … 2, ε_r 10 … 80; h is the
//! height on a ground plane, half the isolated height). The fits claim 3 %
//! in f and 10 % in Q. Measured: within that at a/h = 1 and 2 (asserted);
//! at a/h = 0.5 the HEM11δ fit is 6.6 % low against the solver, whose HEM11δ
//! matches the published benchmark to 0.1 % — there the comparison must be
//! flagged, which is asserted too. The 3 × 3 sweep is in
//! validation/REPORT.md.
use lathe::formulas::{compare, comparison_text, isolated_cylinder, F_ACCURACY, Q_ACCURACY};
use lathe::scenario::Scenario;
use lathe::study::run_study;

fn isolated(eps: f64, a_mm: f64, h_mm: f64) -> Scenario {
    isolated_cylinder(eps, a_mm, h_mm)
}

#[test]
fn fits_and_solver_agree_within_the_fits_stated_accuracy() {
    // (ε_r, a mm, h mm): a/h = 1 and 2.
    for (eps, a, h) in [(36.5, 3.3, 3.3), (79.0, 3.6, 1.8)] {
        let s = isolated(eps, a, h);
        let study = run_study(&s).unwrap();
        for c in compare(eps, a * 1e-3, h * 1e-3, false, &study) {
            let (df, dq) = c
                .differences()
                .unwrap_or_else(|| panic!("ε {eps} a/h {}: no full-wave {}", a / h, c.fit.label));
            eprintln!(
                "ε {eps} a/h {:.2} {}: f fit {:+.2} %, Q fit {}",
                a / h,
                c.fit.label,
                100.0 * df,
                dq.map_or("—".into(), |d| format!("{:+.1} %", 100.0 * d))
            );
            assert!(
                df.abs() <= F_ACCURACY,
                "ε {eps} a/h {} {}: f {:+.2} %",
                a / h,
                c.fit.label,
                100.0 * df
            );
            if let Some(dq) = dq {
                assert!(
                    dq.abs() <= Q_ACCURACY,
                    "ε {eps} a/h {} {}: Q {:+.1} %",
                    a / h,
                    c.fit.label,
                    100.0 * dq
                );
            }
        }
    }
}

#[test]
fn a_disagreement_beyond_the_stated_accuracy_is_flagged() {
    // Tall cylinder, a/h = 0.5 (ε_r 12.7): HEM11δ fit 6.6 % below the solver.
    let (eps, a, h) = (12.7, 4.1, 8.2);
    let s = isolated(eps, a, h);
    let study = run_study(&s).unwrap();
    let rows = compare(eps, a * 1e-3, h * 1e-3, false, &study);
    let hem = rows.iter().find(|c| c.fit.label == "HEM11δ").unwrap();
    let (df, _) = hem.differences().expect("HEM11δ found");
    eprintln!("a/h 0.5: HEM11δ fit {:+.2} %", 100.0 * df);
    assert!(hem.outside_stated_accuracy());
    let text = comparison_text(&s, &study);
    let line = text
        .lines()
        .find(|l| l.trim_start().starts_with("HEM11δ"))
        .unwrap();
    assert!(line.contains("beyond the fit's stated accuracy"), "{text}");
}
