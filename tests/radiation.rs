//! Radiation of open resonators from full FDTD runs.
//!
//! - The outside field of any n = 1 natural mode of a sphere is exactly a
//!   dipole field (Stratton 1941, §9.22–9.25; physics.md §4): directivity
//!   1.5 (1.76 dBi) in free space and 3.0 (4.77 dBi) for the hemisphere on
//!   an infinite PEC plane (image theory), with the exact dipole pattern
//!   (TE1, m = 1: (F_θ, F_φ) ∝ (1, −cos θ); TM1, m = 0: F_θ ∝ sin θ).
//!   Tolerances from the issue: directivity within 0.1 dB, cuts within
//!   0.2 dB wherever the exact pattern is above −20 dB of its peak.
//! - Q from stored energy and radiated power against the ring-down Q of the
//!   same run, within 2 % (the issue's figure); the exact Q (Stratton's
//!   characteristic equations, `lathe_solver::exact::sphere`) is printed
//!   beside them.
//! - HEM11δ of a cylinder on a finite ground disk a few resonator diameters
//!   wide radiates broadside with roughly 5–6 dBi, more forward than back,
//!   and with no cross-polar field in the principal planes: common
//!   practice, no single source. Our own dimensions (ε_r 20.5, radius
//!   6.1 mm, height 4.3 mm, disk radius 15.3 mm).
use lathe::radiation::{
    cuts_csv, json, lower_space, radiation, table, Radiation, RadiationOptions, RadiationStudy,
};
use lathe::scenario::Scenario;
use lathe::solver::exact::{sphere_mode, SphereFamily, SphereMode};
use lathe::solver::farfield::{
    EnergyOptions, FarFieldOptions, LowerSpace, ModeData, Plane, Radiator, FLOOR_DB,
};
use lathe::solver::ZWall;
use lathe::study::{problems, run_study, Study};

fn scenario(text: &str) -> Scenario {
    Scenario::parse(text, "test").unwrap()
}

/// A dielectric hemisphere (relative permittivity `eps`, radius
/// `radius_mm`) on a PEC plane, absorbers on the outer radius and the top
/// of a `region_mm` square region, orders `m` (e.g. "0, 1"), band in GHz.
fn hemisphere_on_pec(
    eps: f64,
    radius_mm: f64,
    region_mm: f64,
    m: &str,
    band: (f64, f64),
) -> Scenario {
    scenario(&format!(
        r#"
[region]
radius = {region_mm:?}
z_min = 0.0
z_max = {region_mm:?}
[boundary]
outer = "pml"
bottom = "pec"
top = "pml"
[[body]]
shape = "sphere"
radius = {radius_mm:?}
center = 0.0
eps_r = {eps:?}
[search]
m = [{m}]
f_min = {:?}
f_max = {:?}
"#,
        band.0, band.1
    ))
}

fn db(x: f64) -> f64 {
    10.0 * x.log10()
}

/// Largest |cut − exact| (dB) where the exact value is within 20 dB of its
/// peak; `exact` gives the linear pattern shape (peak 1) of θ in degrees.
fn cut_error(theta_deg: &[f64], got_dbi: &[f64], d_max: f64, shape: impl Fn(f64) -> f64) -> f64 {
    theta_deg
        .iter()
        .zip(got_dbi)
        .filter(|(&t, _)| shape(t) >= 0.01)
        .map(|(&t, &g)| (g - db(d_max * shape(t))).abs())
        .fold(0.0, f64::max)
}

/// The exact n = 1 patterns (power, peak 1) in the E- and H-plane cuts.
/// A pattern shape: linear power (peak 1) of θ in degrees.
type Shape = fn(f64) -> f64;

fn dipole_shapes(te_m1: bool) -> (Shape, Shape) {
    fn flat(_: f64) -> f64 {
        1.0
    }
    fn cos2(t: f64) -> f64 {
        t.to_radians().cos().powi(2)
    }
    fn sin2(t: f64) -> f64 {
        t.to_radians().sin().powi(2)
    }
    if te_m1 {
        (flat, cos2)
    } else {
        (sin2, sin2)
    }
}

