//! Dielectric loss by perturbation (lathe::loss), against cases whose
//! electric filling factor is known exactly.
use lathe::scenario::Scenario;
use lathe::study::run_study;

/// A closed PEC can of radius 7.9 mm and length 10.4 mm holding two
/// stacked layers of ε_r 3.7 that meet at mid-height; the lower layer has
/// loss tangent `tan_lower`, the upper `tan_upper`.
fn two_layers(tan_lower: f64, tan_upper: f64) -> Scenario {
    let text = format!(
        r#"
        [region]
        radius = 7.9
        z_min = 0.0
        z_max = 10.4
        cells_per_wavelength = 24
        [[body]]
        shape = "cylinder"
        radius = 7.9
        height = 5.2
        base = 0.0
        eps_r = 3.7
        loss_tangent = {tan_lower}
        [[body]]
        shape = "cylinder"
        radius = 7.9
        height = 5.2
        base = 5.2
        eps_r = 3.7
        loss_tangent = {tan_upper}
        [search]
        m = [0, 1]
        f_min = 7.0
        f_max = 14.0
        "#
    );
    Scenario::parse(&text, "two_layers.toml").unwrap()
}

#[test]
fn uniformly_lossy_filling_gives_q_of_one_over_tan_delta() {
    // Exact: a structure filled entirely with one dielectric has p = 1 and
    // Q_d = 1/tan δ (the perturbation formula of lathe::loss with p = 1;
    // for a closed cavity this is the exact result, e.g. Pozar, Microwave
    // Engineering, Q of a cavity filled with lossy dielectric, Q_d = 1/tan δ).
    let tan = 3.1e-4;
    let study = run_study(&two_layers(tan, tan)).unwrap();
    let losses = study.losses().expect("lossy bodies");
    assert!(!losses.is_empty());
    for (l, (m, _)) in losses.iter().zip(study.modes()) {
        let l = l.as_ref().expect("every mode has a field");
        let p: f64 = l.filling.iter().sum();
        assert!((p - 1.0).abs() < 1e-12, "{} p = {p}", m.label);
        assert!((l.q_dielectric * tan - 1.0).abs() < 1e-9, "{}", m.label);
        // The lossless Q is a huge lower bound: the loaded Q is Q_d.
        assert!((l.q_with_loss * tan - 1.0).abs() < 1e-6, "{}", m.label);
    }
}

#[test]
fn half_filled_loss_has_filling_one_half_for_modes_even_about_the_interface() {
    // Exact: in a can uniformly filled (both layers ε_r 3.7), every mode's
    // |E|² is symmetric about mid-height (the fields are sin or cos of
    // pπz/d, physics.md §4 closed-cylinder modes), so the lower layer holds
    // exactly half of the electric energy: p = 1/2, Q_d = 2/tan δ. Nodes on
    // the interface are shared between the layers, so the node sums see the
    // symmetry exactly.
    let tan = 8.0e-4;
    let s = two_layers(tan, 0.0);
    let study = run_study(&s).unwrap();
    let losses = study.losses().expect("a lossy body");
    let mut checked = 0;
    for (l, (m, _)) in losses.iter().zip(study.modes()) {
        let l = l.as_ref().expect("every mode has a field");
        eprintln!(
            "{} {:.4} GHz amplitude {:.3}: p = {:.4}",
            m.label,
            m.freq_hz / 1e9,
            m.amplitude,
            l.filling[0]
        );
        // The mode fields are separated from one another (modefield::demix),
        // so even the weakly excited TM010 (amplitude ≈ 0.06) is clean; what
        // remains is leakage of modes outside the band, a few 1e-4 here.
        checked += 1;
        assert!(
            (l.filling[0] - 0.5).abs() < 2e-3,
            "{} at {:.4} GHz: p = {}",
            m.label,
            m.freq_hz / 1e9,
            l.filling[0]
        );
        assert!((l.q_dielectric * l.filling[0] * tan - 1.0).abs() < 1e-9);
    }
    assert!(checked >= 4, "only {checked} modes");
}

#[test]
fn lossless_scenarios_carry_no_loss_figures() {
    let study = run_study(&two_layers(0.0, 0.0)).unwrap();
    assert!(study.losses().is_none());
    let doc = lathe::output::json(&study);
    assert!(doc["modes"][0].get("q_with_loss").is_none());
}
