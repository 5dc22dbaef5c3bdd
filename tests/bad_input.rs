//! The catalogue of bad scenarios: every way a scenario file can be wrong
//! that lathe recognises, each run through the real `lathe` binary
//! (`check`, and `modes` for a few, all failing before anything is stepped).
//! Each must exit with code 2, print no panic, and print one message that
//! names the file and the key (`region.cell`, `body[2].radius`,
//! `body[3].points[1]`, `search.m`: tables by name, bodies by index from 0),
//! quotes the bad value and says what is allowed, with a hint where the fix
//! is obvious. No NaN or ∞ may appear unless the file itself wrote one.
//!
//! Each case is the valid base scenario [`BASE`] with one edit, and the edit
//! must match the base exactly once, so that no case can silently test the
//! base itself; the base is checked to pass.
//!
//! Cases handled (test case names in brackets):
//!
//! - TOML syntax: unclosed table header [toml_unclosed_table], a unit after a
//!   number [toml_unit_after_number], a duplicate key [toml_duplicate_key]
//!   or table [toml_duplicate_table], an integer beyond 64 bits
//!   [toml_integer_overflow]; the message gives line, column, the line, and
//!   the key or table it is in.
//! - Wrong types: a quoted number [number_in_quotes], a string where a table
//!   goes [table_as_string], a boolean wall [wall_as_boolean], `[body]` for
//!   `[[body]]` [single_bracket_body], a body that is not a table
//!   [body_not_a_table], a date for a frequency [date_for_frequency], ε_r as
//!   text [eps_as_string].
//! - Missing: `[search]` [missing_search], the whole file [empty_file],
//!   `f_max` [missing_f_max], a body's radius [missing_body_radius], a shape
//!   (hint: the shape the keys belong to) [missing_shape], one of the
//!   region's three extents [region_partial], any material
//!   [no_material].
//! - Unknown keys, with "did you mean" [unknown_key_typo,
//!   unknown_top_table], a key of another table [key_in_the_wrong_table] or
//!   another shape [key_of_other_shape], an
//!   unknown shape [unknown_shape], wall [unknown_wall, wall_upper_case] or
//!   conductor [unknown_conductor].
//! - Sizes: negative [negative_sphere_radius], zero [zero_height, cell_zero],
//!   NaN or ∞ [nan_cell, infinite_base, sphere_center_nan], beyond 1 km
//!   [length_beyond_limit].
//! - Materials: ε_r < 1 [eps_below_one], ε_r absurd [eps_huge], loss tangent
//!   negative [loss_tangent_negative] or on a conductor
//!   [loss_tangent_on_conductor], both ε_r and conductor
//!   [eps_and_conductor].
//! - Band: f_min ≥ f_max with the swap hint [band_swapped], empty
//!   [band_empty], f_min zero [f_min_zero], values in Hz [band_in_hz] or MHz
//!   [band_in_mhz], wider than 1000:1 [band_too_wide].
//! - Orders m: negative [m_negative], fractional [m_fraction], text with the
//!   list hint [m_string], empty [m_empty], huge [m_huge], boolean [m_bool].
//! - Run length: max_periods 0 [max_periods_zero] or huge
//!   [max_periods_huge], a ring-down record beyond memory
//!   [record_beyond_memory].
//! - Absorbers: pml_cells 0 [pml_cells_zero] or huge [pml_cells_huge], a
//!   PML thicker than the region [pml_thicker_than_region], pml_reflection
//!   ≥ 1 [pml_reflection_one], pml_order out of range
//!   [pml_order_out_of_range].
//! - Region: z_min ≥ z_max with the swap hint [region_z_swapped], a region
//!   given in metres [region_in_metres], a cell
//!   larger than the region [cell_larger_than_region], a cell too coarse for
//!   the wavelength [cell_too_coarse], an absurd grid refused before any
//!   allocation [absurd_grid, absurd_grid_modes], a grid beyond the memory
//!   a run may use [grid_beyond_memory], cells_per_wavelength out of 4 …
//!   1000 [cells_per_wavelength_huge, cells_per_wavelength_small].
//! - Bodies: thinner than a cell [body_thinner_than_cell,
//!   body_thinner_than_cell_modes], a radius in metres with the mm hint
//!   [radius_in_metres], wholly outside the region in z
//!   [body_outside_region] or r [body_outside_radially], a region that is
//!   all metal [region_all_metal].
//! - Cones: both radii zero [cone_both_radii_zero], a negative radius
//!   [cone_negative_radius]; rings: radii swapped [ring_radii_swapped],
//!   inner radius < 0 [ring_inner_negative].
//! - Polygons: < 3 points [polygon_two_points], self-intersecting
//!   [polygon_self_intersecting], r < 0 [polygon_r_negative], a point that
//!   is not a pair [polygon_point_not_pair], a NaN coordinate
//!   [polygon_nan], no area [polygon_no_area], a repeated point
//!   [polygon_repeated_point].
//! - Command line (test `command_line_mistakes_exit_2`): a missing scenario
//!   file, a directory as the scenario, a file that is not UTF-8, `--json`
//!   into a missing directory (the path quoted), `--m` with a fraction.
use std::path::PathBuf;
use std::process::Command;