fn check_dipole(r: &Radiation, d_max: f64, te_m1: bool, what: &str) {
    let (e_shape, h_shape) = dipole_shapes(te_m1);
    let de = cut_error(
        &r.cuts.e_plane.theta_deg,
        &r.cuts.e_plane.co_dbi,
        d_max,
        e_shape,
    );
    let dh = cut_error(
        &r.cuts.h_plane.theta_deg,
        &r.cuts.h_plane.co_dbi,
        d_max,
        h_shape,
    );
    let dd = r.directivity_dbi - db(d_max);
    eprintln!(
        "{what} {}: D {:.4} dBi ({dd:+.4} dB), cuts within {de:.4} / {dh:.4} dB, Q {:.3}, Q_energy {:.3} ({:+.3} %)",
        r.label,
        r.directivity_dbi,
        r.q,
        r.q_energy.unwrap_or(f64::NAN),
        r.q_energy_diff_percent.unwrap_or(f64::NAN)
    );
    assert!(dd.abs() < 0.1, "{what} {}: D off by {dd} dB", r.label);
    assert!(
        de < 0.2 && dh < 0.2,
        "{what} {}: cuts off by {de}, {dh} dB",
        r.label
    );
    let dq = r.q_energy_diff_percent.expect("a Q from energy");
    assert!(dq.abs() < 2.0, "{what} {}: Q_energy off by {dq} %", r.label);
}

#[test]
fn n1_modes_of_hemisphere_and_sphere_radiate_as_dipoles() {
    let (eps, a) = (38.0, 4.7e-3);
    let hemi = hemisphere_on_pec(38.0, 4.7, 14.0, "0, 1", (4.5, 7.25));
    let study = run_study(&hemi).unwrap();
    let rs = radiation(&study, &hemi, &RadiationOptions::default())
        .unwrap()
        .expect("an open structure");
    eprint!("{}", table(&rs));
    // TE_111 (m = 1) and TM_101 (m = 0) survive the PEC plane (physics.md §4).
    let te = sphere_mode(SphereFamily::Te, 1, eps, a).unwrap();
    let tm = sphere_mode(SphereFamily::Tm, 1, eps, a).unwrap();
    let pick = |m: u32, f: f64| {
        rs.modes
            .iter()
            .find(|r| r.m == m && (r.freq_hz / f - 1.0).abs() < 0.01)
            .unwrap_or_else(|| panic!("no m = {m} mode near {:.3} GHz", f / 1e9))
    };
    let (r_te, r_tm) = (pick(1, te.freq_hz), pick(0, tm.freq_hz));
    eprintln!("exact Q: TE1 {:.3}, TM1 {:.3}", te.q, tm.q);
    assert_eq!(r_te.lower, LowerSpace::Ground(Plane::Pec));
    assert!(r_te.front_to_back_db.is_none());
    check_dipole(r_te, 3.0, true, "hemisphere on PEC");
    check_dipole(r_tm, 3.0, false, "hemisphere on PEC");
    // No cross-polar field at all in the principal planes of m = 1, nor of
    // the other family at m = 0.
    for r in [r_te, r_tm] {
        for c in [&r.cuts.e_plane, &r.cuts.h_plane] {
            assert!(
                c.cross_dbi.iter().all(|&x| x < -60.0),
                "{}: cross-polar in a principal plane",
                r.label
            );
        }
    }

    // The sphere in free space: solved as two halves, its PEC half is
    // exactly this run (same grid, same walls); with the PEC mirror instead
    // of the ground plane it radiates into the whole space.
    assert_eq!(
        lower_space(Some(ZWall::Pec), ZWall::Pec),
        LowerSpace::Mirror(Plane::Pec)
    );
    assert_eq!(
        lower_space(Some(ZWall::Pmc), ZWall::Pmc),
        LowerSpace::Mirror(Plane::Pmc)
    );
    let probs = problems(&hemi).unwrap();
    let opts = RadiationOptions::default();
    for run in &study.runs {
        for (k, md) in run.output.modes.iter().enumerate() {
            let te_m1 = md.m == 1 && (md.freq_hz / te.freq_hz - 1.0).abs() < 0.01;
            let tm_m0 = md.m == 0 && (md.freq_hz / tm.freq_hz - 1.0).abs() < 0.01;
            if !(te_m1 || tm_m0) {
                continue;
            }
            let data = ModeData::from_run(&run.output, k, &probs[0].2.materials).unwrap();
            let rad =
                Radiator::new(data, &FarFieldOptions::new(LowerSpace::Mirror(Plane::Pec))).unwrap();
            let leak = rad.leakage().unwrap();
            eprintln!(
                "{}: image of the transform |ρ| {:.2e}, Faraday residual {:.1e} → {:.1e}; Poynting balance Q {:.3}",
                md.label,
                leak.rho.norm(),
                leak.residual_before,
                leak.residual_after,
                rad.poynting_balance_q()
            );
            // The run's mode fields come already separated from the other
            // modes and from their own negative-frequency image
            // (lathe_solver::modefield::demix), so Faraday's law holds to a
            // small residual before the image fit (1.7e-2 without the
            // separation), and the fit must only lower it.
            assert!(leak.residual_before < 1e-3, "{}", leak.residual_before);
            assert!(leak.residual_after <= leak.residual_before);
            let r = lathe::radiation::figures(&rad, md, Some(ZWall::Pec), &opts);
            check_dipole(&r, 1.5, te_m1, "sphere in free space");
            // Independence of the energy sphere (solver/src/farfield/energy.rs).
            let e1 = rad.stored_energy(&EnergyOptions::default()).unwrap();
            let e7 = rad
                .stored_energy(&EnergyOptions {
                    ball_fraction: 0.7,
                    ..Default::default()
                })
                .unwrap();
            eprintln!(
                "  Q_energy with the energy sphere at 0.7 of its radius: {:.3} vs {:.3}",
                e7.q, e1.q
            );
            assert!((e7.q / e1.q - 1.0).abs() < 5e-3);
        }
    }
}

