//! Every shipped example runs, at a coarse setting, and shows what its
//! comment block says to look at. The figures here are checks of our own
//! demo scenarios (no outside source): the mode each example is about is
//! found, named, and has a finite frequency and Q.
use lathe::scenario::Scenario;
use lathe::study::run_study;
use std::path::Path;

#[path = "../examples/api.rs"]
mod api;

/// Cells per wavelength for these runs: coarse (lathe's default is 30),
/// enough to find and name the modes, not for their last digit.
const COARSE: f64 = 12.0;

fn load(name: &str) -> Scenario {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples")
        .join(name);
    let text = std::fs::read_to_string(&path).unwrap();
    let mut s = Scenario::parse(&text, name).unwrap();
    s.cell = None;
    s.cells_per_wavelength = COARSE;
    s
}

/// The modes of an example as (label, f GHz, Q), by frequency.
fn modes(name: &str) -> Vec<(String, f64, f64)> {
    let study = run_study(&load(name)).unwrap();
    let v: Vec<(String, f64, f64)> = study
        .modes()
        .into_iter()
        .map(|(m, _)| (m.label.clone(), m.freq_hz / 1e9, m.q))
        .collect();
    eprintln!("{name}: {v:?}");
    assert!(!v.is_empty(), "{name}: no mode found");
    for (label, f, q) in &v {
        assert!(
            f.is_finite() && q.is_finite() && *q > 0.0,
            "{name}: {label} {f} {q}"
        );
    }
    v
}

#[test]
fn every_scenario_in_examples_is_tested_here() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            "access_point_dra.toml",
            "filter_puck.toml",
            "isolated_puck.toml"
        ],
        "a new example needs its own test below"
    );
}

#[test]
fn access_point_antenna_has_its_broadside_mode_near_5_8_ghz() {
    let v = modes("access_point_dra.toml");
    let hem = v.iter().find(|m| m.0 == "HEM11δ").expect("HEM11δ found");
    // Designed for 5.8 GHz at the default grid; the coarse grid moves it by
    // well under 5 %. A radiating mode: Q of order 10, far from a cavity's.
    assert!((hem.1 / 5.8 - 1.0).abs() < 0.05, "HEM11δ at {} GHz", hem.1);
    assert!(hem.2 > 3.0 && hem.2 < 100.0, "HEM11δ Q {}", hem.2);
}

#[test]
fn filter_puck_lowest_mode_is_te01d() {
    let v = modes("filter_puck.toml");
    assert_eq!(v[0].0, "TE01δ", "{v:?}");
    assert!(v.iter().any(|m| m.0 == "HEM11δ"), "{v:?}");
}

#[test]
fn isolated_puck_is_solved_in_halves_and_shows_both_families() {
    let s = load("isolated_puck.toml");
    assert!(
        lathe::study::halves(&s).is_some(),
        "symmetric about its mid-plane"
    );
    let v = modes("isolated_puck.toml");
    assert_eq!(v[0].0, "TE01δ", "{v:?}");
    let te = &v[0];
    let hem = v.iter().find(|m| m.0 == "HEM11δ").expect("HEM11δ found");
    // The magnetic-dipole-like TE01δ stores more energy per radiated watt
    // than the electric-dipole-like HEM11δ in this puck.
    assert!(te.2 > hem.2, "TE01δ Q {} vs HEM11δ Q {}", te.2, hem.2);
}

#[test]
fn library_example_builds_solves_and_reads_a_field() {
    let (f, r_peak) = api::demo(COARSE).unwrap();
    // The ring's broadside mode lies low in the 4.5–8.5 GHz band (at the
    // default grid it is near 4.74 GHz); its E_r on the ground peaks inside
    // the ring's outer radius of 5.7 mm.
    assert!(f > 4.5e9 && f < 5.2e9, "f = {f}");
    assert!(r_peak < 5.7e-3, "r_peak = {r_peak}");
}