/// A valid scenario of our own: a puck of ε_r 20.5 on a support ring, a
/// metal tuning cone above it, a side polygon and a small sphere, in a can
/// with an absorbing top.
const BASE: &str = r#"[region]
radius = 9.7
z_min = 0.0
z_max = 13.3
cell = 0.31

[boundary]
outer = "pec"
bottom = "pec"
top = "pml"
pml_cells = 12

[[body]]
shape = "ring"
inner_radius = 1.3
outer_radius = 3.7
height = 2.9
base = 0.0
eps_r = 2.3

[[body]]
shape = "cylinder"
radius = 4.1
height = 3.3
base = 2.9
eps_r = 20.5
loss_tangent = 1e-4

[[body]]
shape = "cone"
radius_bottom = 1.9
radius_top = 0.7
height = 2.2
base = 9.1
conductor = "pec"

[[body]]
shape = "polygon"
points = [[5.3, 0.0], [7.9, 0.0], [7.9, 1.7], [5.3, 1.1]]
eps_r = 3.6

[[body]]
shape = "sphere"
radius = 1.1
center = 7.4
eps_r = 9.8

[search]
m = [0, 1]
f_min = 4.7
f_max = 9.3
max_periods = 3100
"#;

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

/// A scratch directory of one test (removed by the test when it passes).
fn tmp_dir(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("lathe-bad-input-{}-{test}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn write_tmp(dir: &std::path::Path, name: &str, bytes: &[u8]) -> String {
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p.to_string_lossy().into_owned()
}

/// The base with each `from` replaced by its `to`; every `from` must occur
/// exactly once in the text it is applied to.
fn edits(pairs: &[(&str, &str)]) -> String {
    let mut text = BASE.to_string();
    for (from, to) in pairs {
        assert_eq!(
            text.matches(from).count(),
            1,
            "edit '{from}' must match the scenario exactly once"
        );
        text = text.replacen(from, to, 1);
    }
    text
}

fn edit(from: &str, to: &str) -> String {
    edits(&[(from, to)])
}

/// The base without the part from `from` up to (not including) `to`.
fn cut(from: &str, to: &str) -> String {
    let a = BASE.find(from).expect("start of cut");
    let b = a + BASE[a..].find(to).expect("end of cut");
    format!("{}{}", &BASE[..a], &BASE[b..])
}

#[derive(Clone, Copy)]
enum Cmd {
    Check,
    Modes,
}

struct Case {
    name: &'static str,
    text: String,
    cmd: Cmd,
    /// The key as printed, after the file name.
    key: &'static str,
    /// The bad value as quoted (or "missing").
    value: &'static str,
    /// Words that say what is allowed.
    allowed: &'static str,
    /// Words of the hint, when there is an obvious fix.
    hint: Option<&'static str>,
}

fn case(
    name: &'static str,
    text: String,
    key: &'static str,
    value: &'static str,
    allowed: &'static str,
    hint: Option<&'static str>,
) -> Case {
    Case {
        name,
        text,
        cmd: Cmd::Check,
        key,
        value,
        allowed,
        hint,
    }
}

fn modes(mut c: Case) -> Case {
    c.cmd = Cmd::Modes;
    c
}

/// Words of a message that are a non-finite number as Rust or TOML spell
/// it (`NaN`, `nan`, `inf`, `-inf`, `infinity`).
fn non_finite_words(s: &str) -> Vec<String> {
    s.split(|c: char| !c.is_alphanumeric())
        .filter(|w| {
            let w = w.to_lowercase();
            w == "nan" || w == "inf" || w == "infinity"
        })
        .map(str::to_lowercase)
        .collect()
}

fn catalogue() -> Vec<Case> {
    let bodies_to_search = |replacement: &str| {
        let a = BASE.find("[[body]]").unwrap();
        let b = BASE.find("[search]").unwrap();
        format!("{}{replacement}{}", &BASE[..a], &BASE[b..])
    };
    vec![
        // TOML syntax
        case("toml_unclosed_table", edit("[search]", "[search"), "body[4]", "[search", "expected `]`", None),
        case("toml_unit_after_number", edit("radius = 9.7", "radius = 9.7 mm"), "region.radius", "9.7 mm", "must be quoted", Some("write the number alone (9.7)")),
        case("toml_duplicate_key", edit("cell = 0.31\n", "cell = 0.31\ncell = 0.29\n"), "region.cell", "cell = 0.29", "duplicate key", Some("only once")),
        case("toml_duplicate_table", edit("[search]", "[boundary]\ntop = \"pec\"\n\n[search]"), "boundary", "[boundary]", "duplicate key", Some("a table may appear only once")),
        case("toml_integer_overflow", edit("max_periods = 3100", "max_periods = 31000000000000000000000"), "search.max_periods", "31000000000000000000000", "expected", Some("64 bits")),
        // Wrong types
        case("number_in_quotes", edit("radius = 9.7", "radius = \"9.7\""), "region.radius", "\"9.7\"", "expected a number", Some("without quotes")),
        case("table_as_string", format!("boundary = \"pec\"\n{}", cut("[boundary]", "[[body]]")), "boundary", "\"pec\"", "expected a table", Some("[boundary]")),
        case("wall_as_boolean", edit("outer = \"pec\"", "outer = true"), "boundary.outer", "true", "expected a string", Some("double quotes")),
        case("single_bracket_body", bodies_to_search("[body]\nshape = \"cylinder\"\nradius = 4.1\nheight = 3.3\nbase = 2.9\neps_r = 20.5\n\n"), "body", "a table", "[[body]]", Some("double brackets")),
        case("body_not_a_table", format!("body = [1, 2]\n{}", bodies_to_search("")), "body[0]", "the integer 1", "expected a table", Some("[[body]]")),
        case("date_for_frequency", edit("f_min = 4.7", "f_min = 1979-05-27"), "search.f_min", "1979-05-27", "expected a number", None),
        case("eps_as_string", edit("eps_r = 20.5", "eps_r = \"high\""), "body[1].eps_r", "\"high\"", "expected a number", Some("without quotes")),
        // Missing
        case("missing_search", BASE[..BASE.find("[search]").unwrap()].to_string(), "search", "missing", "[search]", Some("m = [..], f_min and f_max")),
        case("empty_file", String::new(), "search", "missing", "[search]", Some("f_min and f_max")),
        case("missing_f_max", edit("f_max = 9.3\n", ""), "search.f_max", "missing", "upper band edge in GHz", None),
        case("missing_body_radius", edit("radius = 4.1\n", ""), "body[1].radius", "missing", "radius in mm", None),
        case("missing_shape", edit("shape = \"sphere\"\n", ""), "body[4].shape", "missing", "\"polygon\"", Some("shape = \"sphere\"")),
        case("region_partial", edit("z_max = 13.3\n", ""), "region.z_max", "missing", "all of radius, z_min, z_max, or none", Some("leave all three out")),
        case("no_material", edit("eps_r = 3.6\n", ""), "body[3]", "neither eps_r nor conductor", "either", Some("conductor = \"pec\" for metal")),
        // Unknown keys and names
        case("unknown_key_typo", edit("max_periods = 3100", "max_period = 3100"), "search.max_period", "max_period", "unknown key", Some("did you mean `max_periods`?")),
        case("key_in_the_wrong_table", edit("cell = 0.31\n", "cell = 0.31\nf_min = 4.7\n"), "region.f_min", "f_min", "unknown key; allowed here: radius, z_min, z_max, cell, cells_per_wavelength", Some("`f_min` belongs in [search]")),
        case("unknown_top_table", edit("[search]", "[serach]"), "serach", "serach", "unknown key", Some("did you mean `search`?")),
        case("key_of_other_shape", edit("inner_radius = 1.3", "inner_radius = 1.3\nradius = 3.7"), "body[0].radius", "radius", "not a key of a ring", Some("a ring takes inner_radius, outer_radius, height, base")),
        modes(case("unknown_shape", edit("shape = \"cone\"", "shape = \"cnoe\""), "body[2].shape", "\"cnoe\"", "allowed: \"cylinder\", \"ring\", \"sphere\", \"cone\", \"polygon\"", Some("did you mean \"cone\"?"))),
        case("unknown_wall", edit("bottom = \"pec\"", "bottom = \"metal\""), "boundary.bottom", "\"metal\"", "allowed: \"pec\", \"pmc\", \"pml\"", Some("a metal wall is \"pec\"")),
        case("wall_upper_case", edit("top = \"pml\"", "top = \"PML\""), "boundary.top", "\"PML\"", "allowed: \"pec\", \"pmc\", \"pml\"", Some("lower case: \"pml\"")),
        case("unknown_conductor", edit("conductor = \"pec\"", "conductor = \"copper\""), "body[2].conductor", "\"copper\"", "allowed: \"pec\"", Some("perfect conductors")),
        // Sizes
        case("negative_sphere_radius", edit("radius = 1.1", "radius = -1.1"), "body[4].radius", "-1.1 mm", "must be positive", None),
        case("zero_height", edit("height = 3.3", "height = 0"), "body[1].height", "got 0 mm", "must be positive", None),
        case("cell_zero", edit("cell = 0.31", "cell = 0.0"), "region.cell", "got 0 mm", "must be positive", None),
        case("nan_cell", edit("cell = 0.31", "cell = nan"), "region.cell", "nan", "expected a finite number", None),
        case("infinite_base", edit("base = 9.1", "base = -inf"), "body[2].base", "-inf", "expected a finite number", None),
        case("sphere_center_nan", edit("center = 7.4", "center = nan"), "body[4].center", "nan", "expected a finite number", None),
        case("length_beyond_limit", edit("radius = 9.7", "radius = 1e300"), "region.radius", "1e300 mm", "up to ±1e6 mm", Some("millimetres")),
        // Materials
        case("eps_below_one", edit("eps_r = 3.6", "eps_r = 0.0"), "body[3].eps_r", "got 0", "must lie in 1 … 1e5", Some("conductor = \"pec\"")),
        case("eps_huge", edit("eps_r = 9.8", "eps_r = 2e6"), "body[4].eps_r", "2000000", "must lie in 1 … 1e5", None),
        case("loss_tangent_negative", edit("loss_tangent = 1e-4", "loss_tangent = -1e-4"), "body[1].loss_tangent", "-0.0001", "[0, 1)", Some("gain medium")),
        case("loss_tangent_on_conductor", edit("conductor = \"pec\"", "conductor = \"pec\"\nloss_tangent = 2e-4"), "body[2].loss_tangent", "(\"pec\")", "applies to a dielectric", Some("delete loss_tangent")),
        case("eps_and_conductor", edit("conductor = \"pec\"", "conductor = \"pec\"\neps_r = 4.4"), "body[2]", "both eps_r and conductor", "either dielectric or metal", Some("delete one")),
        // Band
        modes(case("band_swapped", edits(&[("f_min = 4.7", "f_min = 9.3"), ("f_max = 9.3", "f_max = 4.7")]), "search.f_max", "got 4.7 GHz", "must be above search.f_min = 9.3 GHz", Some("did you mean f_min = 4.7, f_max = 9.3?"))),
        case("band_empty", edit("f_max = 9.3", "f_max = 4.7"), "search.f_max", "4.7 – 4.7 GHz", "f_max must be above f_min", None),
        case("f_min_zero", edit("f_min = 4.7", "f_min = 0"), "search.f_min", "got 0 GHz", "must be positive", None),
        case("band_in_hz", edits(&[("f_min = 4.7", "f_min = 4.7e9"), ("f_max = 9.3", "f_max = 9.3e9")]), "search.f_min", "4700000000 GHz", "above the 1e7 GHz", Some("did you mean f_min = 4.7?")),
        case("band_in_mhz", edits(&[("f_min = 4.7", "f_min = 4700"), ("f_max = 9.3", "f_max = 9300")]), "search.f_max", "9300 GHz", "at least 4 are needed", Some("did you mean f_max = 9.3?")),
        case("band_too_wide", edit("f_min = 4.7", "f_min = 0.0047"), "search.f_min", "0.0047 – 9.3 GHz", "more than the 1000 allowed", Some("raise f_min to 0.0093 GHz")),
        // Orders
        case("m_negative", edit("m = [0, 1]", "m = -1"), "search.m", "order -1", "whole numbers from 0 to 64", Some("same modes as m")),
        case("m_fraction", edit("m = [0, 1]", "m = [0, 0.5]"), "search.m", "0.5", "whole numbers from 0 to 64", None),
        case("m_string", edit("m = [0, 1]", "m = \"0, 1\""), "search.m", "\"0, 1\"", "whole numbers from 0 to 64", Some("m = [0, 1]")),
        case("m_empty", edit("m = [0, 1]", "m = []"), "search.m", "the list is empty", "at least one order", Some("m = [0, 1, 2]")),
        case("m_huge", edit("m = [0, 1]", "m = [1, 100000]"), "search.m", "100000", "whole numbers from 0 to 64", None),
        case("m_bool", edit("m = [0, 1]", "m = [true]"), "search.m", "the boolean true", "whole numbers from 0 to 64", None),
        // Run length
        case("max_periods_zero", edit("max_periods = 3100", "max_periods = 0"), "search.max_periods", "got 0", "50 … 1e6", Some("default is 4000")),
        case("record_beyond_memory", edits(&[("max_periods = 3100", "max_periods = 1e6"), ("f_min = 4.7", "f_min = 0.47")]), "search.max_periods", "1000000 × 9.3 / 0.47", "above the 1e7 allowed", Some("lower max_periods to 505000 or less")),
        case("max_periods_huge", edit("max_periods = 3100", "max_periods = 1e12"), "search.max_periods", "got 1000000000000", "50 … 1e6", Some("default is 4000")),
        // Absorbers
        case("pml_cells_zero", edit("pml_cells = 12", "pml_cells = 0"), "boundary.pml_cells", "got 0", "whole number from 4 to 200", Some("default is 16")),
        case("pml_cells_huge", edit("pml_cells = 12", "pml_cells = 100000"), "boundary.pml_cells", "got 100000", "whole number from 4 to 200", Some("counts cells, not millimetres")),
        case("pml_thicker_than_region", edit("pml_cells = 12", "pml_cells = 60"), "boundary.pml_cells", "60 cells of 0.31 mm = 18.6 mm", "no thicker than the region", Some("lower boundary.pml_cells to 42 or fewer")),
        case("pml_reflection_one", edit("pml_cells = 12", "pml_cells = 12\npml_reflection = 1.5"), "boundary.pml_reflection", "got 1.5", "1e-16 … 1e-2", Some("default is 1e-8")),
        case("pml_order_out_of_range", edit("pml_cells = 12", "pml_cells = 12\npml_order = 9"), "boundary.pml_order", "got 9", "1 … 6", Some("default is 3")),
        // Region and grid
        case("region_z_swapped", edits(&[("z_min = 0.0", "z_min = 13.3"), ("z_max = 13.3", "z_max = 0.0")]), "region.z_max", "got 0 mm", "must be above region.z_min = 13.3 mm", Some("did you mean z_min = 0, z_max = 13.3?")),
        case("region_in_metres", bodies_to_search("").replace("radius = 9.7", "radius = 0.0097").replace("cell = 0.31\n", ""), "region.radius", "(0.0097 mm)", "smaller than one cell", Some("did you mean radius = 9.7?")),
        case("cell_larger_than_region", edit("cell = 0.31", "cell = 15.0"), "region.cell", "15 mm", "a cell smaller than the region", Some("20 cells per wavelength")),
        case("cell_too_coarse", edit("cell = 0.31", "cell = 2.5"), "region.cell", "2.5 mm gives only 2.85 cells per wavelength", "at least 4 are needed", Some("set region.cell to 0.355 mm")),
        case("absurd_grid", edit("cell = 0.31", "cell = 0.00001"), "region.cell", "cells of 0.00001 mm", "more than the 200000000 cells", Some("lengths are in millimetres")),
        modes(case("absurd_grid_modes", edit("cell = 0.31", "cell = 0.00001"), "region.cell", "cells of 0.00001 mm", "more than the 200000000 cells", Some("lengths are in millimetres"))),
        case("grid_beyond_memory", edit("cell = 0.31", "cell = 0.0015"), "region.cell", "cells of 0.0015 mm", "MiB a run may use under the memory cap", Some("mm would fit, or raise the cap with --max-memory")),
        case("cells_per_wavelength_huge", edit("cell = 0.31", "cells_per_wavelength = 5000"), "region.cells_per_wavelength", "got 5000", "must lie in 4 … 1000", Some("20 to 40 is usual")),
        case("cells_per_wavelength_small", edit("cell = 0.31", "cells_per_wavelength = 2.5"), "region.cells_per_wavelength", "got 2.5", "must lie in 4 … 1000", Some("20 to 40 is usual")),
        // Bodies
        case("body_thinner_than_cell", edit("outer_radius = 3.7", "outer_radius = 1.4"), "body[0].outer_radius", "0.1 mm across in r", "thinner than one cell", Some("set region.cell to 0.05 mm")),
        modes(case("body_thinner_than_cell_modes", edit("height = 2.2", "height = 0.12"), "body[2].height", "0.12 mm across in z", "thinner than one cell", Some("set region.cell to 0.06 mm"))),
        case("radius_in_metres", edit("radius = 4.1", "radius = 0.0041"), "body[1].radius", "0.0041 mm", "thinner than one cell", Some("lengths are in millimetres: did you mean radius = 4.1?")),
        case("body_outside_region", edit("center = 7.4", "center = 40.0"), "body[4]", "z from 38.9 to 41.1 mm", "lies outside the region (r ≤ 9.7 mm, 0 ≤ z ≤ 13.3 mm)", Some("move the body")),
        case("body_outside_radially", edit("[[5.3, 0.0], [7.9, 0.0], [7.9, 1.7], [5.3, 1.1]]", "[[12.3, 0.0], [14.9, 0.0], [14.9, 1.7], [12.3, 1.1]]"), "body[3]", "r from 12.3 to 14.9 mm", "lies outside the region (r ≤ 9.7 mm", Some("enlarge the region")),
        modes(case("region_all_metal", edit("[search]", "[[body]]\nshape = \"cylinder\"\nradius = 9.7\nheight = 13.3\nbase = 0.0\nconductor = \"pec\"\n\n[search]"), "body[5]", "conductors fill the whole region", "no field to solve for", Some("smaller than the region"))),
        // Cones and rings
        case("cone_both_radii_zero", edits(&[("radius_bottom = 1.9", "radius_bottom = 0"), ("radius_top = 0.7", "radius_top = 0")]), "body[2].radius_bottom", "both 0", "at least one of them positive", None),
        case("cone_negative_radius", edit("radius_top = 0.7", "radius_top = -0.7"), "body[2].radius_top", "got -0.7 mm", "must be ≥ 0", None),
        case("ring_radii_swapped", edits(&[("inner_radius = 1.3", "inner_radius = 3.7"), ("outer_radius = 3.7", "outer_radius = 1.3")]), "body[0].outer_radius", "got 1.3 mm", "must exceed inner_radius = 3.7 mm", Some("did you mean inner_radius = 1.3, outer_radius = 3.7?")),
        case("ring_inner_negative", edit("inner_radius = 1.3", "inner_radius = -1.3"), "body[0].inner_radius", "got -1.3 mm", "must be ≥ 0", None),
        // Polygons
        case("polygon_two_points", edit("[[5.3, 0.0], [7.9, 0.0], [7.9, 1.7], [5.3, 1.1]]", "[[5.3, 0.0], [7.9, 0.0]]"), "body[3].points", "got 2", "at least 3 points", Some("corners of the (r, z) profile")),
        case("polygon_self_intersecting", edit("[[5.3, 0.0], [7.9, 0.0], [7.9, 1.7], [5.3, 1.1]]", "[[5.3, 0.0], [7.9, 1.7], [7.9, 0.0], [5.3, 1.1]]"), "body[3].points", "edge from point 0 to 1 meets the edge from point 2 to 3", "crosses itself", Some("without a figure-eight")),
        case("polygon_r_negative", edit("[5.3, 1.1]]", "[-0.2, 1.1]]"), "body[3].points[3]", "r = -0.2 mm", "r ≥ 0", Some("axis part of the profile on r = 0")),
        case("polygon_point_not_pair", edit("[[5.3, 0.0], [7.9", "[[5.3, 0.0, 0.4], [7.9"), "body[3].points[0]", "an array of 3 items", "a pair [r, z] of finite numbers", None),
        case("polygon_nan", edit("[7.9, 1.7]", "[7.9, nan]"), "body[3].points[2]", "the number nan", "a pair [r, z] of finite numbers", None),
        case("polygon_no_area", edit("[[5.3, 0.0], [7.9, 0.0], [7.9, 1.7], [5.3, 1.1]]", "[[5.3, 0.0], [6.0, 0.5], [6.7, 1.0]]"), "body[3].points", "no area", "enclose", None),
        case("polygon_repeated_point", edit("[7.9, 0.0], [7.9, 1.7]", "[7.9, 0.0], [7.9, 0.0], [7.9, 1.7]"), "body[3].points[2]", "[7.9, 0]", "repeats the point before it", Some("delete one")),
    ]
}

#[test]
fn the_base_scenario_is_valid() {
    let dir = tmp_dir("base");
    let path = write_tmp(&dir, "base.toml", BASE.as_bytes());
    let (code, out, err) = lathe(&["check", &path]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("run m = 1"), "{out}");
    let s = lathe::scenario::Scenario::parse(BASE, "base.toml").unwrap();
    s.problem().unwrap();
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn every_bad_scenario_exits_2_naming_file_key_value_and_what_is_allowed() {
    let cases = catalogue();
    assert!(cases.len() >= 35, "only {} cases", cases.len());
    let mut names: Vec<&str> = cases.iter().map(|c| c.name).collect();
    names.sort_unstable();
    names.dedup();
    assert_eq!(names.len(), cases.len(), "case names must be distinct");
    let dir = tmp_dir("catalogue");
    let mut failures = Vec::new();
    for c in &cases {
        let path = write_tmp(&dir, &format!("{}.toml", c.name), c.text.as_bytes());
        let (code, out, err) = match c.cmd {
            Cmd::Check => lathe(&["check", &path]),
            Cmd::Modes => lathe(&["modes", &path, "--quiet"]),
        };
        let mut problems = Vec::new();
        if code != 2 {
            problems.push(format!("exit code {code}, expected 2"));
        }
        if err.contains("panicked") || err.contains("RUST_BACKTRACE") {
            problems.push("a panic".into());
        }
        if !out.is_empty() {
            problems.push(format!("printed on stdout: {out}"));
        }
        let named = format!("{path}: {}:", c.key);
        if !err.contains(&named) {
            problems.push(format!("does not start with file and key '{named}'"));
        }
        for (what, needle) in [("value", c.value), ("allowed", c.allowed)] {
            if !err.contains(needle) {
                problems.push(format!("lacks the {what} '{needle}'"));
            }
        }
        if let Some(h) = c.hint {
            if !(err.contains("hint:") && err.contains(h)) {
                problems.push(format!("lacks the hint '{h}'"));
            }
        }
        let written = non_finite_words(&c.text);
        for w in non_finite_words(&err) {
            if !written.contains(&w) {
                problems.push(format!("prints '{w}', which the file does not contain"));
            }
        }
        if !problems.is_empty() {
            failures.push(format!("{}: {}\n{err}", c.name, problems.join("; ")));
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n")
    );
    std::fs::remove_dir_all(dir).unwrap();
}

/// A scenario that runs in a fraction of a second: an empty can of our own
/// dimensions (TM010 at 26.7 GHz = 2.405 c / (2π · 4.3 mm), the exact
/// cylinder-cavity formula).
const QUICK: &str = "[region]\nradius = 4.3\nz_min = 0.0\nz_max = 6.1\n[search]\nm = [0]\nf_min = 24.0\nf_max = 41.0\n";

#[test]
fn command_line_mistakes_exit_2() {
    let check = |args: &[&str], needles: &[&str]| {
        let (code, _, err) = lathe(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
        for n in needles {
            assert!(err.contains(n), "{args:?}: message lacks '{n}':\n{err}");
        }
    };
    let dir = tmp_dir("command-line");
    let missing = dir.join("no-such-scenario.toml");
    let missing = missing.to_string_lossy();
    check(
        &["check", &missing],
        &[&missing, "cannot read the scenario"],
    );
    let sub = dir.join("a-directory.toml");
    std::fs::create_dir_all(&sub).unwrap();
    let sub = sub.to_string_lossy();
    check(&["check", &sub], &[&sub, "cannot read the scenario"]);
    let binary = write_tmp(&dir, "binary.toml", &[0xff, 0xfe, 0x00, 0x5b]);
    check(&["check", &binary], &[&binary, "UTF-8"]);
    let quick = write_tmp(&dir, "quick.toml", QUICK.as_bytes());
    let json = dir.join("no-such-dir").join("out.json");
    let json = json.to_string_lossy();
    check(
        &["modes", &quick, "--quiet", "--json", &json],
        &[&json, "does not exist"],
    );
    check(&["check", &quick, "--m", "0,1.5"], &["1.5", "--m"]);
    std::fs::remove_dir_all(&dir).unwrap();
}