/// Our own low-permittivity hemisphere (ε_r 9.7, radius 6.2 mm) on a PEC
/// plane in an 18.6 mm region, solved at orders `m` over the band
/// `scale.0` × its exact TE1 … `scale.1` × its exact TM1: the exact TE1 and
/// TM1 modes and the radiation figures of every mode found.
fn low_permittivity_hemisphere(
    m: &str,
    scale: (f64, f64),
) -> (SphereMode, SphereMode, RadiationStudy) {
    let (eps, a) = (9.7, 6.2e-3);
    let tm = sphere_mode(SphereFamily::Tm, 1, eps, a).unwrap();
    let te = sphere_mode(SphereFamily::Te, 1, eps, a).unwrap();
    let band = (scale.0 * te.freq_hz / 1e9, scale.1 * tm.freq_hz / 1e9);
    let hemi = hemisphere_on_pec(eps, 6.2, 18.6, m, band);
    let study = run_study(&hemi).unwrap();
    let rs = radiation(&study, &hemi, &RadiationOptions::default())
        .unwrap()
        .expect("an open structure");
    eprint!("{}", table(&rs));
    (te, tm, rs)
}

#[test]
fn a_strongly_damped_tm1_mode_radiates_as_a_dipole() {
    // The TM1 mode of a low-permittivity hemisphere on a PEC plane (our own
    // ε_r 9.7, radius 6.2 mm): exact Q about 4, so by the first scout check
    // (32 samples in) the mode has decayed to about e^{−5}. Its field is the
    // transform of the ring-down from its first sample (the early fields are
    // kept up to the scouts, plan::RunPlan::early_samples); opened at the
    // scout instead, its cut was 4.0 dB off the dipole, D +0.36 dB and its
    // stored-energy Q 14 % high (measured 2026-12-04). Measured with the
    // early fields: cut within 0.044 dB, D −0.013 dB, stored-energy Q
    // +2.0 %. Asserted: the dipole tolerances of the module docs, and
    // stored-energy Q within 5 % of the exact Q (the ring-down Q is within
    // 1 % of it).
    let (_, tm, rs) = low_permittivity_hemisphere("0", (0.8, 1.2));
    let r = rs
        .modes
        .iter()
        .find(|r| r.m == 0 && (r.freq_hz / tm.freq_hz - 1.0).abs() < 0.01)
        .expect("the TM1 mode");
    eprintln!("exact TM1: {:.4} GHz, Q {:.3}", tm.freq_hz / 1e9, tm.q);
    assert!(tm.q < 5.0, "exact Q {}: not a strongly damped mode", tm.q);
    assert!((r.q / tm.q - 1.0).abs() < 0.01, "ring-down Q {}", r.q);
    let (e_shape, _) = dipole_shapes(false);
    let de = cut_error(
        &r.cuts.e_plane.theta_deg,
        &r.cuts.e_plane.co_dbi,
        3.0,
        e_shape,
    );
    let dd = r.directivity_dbi - db(3.0);
    let qe = r.q_energy.expect("a Q from energy");
    eprintln!(
        "TM1: D {:.4} dBi ({dd:+.4} dB), cut within {de:.4} dB, Q_energy {qe:.3} ({:+.2} % of exact)",
        r.directivity_dbi,
        100.0 * (qe / tm.q - 1.0)
    );
    assert!(dd.abs() < 0.1, "D off by {dd} dB");
    assert!(de < 0.2, "cut off by {de} dB");
    assert!(
        (qe / tm.q - 1.0).abs() < 0.05,
        "Q_energy {qe} against exact {}",
        tm.q
    );
}

