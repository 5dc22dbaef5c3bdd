//! The `lathe` command as a user meets it: the shipped example, the plan,
//! JSON output, and exit code 2 with a message naming key and value for
//! bad input.
use std::process::Command;

fn lathe(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_lathe"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("run lathe");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn shipped_example_runs_and_writes_json() {
    let (code, out, err) = lathe(&[
        "modes",
        "examples/filter_puck.toml",
        "--json",
        "-",
        "--quiet",
    ]);
    assert_eq!(code, 0, "{err}");
    let start = out.find('{').expect("JSON on stdout");
    let doc: serde_json::Value = serde_json::from_str(&out[start..]).unwrap();
    let modes = doc["modes"].as_array().unwrap();
    assert!(!modes.is_empty());
    for m in modes {
        for key in ["m", "freq_hz", "q", "error", "amplitude"] {
            assert!(m[key].is_number(), "mode lacks {key}: {m}");
        }
        assert!(
            m["label"].as_str().is_some_and(|l| !l.is_empty()),
            "mode lacks a label: {m}"
        );
        let f = m["freq_hz"].as_f64().unwrap();
        assert!((3.5e9..=8.0e9).contains(&f));
    }
    let runs = doc["runs"].as_array().unwrap();
    assert_eq!(runs.len(), 3);
    for r in runs {
        for key in [
            "m",
            "nr",
            "nz",
            "cell_r_mm",
            "cell_z_mm",
            "dt_s",
            "steps",
            "cell_updates",
            "seconds",
        ] {
            assert!(r[key].is_number(), "run lacks {key}: {r}");
        }
        let cu = r["cell_updates"].as_f64().unwrap();
        let expect =
            r["nr"].as_f64().unwrap() * r["nz"].as_f64().unwrap() * r["steps"].as_f64().unwrap();
        assert_eq!(cu, expect, "cell_updates = cells × steps");
        // A puck's faces are flat: no off-diagonal coupling to correct.
        assert_eq!(r["surface_correction"].as_str(), Some("none"), "{r}");
    }
    // The lowest mode of this puck is its TE01δ (its comment says so).
    assert_eq!(modes[0]["m"].as_u64(), Some(0));
    assert_eq!(modes[0]["label"].as_str(), Some("TE01δ"));
}

#[test]
fn check_prints_the_plan_without_running() {
    let (code, out, err) = lathe(&["check", "examples/filter_puck.toml", "--m", "1"]);
    assert_eq!(code, 0, "{err}");
    for word in [
        "grid",
        "time step",
        "limit",
        "pulse",
        "sampling",
        "source",
        "probe",
        "memory",
    ] {
        assert!(out.contains(word), "plan lacks '{word}':\n{out}");
    }
}