#[test]
fn a_wide_band_keeps_every_ringing_mode_s_field() {
    // The same hemisphere searched at m = 1 over 0.5 × TE1 … 2 × TM1: seven
    // modes, Q from 1.6 to about 1900, and a first scout that finds none
    // yet. Measured 2026-12-04 on ε_r 10, radius 6 mm, with the transforms
    // opened at the second scout and paired in mode order: a Q 1.6 mode took
    // a Q 1900 mode's transform, and TE1's stored-energy Q came out 2126
    // against 9.15. With the early fields kept up to the last scout that
    // fits and the sharpest modes choosing first, this hemisphere (ε_r 9.7,
    // radius 6.2 mm): TE1 D −0.03 dB, its stored-energy Q −1.1 % of exact,
    // every mode of Q ≥ 5 within 1.2 % of its ring-down Q; with the early
    // fields to the first scout only, TE1 D +4.7 dB and stored-energy Q
    // +1585 %. Asserted: TE1 D within 0.15 dB of 4.77 dBi and its
    // stored-energy Q within 3 % of exact; every mode of Q ≥ 5 within 3 %
    // of its ring-down Q. The Q 1.6 mode rings for less than a period and
    // is not held to anything.
    let (te, _, rs) = low_permittivity_hemisphere("1", (0.5, 2.0));
    assert!(rs.modes.len() >= 5, "{} modes", rs.modes.len());
    let r = rs
        .modes
        .iter()
        .find(|r| (r.freq_hz / te.freq_hz - 1.0).abs() < 0.01)
        .expect("the TE1 mode");
    let dd = r.directivity_dbi - db(3.0);
    let qe = r.q_energy.expect("a Q from energy");
    eprintln!(
        "TE1 (exact Q {:.3}): D {dd:+.3} dB, Q_energy {qe:.3} ({:+.2} % of exact)",
        te.q,
        100.0 * (qe / te.q - 1.0)
    );
    assert!(dd.abs() < 0.15, "TE1 D off by {dd} dB");
    assert!((qe / te.q - 1.0).abs() < 0.03, "TE1 Q_energy {qe}");
    for r in rs.modes.iter().filter(|r| r.q >= 5.0) {
        let dq = r.q_energy_diff_percent.expect("a Q from energy");
        assert!(
            dq.abs() < 3.0,
            "{} at {:.3} GHz: ΔQ {dq} %",
            r.label,
            r.freq_hz / 1e9
        );
    }
}

#[test]
fn dielectric_resonator_on_a_finite_ground_disk_radiates_broadside() {
    let dra = scenario(
        r#"
[region]
radius = 21.3
z_min = -10.0
z_max = 16.0
[boundary]
outer = "pml"
bottom = "pml"
top = "pml"
[[body]]
shape = "cylinder"
radius = 15.3
height = 0.6
base = -0.6
conductor = "pec"
[[body]]
shape = "cylinder"
radius = 6.1
height = 4.3
base = 0.0
eps_r = 20.5
[search]
m = [1]
f_min = 4.5
f_max = 6.5
"#,
    );
    let study = run_study(&dra).unwrap();
    let rs = radiation(&study, &dra, &RadiationOptions::default())
        .unwrap()
        .unwrap();
    eprint!("{}", table(&rs));
    let r = rs.find("HEM11δ").expect("HEM11δ");
    eprintln!(
        "HEM11δ {:.4} GHz: D {:.2} dBi at θ {:.1}°, F/B {:.1} dB, cross-polar (diagonal plane, forward) {:.1} dB, Q {:.2}, BW(VSWR 2) {:.2} %",
        r.freq_hz / 1e9,
        r.directivity_dbi,
        r.theta_max_deg,
        r.front_to_back_db.unwrap(),
        r.cross_polar_db,
        r.q,
        100.0 * r.bandwidth_vswr2.unwrap()
    );
    // "Roughly 5–6 dBi" is a rule of the trade for ground planes a few
    // resonator diameters wide; measured here 5.9 dBi, and it grows with the
    // disk (5.3 dBi at 12.2 mm, 7.0 dBi at 25.3 mm radius): accept 5–6.5.
    assert!(
        r.directivity_dbi > 5.0 && r.directivity_dbi < 6.5,
        "D {} dBi",
        r.directivity_dbi
    );
    assert!(
        r.theta_max_deg < 5.0,
        "not broadside: θ {}",
        r.theta_max_deg
    );
    assert!(r.front_to_back_db.unwrap() > 3.0);
    for c in [&r.cuts.e_plane, &r.cuts.h_plane] {
        assert!(c
            .cross_dbi
            .iter()
            .all(|&x| x <= FLOOR_DB + 1.0 || x < r.directivity_dbi - 60.0));
    }
    // A disk wider than the largest sphere inside the surface: no Q_energy,
    // and the reason says so.
    assert!(
        r.q_energy.is_none()
            && r.q_energy_note
                .as_deref()
                .unwrap()
                .contains("enlarge the region")
    );
    let q = r.q;
    assert!((r.bandwidth_vswr2.unwrap() - 1.0 / (q * 2f64.sqrt())).abs() < 1e-12);
    // Text forms: the CSV has a header and one row per degree, the JSON the
    // keys the CLI reads.
    let csv = cuts_csv(r);
    let mut lines = csv.lines();
    assert_eq!(
        lines.next(),
        Some("theta_deg,e_co_dbi,e_cross_dbi,h_co_dbi,h_cross_dbi")
    );
    assert_eq!(lines.count(), 361);
    let v = json(&rs, false);
    let m0 = &v["modes"][0];
    for key in [
        "directivity_dbi",
        "q_energy",
        "bandwidth_vswr2",
        "front_to_back_db",
        "theta_max_deg",
    ] {
        assert!(m0.get(key).is_some(), "JSON lacks {key}");
    }
    // A closed structure has no radiation figures.
    let closed = scenario(
        r#"
[region]
radius = 7.3
z_min = 0.0
z_max = 9.1
[[body]]
shape = "cylinder"
radius = 3.1
height = 2.6
base = 0.0
eps_r = 9.4
[search]
m = [0]
f_min = 10.0
f_max = 14.0
"#,
    );
    assert!(radiation(
        &Study {
            runs: vec![],
            bodies: vec![],
        },
        &closed,
        &RadiationOptions::default()
    )
    .unwrap()
    .is_none());
}