fn write_tmp(name: &str, text: &str) -> String {
    let dir = std::env::temp_dir().join(format!("lathe-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().into_owned()
}

const GOOD: &str = "[region]\nradius = 5.0\nz_min = 0.0\nz_max = 7.0\n[search]\nm = [0]\nf_min = 20.0\nf_max = 40.0\n";

#[test]
fn bad_input_exits_2_and_quotes_key_and_value() {
    let cases: &[(&str, &str, &[&str])] = &[
        ("radus", &GOOD.replace("radius", "radus"), &["region.radus", "did you mean `radius`"]),
        ("fmax", &GOOD.replace("f_max = 40.0", "f_max = 10.0"), &["search.f_max", "10"]),
        ("neg", &GOOD.replace("radius = 5.0", "radius = -5.0"), &["region.radius", "-5"]),
        ("toml", "[region\nradius = 1", &["not valid TOML"]),
        ("m", &GOOD.replace("m = [0]", "m = [0, 1.5]"), &["search.m", "1.5"]),
        (
            "eps",
            &format!("{GOOD}[[body]]\nshape = \"cylinder\"\nradius = 1.0\nheight = 1.0\nbase = 0.0\neps_r = 0.3\n"),
            &["body[0].eps_r", "0.3"],
        ),
        (
            "poly",
            &format!("{GOOD}[[body]]\nshape = \"polygon\"\npoints = [[0.0, 0.0], [-1.0, 1.0], [1.0, 2.0]]\neps_r = 4.0\n"),
            &["body[0].points[1]", "-1", "r ≥ 0"],
        ),
        (
            "cone",
            &format!("{GOOD}[[body]]\nshape = \"cone\"\nradius_bottom = 0.0\nradius_top = 0.0\nheight = 1.0\nbase = 0.0\neps_r = 4.0\n"),
            &["body[0].radius_bottom", "no volume"],
        ),
        ("pml", &GOOD.replace("[search]", "[boundary]\ntop = \"pml\"\npml_cells = 2\n[search]"), &["boundary.pml_cells", "2"]),
        ("wall", &GOOD.replace("[search]", "[boundary]\nouter = \"pmc\"\n[search]"), &["boundary.outer", "pmc"]),
        ("sym", &GOOD.replace("f_max = 40.0", "f_max = 40.0\nsymmetry = \"yes\""), &["search.symmetry", "yes"]),
        (
            "thin",
            &format!("{GOOD}[[body]]\nshape = \"cylinder\"\nradius = 2.0\nheight = 0.05\nbase = 0.0\neps_r = 4.0\n"),
            &["body[0].height", "thinner than one cell"],
        ),
    ];
    for (name, text, needles) in cases {
        let path = write_tmp(&format!("{name}.toml"), text);
        let (code, _, err) = lathe(&["modes", &path]);
        assert_eq!(code, 2, "{name}: {err}");
        for n in *needles {
            assert!(err.contains(n), "{name}: message lacks '{n}':\n{err}");
        }
        assert!(!err.contains("panicked"), "{name}: {err}");
    }
    let (code, _, err) = lathe(&["modes", "no/such/file.toml"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("no/such/file.toml"));
    let (code, _, _) = lathe(&["modes", "examples/filter_puck.toml", "--m", "x"]);
    assert_eq!(code, 2);
}

#[test]
fn empty_band_is_a_failed_run_with_exit_1() {
    // A 5 mm can has no resonance below 20 GHz (TM010 is at 22.9 GHz).
    let path = write_tmp(
        "empty.toml",
        &GOOD.replace("f_min = 20.0\nf_max = 40.0", "f_min = 5.0\nf_max = 20.0"),
    );
    let (code, _, err) = lathe(&["modes", &path, "--quiet"]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("no mode found"), "{err}");
}

/// A small open scenario of our own (ε_r 20.5 puck, radius 3.05 mm, on an
/// infinite ground plane, m = 1) that runs in about a second at a coarse
/// cell.
const SMALL_DRA: &str = r#"
[region]
radius = 9.0
z_min = 0.0
z_max = 8.0
cell = 0.3
[boundary]
outer = "pml"
bottom = "pec"
top = "pml"
[[body]]
shape = "cylinder"
radius = 3.05
height = 2.6
base = 0.0
eps_r = 20.5
[search]
m = [1]
f_min = 8.0
f_max = 14.0
"#;

fn temp_dir(name: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("lathe-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

#[test]
fn results_folder_holds_table_json_csv_fields_and_pictures() {
    let dir = temp_dir("out");
    let file = dir.join("dra.toml");
    std::fs::write(&file, SMALL_DRA).unwrap();
    let res = dir.join("results");
    let (code, out, err) = lathe(&[
        "modes",
        file.to_str().unwrap(),
        "--out",
        res.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("HEM11δ"), "{out}");
    assert!(out.contains("D (dBi)"), "radiation table: {out}");
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(res.join("modes.json")).unwrap()).unwrap();
    let hem = doc["modes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["label"] == "HEM11δ")
        .expect("HEM11δ in the JSON");
    // An open structure's modes carry their radiation figures; a broadside
    // mode over an infinite ground has a few dBi (a dipole over ground gives
    // 4.77 dBi: physics.md §4) and a bandwidth that is a fraction.
    let d = hem["directivity_dbi"].as_f64().unwrap();
    assert!(d > 3.0 && d < 8.0, "D = {d}");
    let bw = hem["bandwidth_vswr2"].as_f64().unwrap();
    assert!(bw > 0.0 && bw < 1.0, "bw = {bw}");
    assert!(hem["q_energy"].is_number(), "{hem}");
    let csv = std::fs::read_to_string(res.join("modes.csv")).unwrap();
    assert!(csv.starts_with("index,m,label,freq_ghz"), "{csv}");
    assert!(csv.lines().count() >= 2);
    let h5 = std::fs::read(res.join("fields.h5")).unwrap();
    assert_eq!(&h5[..8], b"\x89HDF\r\n\x1a\n", "HDF5 signature");
    let pictures: Vec<_> = std::fs::read_dir(res.join("plots"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(
        pictures.iter().any(|p| p.starts_with("spectrum_m1")),
        "{pictures:?}"
    );
    assert!(
        pictures.iter().any(|p| p.contains("HEM11d")),
        "{pictures:?}"
    );
}

#[test]
fn pattern_writes_cuts_figures_and_charts_and_refuses_closed_structures() {
    let dir = temp_dir("pattern");
    let file = dir.join("dra.toml");
    std::fs::write(&file, SMALL_DRA).unwrap();
    let out_dir = dir.join("patterns");
    let (code, out, err) = lathe(&[
        "pattern",
        file.to_str().unwrap(),
        "--mode",
        "HEM11d",
        "--out",
        out_dir.to_str().unwrap(),
        "--step",
        "2",
        "--quiet",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("HEM11δ"), "{out}");
    let names: Vec<String> = std::fs::read_dir(&out_dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    for suffix in [
        "cuts.csv",
        "pattern.json",
        "e_plane.png",
        "h_plane.png",
        "map.png",
    ] {
        assert!(
            names.iter().any(|n| n.ends_with(suffix)),
            "{suffix}: {names:?}"
        );
    }
    let (code, _, err) = lathe(&["pattern", "examples/filter_puck.toml", "--quiet"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("closed"), "{err}");
    let (code, _, err) = lathe(&[
        "pattern",
        file.to_str().unwrap(),
        "--mode",
        "TE07δ",
        "--quiet",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("--mode TE07δ") && err.contains("HEM11δ"),
        "{err}"
    );
}

#[test]
fn check_prints_memory_and_run_time_and_the_cap_refuses_big_runs() {
    let (code, out, err) = lathe(&["check", "examples/filter_puck.toml"]);
    assert_eq!(code, 0, "{err}");
    for key in ["memory", "run time", "cell updates", "time step"] {
        assert!(out.contains(key), "plan lacks {key}: {out}");
    }
    let (code, _, err) = lathe(&[
        "modes",
        "examples/filter_puck.toml",
        "--max-memory",
        "2M",
        "--quiet",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--max-memory"), "{err}");
    let (code, _, err) = lathe(&["modes", "examples/filter_puck.toml", "--max-memory", "lots"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("lots"), "{err}");
    let (code, _, err) = lathe(&["modes", "examples/filter_puck.toml", "--fields", "-"]);
    assert_eq!(code, 2, "{err}");
}
