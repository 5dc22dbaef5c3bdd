//! Scenario files: the TOML a user writes, read into a checked
//! [`Scenario`] and turned into the solver's [`Problem`].
//!
//! Lengths are in millimetres and frequencies in GHz in the file; everything
//! is SI once read. Every mistake is reported as a [`ScenarioError`] that
//! names the file, the key (with the body index), the value found, what is
//! allowed, and a hint where one is obvious. Unknown keys are errors, with a
//! "did you mean" when a known key is close.
//!
//! `[region]`'s radius, z_min and z_max may all be left out: lathe then
//! draws the region around the bodies with a clearance of 0.2 free-space
//! wavelengths at f_min, puts absorbers on every wall not given, and takes a
//! PEC or PMC bottom to be the plane z = 0.
//!
//! ```toml
//! [region]                 # the simulated (r, z) half-plane, mm
//! radius = 10.0
//! z_min = 0.0
//! z_max = 20.0
//! cell = 0.25              # optional; else from cells_per_wavelength
//! cells_per_wavelength = 30   # optional (default 30) in the densest material at f_max
//!
//! [boundary]
//! outer = "pec"            # r = radius
//! bottom = "pec"           # "pec" | "pmc"
//! top = "pec"              # "pec" | "pmc"
//!
//! [[body]]                 # later bodies override earlier ones
//! shape = "cylinder"       # "cylinder" (radius, height, base), "ring" (inner_radius,
//!                          # outer_radius, height, base), "sphere" (radius, center),
//!                          # "cone" (radius_bottom, radius_top, height, base) or
//!                          # "polygon" (points = [[r, z], …])
//! radius = 4.0
//! height = 3.0
//! base = 0.0
//! eps_r = 9.8              # or conductor = "pec"
//!
//! [search]
//! m = [0, 1, 2]
//! f_min = 5.0              # GHz
//! f_max = 25.0
//! max_periods = 4000       # optional: longest ring-down, in periods of f_min
//! symmetry = "auto"        # optional: "auto" solves a mid-plane-symmetric isolated
//!                          # structure as two halves (PEC, PMC); "none" the whole
//! ```
//!
//! # What is refused
//!
//! Besides unknown keys, wrong types and missing keys, a scenario is
//! refused when a value is out of its range: lengths finite and within
//! ±[`MAX_LENGTH_MM`]; sizes and the cell at least [`MIN_SIZE_MM`]; f_min
//! positive; ε_r in 1 … [`MAX_EPS_R`]; loss tangents in [0, 1) and only on
//! dielectrics; the band non-empty, below [`MAX_FREQUENCY_GHZ`], no wider
//! than [`MAX_BAND_RATIO`] and its ring-down record within
//! [`MAX_RECORD_PERIODS`]; orders m whole numbers 0 … 64; a polygon 3 to
//! [`MAX_POLYGON_POINTS`] points in r ≥ 0 that enclose an area without
//! crossing themselves; no body wholly outside the region; a given cell no
//! larger than the region and resolving the shortest wavelength with at
//! least [`MIN_CELLS_PER_WAVELENGTH`] cells (cells_per_wavelength at most
//! [`MAX_CELLS_PER_WAVELENGTH`]); in a region the user drew, no absorber
//! thicker than the region. [`Scenario::grid`] and [`Scenario::solver_grid`]
//! refuse grids above the cell and memory limits before anything is
//! allocated; [`Scenario::problem`] refuses a body thinner than a cell and a
//! region that is metal throughout. Where the fix is obvious the error
//! carries a hint: swapped bounds, Hz or MHz for GHz, metres for mm, a
//! misspelt key, shape or wall.
use lathe_mesh::{fill, Body, FillOptions, Grid, Material, MeshError, Shape};
use lathe_solver::consts::C0;
use lathe_solver::{Absorber, OuterWall, Problem, RunOptions, Walls, ZWall};
use std::fmt;
use toml::{Table, Value};

/// Default cells per wavelength in the densest material at f_max. With the
/// leapfrog's time dispersion removed (see `lathe_solver::modes`), the
/// remaining error of a Yee grid is the spatial one, at most (kΔ)²/24 for
/// propagation along a grid axis: 0.18 % at 30 cells per wavelength, and far
/// less for the modes below f_max. 30 rather than 24 because of curved
/// surfaces: with the first-order average they had then, the Q of a
/// sphere's TM1 mode was off by 4.7 % at 24 and 1.3 % at 30
/// (tests/open_resonator.rs); with today's second-order one it is +0.73 %
/// at 30.
pub const DEFAULT_CELLS_PER_WAVELENGTH: f64 = 30.0;

/// Fewest cells per wavelength (in the densest material at f_max) a
/// scenario may ask for, through `cells_per_wavelength` or a given `cell`.
/// Below 4 the spatial phase error (kΔ)²/24 exceeds 10 % and the modes near
/// f_max are not represented at all (the Yee grid's cut-off is 2 cells per
/// wavelength); common practice, no source.
pub const MIN_CELLS_PER_WAVELENGTH: f64 = 4.0;

/// Most cells per wavelength a scenario may ask for: at 1000 the spatial
/// error (kΔ)²/24 is 1.6e-6, far below every other error of a run, and the
/// grid of even a one-wavelength region has a million cells.
pub const MAX_CELLS_PER_WAVELENGTH: f64 = 1000.0;

/// Largest magnitude of any length in a scenario, mm (1 km). A guard
/// against typing errors: anything near it would be refused by the grid
/// limits anyway, and keeping lengths bounded keeps every product of two
/// lengths finite.
pub const MAX_LENGTH_MM: f64 = 1e6;

/// Smallest size (a radius, a height, the cell) a scenario may give, mm
/// (1 pm): far below anything a grid resolves, and far enough above the
/// smallest double that every size stays a normal number in metres.
pub const MIN_SIZE_MM: f64 = 1e-9;

/// Highest frequency a scenario may name, GHz (10 PHz, a 30 nm
/// wavelength). Values above it are almost surely in Hz.
pub const MAX_FREQUENCY_GHZ: f64 = 1e7;

/// Widest band, as f_max / f_min. Each run rings down for `max_periods`
/// periods of f_min while sampling fast enough for f_max, so the work and
/// the recorded signal grow with the ratio; above 1000 a run of the default
/// length records over 10⁷ samples per probe.
pub const MAX_BAND_RATIO: f64 = 1000.0;

/// Largest ring-down length times band ratio, `max_periods · f_max /
/// f_min`. A run records its probes for `max_periods` periods of f_min at
/// about 4 samples per period of f_max (`lathe_solver::plan`), 8 bytes per
/// sample for each of up to 10 probe points: at 1e7 that is some 3 GiB,
/// near the memory a run may use.
pub const MAX_RECORD_PERIODS: f64 = 1e7;

/// Largest relative permittivity of a body.
pub const MAX_EPS_R: f64 = 1e5;

/// Most points of a polygon profile.
pub const MAX_POLYGON_POINTS: usize = 10_000;

/// Bytes a run needs per cell of the solver grid, for the memory check made
/// before anything is allocated: the field and E-coefficient arrays as
/// `lathe_solver::plan` counts them (6 node arrays × 1.5 × 8 bytes) plus
/// the material map of `lathe_mesh::fill` (3 components × (8 + 8 + 1)
/// bytes).
pub const BYTES_PER_CELL: f64 = 6.0 * 1.5 * 8.0 + 3.0 * 17.0;

/// Most memory a grid may need before it is refused as a typing error,
/// bytes (64 GiB), whatever the memory cap of the run.
pub const MAX_GRID_BYTES: f64 = 64.0 * 1073741824.0;

/// A mistake in a scenario, quoting the file, the key and the value.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioError {
    /// The file name as given by the caller (empty when the error comes from
    /// a method of [`Scenario`], which does not know it).
    pub file: String,
    /// The key, e.g. `body[2].radius`; empty for file-level problems.
    pub key: String,
    /// What is wrong, quoting the value.
    pub message: String,
    /// A fix, when one is obvious.
    pub hint: Option<String>,
}

impl fmt::Display for ScenarioError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let parts: Vec<&str> = [self.file.as_str(), self.key.as_str()]
            .into_iter()
            .filter(|p| !p.is_empty())
            .collect();
        for p in parts {
            write!(f, "{p}: ")?;
        }
        write!(f, "{}", self.message)?;
        if let Some(h) = &self.hint {
            write!(f, "\n  hint: {h}")?;
        }
        Ok(())
    }
}

impl std::error::Error for ScenarioError {}

/// A read and checked scenario, in SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// Outer radius, m.
    pub radius: f64,
    /// Bottom plane, m.
    pub z_min: f64,
    /// Top plane, m.
    pub z_max: f64,
    /// Grid step asked for, m (`None`: from cells per wavelength).
    pub cell: Option<f64>,
    /// Cells per wavelength in the densest material at f_max.
    pub cells_per_wavelength: f64,
    /// Walls.
    pub walls: Walls,
    /// Bodies, in file order.
    pub bodies: Vec<Body>,
    /// Azimuthal orders to search.
    pub m: Vec<u32>,
    /// Band, Hz.
    pub f_min: f64,
    /// Band, Hz.
    pub f_max: f64,
    /// Longest ring-down in periods of f_min.
    pub max_periods: Option<f64>,
    /// Solve a mid-plane-symmetric isolated structure as two halves
    /// (`search.symmetry = "auto"`, the default; "none" turns it off).
    pub use_symmetry: bool,
}

struct Reader<'a> {
    file: &'a str,
}

impl Reader<'_> {
    fn err(&self, key: &str, message: String, hint: Option<String>) -> ScenarioError {
        ScenarioError {
            file: self.file.to_string(),
            key: key.to_string(),
            message,
            hint,
        }
    }

    fn check_keys(&self, t: &Table, prefix: &str, known: &[&str]) -> Result<(), ScenarioError> {
        for k in t.keys() {
            if !known.contains(&k.as_str()) {
                let hint = home_of(k)
                    .map(|h| format!("`{k}` belongs in {h}"))
                    .or_else(|| closest(k, known).map(|c| format!("did you mean `{c}`?")));
                let key = if prefix.is_empty() {
                    clip(k)
                } else {
                    format!("{prefix}.{}", clip(k))
                };
                return Err(self.err(
                    &key,
                    format!("unknown key; allowed here: {}", known.join(", ")),
                    hint,
                ));
            }
        }
        Ok(())
    }

    fn table<'t>(&self, t: &'t Table, key: &str) -> Result<Option<&'t Table>, ScenarioError> {
        match t.get(key) {
            None => Ok(None),
            Some(Value::Table(x)) => Ok(Some(x)),
            Some(v) => Err(self.err(
                key,
                format!("expected a table `[{key}]`, found {}", describe(v)),
                Some(format!(
                    "write `[{key}]` on a line of its own, then its keys"
                )),
            )),
        }
    }

    fn number(&self, t: &Table, key: &str, full: &str) -> Result<Option<f64>, ScenarioError> {
        match t.get(key) {
            None => Ok(None),
            Some(Value::Float(x)) => {
                if x.is_finite() {
                    Ok(Some(*x))
                } else {
                    Err(self.err(
                        full,
                        format!("expected a finite number, found {}", tok(*x)),
                        None,
                    ))
                }
            }
            Some(Value::Integer(i)) => Ok(Some(*i as f64)),
            Some(v) => {
                let hint = match v {
                    Value::String(s) if s.trim().parse::<f64>().is_ok() => Some(format!(
                        "write numbers without quotes: {key} = {}",
                        s.trim()
                    )),
                    Value::String(_) => Some("write a number without quotes or units".into()),
                    _ => None,
                };
                Err(self.err(
                    full,
                    format!("expected a number, found {}", describe(v)),
                    hint,
                ))
            }
        }
    }

    /// A length in mm: a finite number within ±[`MAX_LENGTH_MM`].
    fn length(&self, t: &Table, key: &str, full: &str) -> Result<Option<f64>, ScenarioError> {
        match self.number(t, key, full)? {
            Some(v) if v.abs() > MAX_LENGTH_MM => Err(self.err(
                full,
                format!(
                    "{} mm is out of range; lengths are allowed up to ±{MAX_LENGTH_MM:e} mm (1 km)",
                    tok(v)
                ),
                Some("lengths are in millimetres".into()),
            )),
            other => Ok(other),
        }
    }

    fn required(&self, t: &Table, key: &str, full: &str, what: &str) -> Result<f64, ScenarioError> {
        self.number(t, key, full)?
            .ok_or_else(|| self.err(full, format!("missing (the {what})"), None))
    }

    fn required_length(
        &self,
        t: &Table,
        key: &str,
        full: &str,
        what: &str,
    ) -> Result<f64, ScenarioError> {
        self.length(t, key, full)?
            .ok_or_else(|| self.err(full, format!("missing (the {what})"), None))
    }

    fn positive(&self, v: f64, full: &str, unit: &str) -> Result<f64, ScenarioError> {
        if v > 0.0 && (unit != "mm" || v >= MIN_SIZE_MM) {
            Ok(v)
        } else if v > 0.0 {
            Err(self.err(
                full,
                format!(
                    "{} mm is too small; sizes must be at least {MIN_SIZE_MM:e} mm",
                    tok(v)
                ),
                Some("lengths are in millimetres".into()),
            ))
        } else {
            Err(self.err(
                full,
                format!("must be positive, got {} {unit}", tok(v)),
                None,
            ))
        }
    }

    fn string<'t>(
        &self,
        t: &'t Table,
        key: &str,
        full: &str,
    ) -> Result<Option<&'t str>, ScenarioError> {
        match t.get(key) {
            None => Ok(None),
            Some(Value::String(s)) => Ok(Some(s.as_str())),
            Some(v) => Err(self.err(
                full,
                format!("expected a string, found {}", describe(v)),
                Some("write text in double quotes, e.g. \"pec\"".into()),
            )),
        }
    }
}

/// A float as TOML spells it (`nan`, `inf`, `-inf`), so that a message
/// quotes what the user wrote.
fn tok(x: f64) -> String {
    if x.is_nan() {
        "nan".into()
    } else if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.into()
    } else if x != 0.0 && (x.abs() >= 1e16 || x.abs() < 1e-5) {
        // 1e300 rather than 301 digits.
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// A computed value (a length converted back to mm, a ratio) rounded to ten
/// significant digits, so that 9.7e-3 m / 1e-3 prints as 9.7.
fn sig(x: f64) -> String {
    if !x.is_finite() || x == 0.0 {
        return tok(x);
    }
    let rounded: f64 = format!("{x:.9e}").parse().unwrap_or(x);
    tok(rounded)
}

/// A computed size for a message, to four significant digits.
fn approx(x: f64) -> String {
    if !x.is_finite() || x == 0.0 {
        return tok(x);
    }
    tok(format!("{x:.3e}").parse().unwrap_or(x))
}

/// A cell count for a message.
fn count(n: f64) -> String {
    if !n.is_finite() {
        "over 1e308".into()
    } else if n < 1e6 {
        format!("{n}")
    } else {
        format!("{n:.4e}")
    }
}

/// A suggested upper limit: `x` rounded down to three significant digits.
fn below(x: f64) -> String {
    if !x.is_finite() || x <= 0.0 {
        return tok(x);
    }
    // Round-off first (0.1 − 0.05 is 0.04999…), then down.
    let x: f64 = format!("{x:.9e}").parse().unwrap_or(x);
    let scale = 10f64.powi(x.log10().floor() as i32 - 2);
    let down = (x * (1.0 + 1e-12) / scale).floor() * scale;
    if down.is_finite() && down > 0.0 {
        sig(down)
    } else {
        sig(x)
    }
}

/// At most 60 characters of something the user wrote.
fn clip(s: &str) -> String {
    let mut out: String = s.chars().take(60).collect();
    if s.chars().nth(60).is_some() {
        out.push('…');
    }
    out
}

fn describe(v: &Value) -> String {
    match v {
        Value::String(s) => format!("the string \"{}\"", clip(s)),
        Value::Integer(i) => format!("the integer {i}"),
        Value::Float(x) => format!("the number {}", tok(*x)),
        Value::Boolean(b) => format!("the boolean {b}"),
        Value::Datetime(d) => format!("the date {d}"),
        Value::Array(a) => format!("an array of {} items", a.len()),
        Value::Table(_) => "a table".into(),
    }
}

/// Levenshtein distance, for "did you mean".
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1];
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != *cb);
            cur.push(sub.min(prev[j + 1] + 1).min(cur[j] + 1));
        }
        prev = cur;
    }
    prev[b.len()]
}

/// The known word closest to `word`, if it is close enough to be meant.
fn closest<'k>(word: &str, known: &[&'k str]) -> Option<&'k str> {
    // Long unknown words (pasted text, random bytes) match nothing: this
    // also bounds the work of the distance.
    if word.chars().count() > 64 {
        return None;
    }
    let lower = word.to_lowercase();
    known
        .iter()
        .map(|c| (edit_distance(&lower, c), *c))
        .min()
        .filter(|(d, _)| *d <= 3.max(word.chars().count() / 3))
        .map(|(_, c)| c)
}

/// The table a key belongs in, for a key written in the wrong one.
fn home_of(key: &str) -> Option<&'static str> {
    const HOMES: [(&str, &[&str]); 4] = [
        (
            "[region]",
            &["z_min", "z_max", "cell", "cells_per_wavelength"],
        ),
        (
            "[boundary]",
            &[
                "outer",
                "bottom",
                "top",
                "pml_cells",
                "pml_order",
                "pml_reflection",
            ],
        ),
        (
            "[search]",
            &["m", "f_min", "f_max", "max_periods", "symmetry"],
        ),
        (
            "a [[body]]",
            &[
                "shape",
                "eps_r",
                "loss_tangent",
                "conductor",
                "height",
                "base",
                "inner_radius",
                "outer_radius",
                "center",
                "radius_bottom",
                "radius_top",
                "points",
            ],
        ),
    ];
    HOMES
        .iter()
        .find(|(_, keys)| keys.contains(&key))
        .map(|(home, _)| *home)
}

/// A TOML syntax error as a [`ScenarioError`]: the line and column, the
/// offending line (clipped), the key or table it is in, and a hint for the
/// common slips.
fn toml_error(rd: &Reader, text: &str, e: &toml::de::Error) -> ScenarioError {
    let what = e.message().trim().to_string();
    // TOML's own message, clipped (it may quote a whole long line).
    let what: String = {
        let mut w: String = what.chars().take(160).collect();
        if what.chars().nth(160).is_some() {
            w.push('…');
        }
        w
    };
    let Some(span) = e.span() else {
        return rd.err("", format!("not valid TOML: {what}"), None);
    };
    let bytes = text.as_bytes();
    let start = span.start.min(bytes.len());
    let line_start = bytes[..start]
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |p| p + 1);
    let line_end = bytes[start..]
        .iter()
        .position(|&b| b == b'\n')
        .map_or(bytes.len(), |p| start + p);
    let line_no = bytes[..start].iter().filter(|&&b| b == b'\n').count() + 1;
    let line = String::from_utf8_lossy(&bytes[line_start..line_end]);
    let col = String::from_utf8_lossy(&bytes[line_start..start])
        .chars()
        .count()
        + 1;
    let shown: String = {
        let l = line.trim_end();
        let mut s: String = l.chars().take(80).collect();
        if l.chars().nth(80).is_some() {
            s.push('…');
        }
        s
    };

    // The table the line belongs to: the last header above it, with
    // `[[body]]` counted so that the key reads body[k].
    let mut table = String::new();
    let mut body_count = 0usize;
    let bare = |s: &str| {
        !s.is_empty()
            && s.chars()
                .all(|c| c.is_ascii_alphanumeric() || matches!(c, '_' | '-' | '.'))
    };
    let header = |l: &str| -> Option<(bool, String)> {
        let l = l.split('#').next().unwrap_or("").trim();
        let (array, inner) =
            if let Some(x) = l.strip_prefix("[[").and_then(|x| x.strip_suffix("]]")) {
                (true, x)
            } else {
                (
                    false,
                    l.strip_prefix('[').and_then(|x| x.strip_suffix(']'))?,
                )
            };
        let name = inner.trim();
        bare(name).then(|| (array, name.to_string()))
    };
    let here = header(&line);
    for l in String::from_utf8_lossy(&bytes[..line_start]).lines() {
        if let Some((array, name)) = header(l) {
            table = if array && name == "body" {
                body_count += 1;
                format!("body[{}]", body_count - 1)
            } else {
                name
            };
        }
    }
    let key = match &here {
        Some((true, name)) if name == "body" => format!("body[{body_count}]"),
        Some((_, name)) => clip(name),
        None => match line.split_once('=') {
            Some((k, _)) if bare(k.trim()) => {
                if table.is_empty() {
                    k.trim().to_string()
                } else {
                    format!("{table}.{}", k.trim())
                }
            }
            _ => clip(&table),
        },
    };
    let value = line.split_once('=').map_or("", |(_, v)| v.trim());
    let hint = if what.contains("duplicate key") {
        Some(if here.as_ref().is_some_and(|h| h.1 == "body") {
            "a table may appear only once; write [[body]] (double brackets) for each body".into()
        } else if here.is_some() {
            "a table may appear only once; merge the two".into()
        } else {
            "a key may appear only once in a table; delete one of the two".into()
        })
    } else if what.contains("must be quoted") || what.contains("literal string") {
        let first = value.split_whitespace().next().unwrap_or("");
        if first.parse::<f64>().is_ok() {
            Some(format!(
                "write the number alone ({first}): lengths are in mm and frequencies in GHz"
            ))
        } else {
            Some("write text in double quotes, e.g. shape = \"cylinder\"".into())
        }
    } else if what.contains("i128") || what.contains("i64") {
        Some("whole numbers must fit in 64 bits".into())
    } else {
        None
    };
    rd.err(
        &key,
        format!("not valid TOML at line {line_no}, column {col}: {what}\n    {line_no} | {shown}"),
        hint,
    )
}

const MM: f64 = 1e-3;
const GHZ: f64 = 1e9;

impl Scenario {
    /// Reads a scenario from TOML text; `file` names it in messages.
    pub fn parse(text: &str, file: &str) -> Result<Scenario, ScenarioError> {
        let rd = Reader { file };
        let root: Table = text
            .parse::<Table>()
            .map_err(|e| toml_error(&rd, text, &e))?;
        rd.check_keys(&root, "", &["region", "boundary", "body", "search"])?;

        // [region] (optional: chosen from the bodies and the band when absent)
        let empty = Table::new();
        let region = rd.table(&root, "region")?.unwrap_or(&empty);
        rd.check_keys(
            region,
            "region",
            &["radius", "z_min", "z_max", "cell", "cells_per_wavelength"],
        )?;
        let extent = {
            let r = rd.length(region, "radius", "region.radius")?;
            let lo = rd.length(region, "z_min", "region.z_min")?;
            let hi = rd.length(region, "z_max", "region.z_max")?;
            match (r, lo, hi) {
                (Some(r), Some(lo), Some(hi)) => {
                    let r = rd.positive(r, "region.radius", "mm")?;
                    if hi <= lo {
                        return Err(rd.err(
                            "region.z_max",
                            format!(
                                "must be above region.z_min = {} mm, got {} mm",
                                tok(lo),
                                tok(hi)
                            ),
                            (hi < lo).then(|| {
                                format!("did you mean z_min = {}, z_max = {}?", tok(hi), tok(lo))
                            }),
                        ));
                    }
                    Some((r, lo, hi))
                }
                (None, None, None) => None,
                _ => {
                    let missing: Vec<&str> = [("radius", r), ("z_min", lo), ("z_max", hi)]
                        .iter()
                        .filter(|x| x.1.is_none())
                        .map(|x| x.0)
                        .collect();
                    return Err(rd.err(
                        &format!("region.{}", missing[0]),
                        format!("missing; give all of radius, z_min, z_max, or none of them (missing: {})", missing.join(", ")),
                        Some("leave all three out to let lathe choose the region from the bodies and the band".into()),
                    ));
                }
            }
        };
        let cell = match rd.length(region, "cell", "region.cell")? {
            Some(c) => Some(rd.positive(c, "region.cell", "mm")? * MM),
            None => None,
        };
        let cpw = match rd.number(
            region,
            "cells_per_wavelength",
            "region.cells_per_wavelength",
        )? {
            Some(c) if (MIN_CELLS_PER_WAVELENGTH..=MAX_CELLS_PER_WAVELENGTH).contains(&c) => c,
            Some(c) => {
                let (lo, hi) = (MIN_CELLS_PER_WAVELENGTH, MAX_CELLS_PER_WAVELENGTH);
                return Err(rd.err(
                    "region.cells_per_wavelength",
                    format!("must lie in {lo} … {hi}, got {}", tok(c)),
                    Some("20 to 40 is usual; accuracy grows as its square".into()),
                ));
            }
            None => DEFAULT_CELLS_PER_WAVELENGTH,
        };

        // [boundary]
        // Walls default to PEC in a region the user drew, to absorbers in one
        // lathe chooses.
        let mut names = if extent.is_some() {
            ["pec", "pec", "pec"]
        } else {
            ["pml", "pml", "pml"]
        }; // outer, bottom, top
        let mut pml = (16usize, 3.0f64, 1e-8f64);
        let mut pml_cells_given = false;
        if let Some(b) = rd.table(&root, "boundary")? {
            rd.check_keys(
                b,
                "boundary",
                &[
                    "outer",
                    "bottom",
                    "top",
                    "pml_cells",
                    "pml_order",
                    "pml_reflection",
                ],
            )?;
            for (k, key) in ["outer", "bottom", "top"].iter().enumerate() {
                let full = format!("boundary.{key}");
                let allowed: &[&str] = if k == 0 {
                    &["pec", "pml"]
                } else {
                    &["pec", "pmc", "pml"]
                };
                if let Some(v) = rd.string(b, key, &full)? {
                    match allowed.iter().find(|a| **a == v) {
                        Some(a) => names[k] = a,
                        None => {
                            let list: Vec<String> =
                                allowed.iter().map(|a| format!("\"{a}\"")).collect();
                            let lower = v.trim().to_lowercase();
                            let hint = if allowed.contains(&lower.as_str()) {
                                Some(format!("write it in lower case: \"{lower}\""))
                            } else if k == 0 && lower == "pmc" {
                                Some(
                                    "a PMC outer wall is not offered; use \"pec\" or \"pml\""
                                        .into(),
                                )
                            } else if ["metal", "conductor", "copper", "wall"]
                                .contains(&lower.as_str())
                            {
                                Some("a metal wall is \"pec\"".into())
                            } else if ["open", "absorber", "abc", "radiation", "free"]
                                .contains(&lower.as_str())
                            {
                                Some("an absorbing (open) wall is \"pml\"".into())
                            } else {
                                closest(&lower, allowed).map(|c| format!("did you mean \"{c}\"?"))
                            };
                            return Err(rd.err(
                                &full,
                                format!(
                                    "unknown wall \"{}\"; allowed: {}",
                                    clip(v),
                                    list.join(", ")
                                ),
                                hint,
                            ));
                        }
                    }
                }
            }
            if let Some(c) = rd.number(b, "pml_cells", "boundary.pml_cells")? {
                if c.fract() != 0.0 || !(4.0..=200.0).contains(&c) {
                    return Err(rd.err(
                        "boundary.pml_cells",
                        format!("must be a whole number from 4 to 200, got {}", tok(c)),
                        Some("it counts cells, not millimetres; the default is 16".into()),
                    ));
                }
                pml.0 = c as usize;
                pml_cells_given = true;
            }
            if let Some(p) = rd.number(b, "pml_order", "boundary.pml_order")? {
                if !(1.0..=6.0).contains(&p) {
                    return Err(rd.err(
                        "boundary.pml_order",
                        format!("must lie in 1 … 6, got {}", tok(p)),
                        Some("the default is 3".into()),
                    ));
                }
                pml.1 = p;
            }
            if let Some(r) = rd.number(b, "pml_reflection", "boundary.pml_reflection")? {
                if !(1e-16..=1e-2).contains(&r) {
                    return Err(rd.err(
                        "boundary.pml_reflection",
                        format!("must lie in 1e-16 … 1e-2, got {}", tok(r)),
                        Some(
                            "it is the design reflection at normal incidence, a fraction; the default is 1e-8"
                                .into(),
                        ),
                    ));
                }
                pml.2 = r;
            }
        }

        // [[body]]
        let mut bodies = Vec::new();
        match root.get("body") {
            None => {}
            Some(Value::Array(items)) => {
                for (k, item) in items.iter().enumerate() {
                    let Value::Table(t) = item else {
                        return Err(rd.err(
                            &format!("body[{k}]"),
                            format!("expected a table, found {}", describe(item)),
                            Some("write each body as a [[body]] table".into()),
                        ));
                    };
                    bodies.push(read_body(&rd, t, k)?);
                }
            }
            Some(v) => {
                return Err(rd.err(
                    "body",
                    format!(
                        "expected an array of tables [[body]], found {}",
                        describe(v)
                    ),
                    Some("write [[body]] (double brackets) for each body".into()),
                ))
            }
        }

        // [search]
        let search = rd.table(&root, "search")?.ok_or_else(|| {
            rd.err(
                "search",
                "missing table [search]".into(),
                Some("add [search] with m = [..], f_min and f_max (GHz)".into()),
            )
        })?;
        rd.check_keys(
            search,
            "search",
            &["m", "f_min", "f_max", "max_periods", "symmetry"],
        )?;
        let use_symmetry = match rd.string(search, "symmetry", "search.symmetry")? {
            None | Some("auto") => true,
            Some("none") => false,
            Some(other) => {
                return Err(rd.err(
                    "search.symmetry",
                    format!(
                        "unknown value \"{}\"; allowed: \"auto\", \"none\"",
                        clip(other)
                    ),
                    closest(other, &["auto", "none"]).map(|c| format!("did you mean \"{c}\"?")),
                ))
            }
        };
        let m = match search.get("m") {
            None => vec![0, 1, 2],
            Some(v) => read_orders(&rd, v, "search.m")?,
        };
        let f_min = rd.required(search, "f_min", "search.f_min", "lower band edge in GHz")?;
        let f_max = rd.required(search, "f_max", "search.f_max", "upper band edge in GHz")?;
        for (key, v) in [("f_min", f_min), ("f_max", f_max)] {
            if v > MAX_FREQUENCY_GHZ {
                return Err(rd.err(
                    &format!("search.{key}"),
                    format!(
                        "{} GHz is above the {MAX_FREQUENCY_GHZ:e} GHz lathe accepts; frequencies are in GHz",
                        tok(v)
                    ),
                    (v >= 1e8).then(|| {
                        format!("{} looks like Hz: did you mean {key} = {}?", tok(v), sig(v / GHZ))
                    }),
                ));
            }
        }
        let f_min = rd.positive(f_min, "search.f_min", "GHz")?;
        if f_max < f_min {
            return Err(rd.err(
                "search.f_max",
                format!(
                    "must be above search.f_min = {} GHz, got {} GHz",
                    tok(f_min),
                    tok(f_max)
                ),
                (f_max > 0.0).then(|| {
                    format!(
                        "did you mean f_min = {}, f_max = {}?",
                        tok(f_max),
                        tok(f_min)
                    )
                }),
            ));
        }
        if f_max == f_min {
            return Err(rd.err(
                "search.f_max",
                format!(
                    "the band {} – {} GHz is empty; f_max must be above f_min",
                    tok(f_min),
                    tok(f_max)
                ),
                None,
            ));
        }
        if f_max > MAX_BAND_RATIO * f_min {
            let ratio = f_max / f_min;
            return Err(rd.err(
                "search.f_min",
                format!(
                    "the band {} – {} GHz spans a ratio f_max / f_min {}, more than the {MAX_BAND_RATIO} allowed (each run rings down for max_periods periods of f_min at the time step f_max needs)",
                    tok(f_min),
                    tok(f_max),
                    if ratio.is_finite() {
                        format!("of {}", ratio.round())
                    } else {
                        "beyond 1e308".to_string()
                    }
                ),
                Some(format!(
                    "raise f_min to {} GHz or more, or search the band in parts",
                    sig(f_max / MAX_BAND_RATIO)
                )),
            ));
        }
        let max_periods = match rd.number(search, "max_periods", "search.max_periods")? {
            Some(p) if (50.0..=1e6).contains(&p) => Some(p),
            Some(p) => {
                return Err(rd.err(
                    "search.max_periods",
                    format!("must lie in 50 … 1e6 (periods of f_min), got {}", tok(p)),
                    Some("the default is 4000".into()),
                ))
            }
            None => None,
        };
        let periods = max_periods.unwrap_or(RunOptions::default().max_periods);
        if periods * (f_max / f_min) > MAX_RECORD_PERIODS {
            return Err(rd.err(
                if max_periods.is_some() {
                    "search.max_periods"
                } else {
                    "search.f_min"
                },
                format!(
                    "max_periods × f_max / f_min = {} × {} / {} = {} is above the {MAX_RECORD_PERIODS:e} allowed: the recorded ring-down would not fit in memory",
                    tok(periods),
                    tok(f_max),
                    tok(f_min),
                    approx(periods * f_max / f_min)
                ),
                Some(format!(
                    "lower max_periods to {} or less, or narrow the band",
                    below(MAX_RECORD_PERIODS * f_min / f_max)
                )),
            ));
        }
        let (radius, z_min, z_max) = match extent {
            Some(e) => e,
            None => {
                if bodies.is_empty() {
                    return Err(rd.err(
                        "region",
                        "missing, and there is no body to choose it from".into(),
                        Some("add [region] with radius, z_min, z_max (mm)".into()),
                    ));
                }
                // Clearance from the bodies to an absorber: 0.2 free-space
                // wavelengths at f_min (the absorber tests of
                // tests/open_resonator.rs move Q by < 0.5 % from ~0.14 λ0 on).
                let clear = 0.2 * C0 / (f_min * GHZ) / MM;
                let (mut r1, mut lo, mut hi) = (0.0f64, f64::INFINITY, f64::NEG_INFINITY);
                for b in &bodies {
                    let (_, br1, bz0, bz1) = b.shape.bounds();
                    r1 = r1.max(br1 / MM);
                    lo = lo.min(bz0 / MM);
                    hi = hi.max(bz1 / MM);
                }
                // A PEC or PMC bottom is the plane z = 0 (a ground plane or a
                // symmetry plane); a PEC or PMC top sits on the highest face.
                let z_lo = if names[1] == "pml" { lo - clear } else { 0.0 };
                let z_hi = if names[2] == "pml" { hi + clear } else { hi };
                if z_hi <= z_lo {
                    return Err(rd.err(
                        "region",
                        format!(
                            "left out, and the bodies lie wholly below the bottom plane z = 0 (highest face at z = {} mm)",
                            sig(hi)
                        ),
                        Some("a PEC or PMC bottom of a region lathe draws is the plane z = 0: move the bodies above it, or give [region]".into()),
                    ));
                }
                (r1 + clear, z_lo, z_hi)
            }
        };
        for (k, b) in bodies.iter().enumerate() {
            let (r0, r1, b0, b1) = b.shape.bounds();
            if r0 >= radius * MM || b0 >= z_max * MM || b1 <= z_min * MM {
                return Err(rd.err(
                    &format!("body[{k}]"),
                    format!(
                        "the {} (r from {} to {} mm, z from {} to {} mm) lies outside the region (r ≤ {} mm, {} ≤ z ≤ {} mm)",
                        b.shape.kind(),
                        sig(r0 / MM),
                        sig(r1 / MM),
                        sig(b0 / MM),
                        sig(b1 / MM),
                        tok(radius),
                        tok(z_min),
                        tok(z_max)
                    ),
                    Some("move the body, or enlarge the region (region.radius, region.z_min, region.z_max)".into()),
                ));
            }
        }
        let absorber = Absorber {
            cells: pml.0,
            order: pml.1,
            reflection: pml.2,
            ..Absorber::default_for(f_min * GHZ)
        };
        let zwall = |n: &str| match n {
            "pmc" => ZWall::Pmc,
            "pml" => ZWall::Pml(absorber),
            _ => ZWall::Pec,
        };
        let walls = Walls {
            outer: if names[0] == "pml" {
                OuterWall::Pml(absorber)
            } else {
                OuterWall::Pec
            },
            bottom: zwall(names[1]),
            top: zwall(names[2]),
        };
        let s = Scenario {
            radius: radius * MM,
            z_min: z_min * MM,
            z_max: z_max * MM,
            cell,
            cells_per_wavelength: cpw,
            walls,
            bodies,
            m,
            f_min: f_min * GHZ,
            f_max: f_max * GHZ,
            max_periods,
            use_symmetry,
        };
        s.check_cell(&rd, extent.is_some())?;
        if extent.is_some() {
            s.check_absorbers(&rd, &names, pml_cells_given)?;
        }
        Ok(s)
    }

    /// The wavelength in the densest material at f_max, m.
    fn shortest_wavelength(&self) -> f64 {
        C0 / (self.f_max * self.max_eps_r().sqrt())
    }

    /// The cell fits the region and resolves the shortest wavelength.
    fn check_cell(&self, rd: &Reader, drawn: bool) -> Result<(), ScenarioError> {
        let h = self.cell_size();
        let height = self.z_max - self.z_min;
        let lambda = self.shortest_wavelength();
        for (key, size, what) in [
            ("radius", self.radius, "radius"),
            ("z_max", height, "height z_max − z_min"),
        ] {
            if h <= size {
                continue;
            }
            return Err(match self.cell {
                Some(c) => rd.err(
                    "region.cell",
                    format!(
                        "{} mm is larger than the region's {what} ({} mm); allowed: a cell smaller than the region",
                        sig(c / MM),
                        sig(size / MM)
                    ),
                    Some(format!(
                        "a cell of {} mm gives 20 cells per wavelength in the densest material at f_max",
                        below(lambda / 20.0 / MM)
                    )),
                ),
                None => rd.err(
                    &if drawn {
                        format!("region.{key}")
                    } else {
                        "region".to_string()
                    },
                    format!(
                        "the region's {what} ({} mm) is smaller than one cell ({} mm, λ/{} in the densest material at f_max)",
                        sig(size / MM),
                        approx(h / MM),
                        sig(self.cells_per_wavelength)
                    ),
                    (drawn && size * 1e3 >= 4.0 * h).then(|| {
                        let mm = |x: f64| sig(x / MM * 1e3);
                        if key == "radius" {
                            format!("lengths are in millimetres: did you mean radius = {}?", mm(self.radius))
                        } else {
                            format!(
                                "lengths are in millimetres: did you mean z_min = {}, z_max = {}?",
                                mm(self.z_min),
                                mm(self.z_max)
                            )
                        }
                    }),
                ),
            });
        }
        if let Some(c) = self.cell {
            let cpw = lambda / c;
            if cpw < MIN_CELLS_PER_WAVELENGTH {
                let f = self.f_max / GHZ;
                let hint = if f >= 1000.0 {
                    format!(
                        "frequencies are in GHz: f_max = {} GHz is {} THz; did you mean f_max = {}?",
                        sig(f),
                        sig(f / 1000.0),
                        sig(f / 1000.0)
                    )
                } else {
                    format!(
                        "set region.cell to {} mm or less (20 cells per wavelength), or leave it out to use cells_per_wavelength",
                        below(lambda / 20.0 / MM)
                    )
                };
                return Err(rd.err(
                    if f >= 1000.0 {
                        "search.f_max"
                    } else {
                        "region.cell"
                    },
                    format!(
                        "{}{} mm gives only {:.2} cells per wavelength in the densest material (ε_r {}) at f_max = {} GHz; at least {MIN_CELLS_PER_WAVELENGTH} are needed, 20 or more recommended",
                        if f >= 1000.0 {
                            format!("{} GHz: region.cell = ", sig(f))
                        } else {
                            String::new()
                        },
                        sig(c / MM),
                        cpw,
                        sig(self.max_eps_r()),
                        sig(f)
                    ),
                    Some(hint),
                ));
            }
        }
        Ok(())
    }

    /// In a region the user drew, no absorber is thicker than the region is
    /// deep in its direction (a sign of a cell count mistaken for mm, or of
    /// a region drawn too small).
    fn check_absorbers(
        &self,
        rd: &Reader,
        names: &[&str; 3],
        given: bool,
    ) -> Result<(), ScenarioError> {
        let h = self.cell_size();
        let (o, b, t) = self.absorber_cells();
        let height = self.z_max - self.z_min;
        for (k, cells, size, what) in [
            (0, o, self.radius, "radius"),
            (1, b, height, "height"),
            (2, t, height, "height"),
        ] {
            if cells == 0 || names[k] != "pml" {
                continue;
            }
            let thick = cells as f64 * h;
            if thick <= size {
                continue;
            }
            let wall = ["outer", "bottom", "top"][k];
            let fit = (size / h).floor();
            let hint = if fit >= 4.0 {
                format!("lower boundary.pml_cells to {fit} or fewer, or enlarge the region")
            } else {
                "enlarge the region, or use a finer region.cell".into()
            };
            return Err(rd.err(
                if given {
                    "boundary.pml_cells"
                } else {
                    ["boundary.outer", "boundary.bottom", "boundary.top"][k]
                },
                format!(
                    "the {wall} absorber ({cells} cells of {} mm = {} mm) is thicker than the region's {what} ({} mm); allowed: an absorber no thicker than the region",
                    approx(h / MM),
                    approx(thick / MM),
                    sig(size / MM)
                ),
                Some(hint),
            ));
        }
        Ok(())
    }

    /// Largest ε_r of the dielectric bodies (1 for none).
    pub fn max_eps_r(&self) -> f64 {
        self.bodies
            .iter()
            .filter_map(|b| match b.material {
                Material::Dielectric { eps_r, .. } => Some(eps_r),
                Material::Pec => None,
            })
            .fold(1.0, f64::max)
    }

    /// The grid step: `cell` if given, else the wavelength in the densest
    /// material at f_max over `cells_per_wavelength`. Metres.
    pub fn cell_size(&self) -> f64 {
        self.cell
            .unwrap_or_else(|| self.shortest_wavelength() / self.cells_per_wavelength)
    }

    /// A grid too large to run: the key that made it so, and a hint.
    fn too_large(&self, nr: f64, nz: f64, why: String) -> ScenarioError {
        let f = self.f_max / GHZ;
        let (key, hint) = if let Some(c) = self.cell {
            (
                "region.cell",
                format!(
                    "region.cell = {} mm: lengths are in millimetres; a cell of {} mm gives 20 cells per wavelength in the densest material at f_max",
                    sig(c / MM),
                    below(self.shortest_wavelength() / 20.0 / MM)
                ),
            )
        } else if f >= 1000.0 {
            (
                "search.f_max",
                format!(
                    "frequencies are in GHz: f_max = {} GHz is {} THz; did you mean f_max = {}?",
                    sig(f),
                    sig(f / 1000.0),
                    sig(f / 1000.0)
                ),
            )
        } else if self.cells_per_wavelength > 2.0 * DEFAULT_CELLS_PER_WAVELENGTH {
            (
                "region.cells_per_wavelength",
                format!(
                    "lower region.cells_per_wavelength ({} now; 20 to 40 is usual)",
                    sig(self.cells_per_wavelength)
                ),
            )
        } else {
            (
                "region.cell",
                format!(
                    "the region is r ≤ {} mm, {} ≤ z ≤ {} mm (lengths are in millimetres); give a larger region.cell or a smaller region",
                    sig(self.radius / MM),
                    sig(self.z_min / MM),
                    sig(self.z_max / MM)
                ),
            )
        };
        ScenarioError {
            file: String::new(),
            key: key.into(),
            message: format!(
                "the grid would be {} × {} = {} cells of {} mm, {why}",
                count(nr),
                count(nz),
                count(nr * nz),
                approx(self.cell_size() / MM)
            ),
            hint: Some(hint),
        }
    }

    /// The grid of the region the user described (without absorbers).
    pub fn grid(&self) -> Result<Grid, ScenarioError> {
        let h = self.cell_size();
        Grid::new(self.radius, self.z_min, self.z_max, h).map_err(|e| match e {
            MeshError::TooManyCells { limit, .. } => self.too_large(
                (self.radius / h).ceil(),
                ((self.z_max - self.z_min) / h).ceil(),
                format!("more than the {limit} cells a grid may have"),
            ),
            other => ScenarioError {
                file: String::new(),
                key: "region".into(),
                message: other.to_string(),
                hint: None,
            },
        })
    }

    /// Absorber cells added beyond the region: (outer, bottom, top).
    pub fn absorber_cells(&self) -> (usize, usize, usize) {
        let z = |w: ZWall| w.absorber().map_or(0, |a| a.cells);
        (
            self.walls.outer.absorber().map_or(0, |a| a.cells),
            z(self.walls.bottom),
            z(self.walls.top),
        )
    }

    /// The grid the solver steps: the region plus its absorbers' cells, with
    /// the same steps. Refused, before anything is allocated, when a run on
    /// it would need more than [`MAX_GRID_BYTES`] ([`BYTES_PER_CELL`] per
    /// cell) — a guard against typing errors; the memory cap a study runs
    /// under (`--max-memory`, `lathe::study::check_size`) is checked
    /// separately.
    pub fn solver_grid(&self) -> Result<Grid, ScenarioError> {
        let g = self.grid()?;
        let (o, b, t) = self.absorber_cells();
        let grid = Grid {
            nr: g.nr + o,
            nz: g.nz + b + t,
            z0: g.z0 - b as f64 * g.dz,
            ..g
        };
        let cap = MAX_GRID_BYTES;
        let need = grid.nr as f64 * grid.nz as f64 * BYTES_PER_CELL;
        if need > cap {
            return Err(self.too_large(
                grid.nr as f64,
                grid.nz as f64,
                format!(
                    "absorbers included; a run would need about {:.1} GiB, more than the {:.0} GiB lathe accepts for any grid",
                    need / 1073741824.0,
                    cap / 1073741824.0
                ),
            ));
        }
        Ok(grid)
    }

    /// The bodies as the solver sees them: a body that reaches an absorbing
    /// edge of the region continues through the absorber (it is taken to be
    /// infinite in that direction, like a ground plane or a substrate).
    pub fn solver_bodies(&self, grid: &Grid) -> Vec<Body> {
        let tol = 1e-9 * (self.radius + (self.z_max - self.z_min));
        let (o, b, t) = self.absorber_cells();
        self.bodies
            .iter()
            .map(|body| {
                let (_, r1, z0, z1) = body.shape.bounds();
                let r_new = if o > 0 && r1 >= self.radius - tol {
                    grid.radius()
                } else {
                    r1
                };
                let lo = if b > 0 && z0 <= self.z_min + tol {
                    grid.z0
                } else {
                    z0
                };
                let hi = if t > 0 && z1 >= self.z_max - tol {
                    grid.z_top()
                } else {
                    z1
                };
                let shape = match body.shape {
                    Shape::Cylinder { .. } => Shape::Cylinder {
                        radius: r_new,
                        height: hi - lo,
                        base: lo,
                    },
                    Shape::Ring { inner_radius, .. } => Shape::Ring {
                        inner_radius,
                        outer_radius: r_new,
                        height: hi - lo,
                        base: lo,
                    },
                    ref other => other.clone(),
                };
                Body {
                    shape,
                    material: body.material,
                }
            })
            .collect()
    }

    /// Warnings about the plan (resolution of bodies), for the plan printout.
    pub fn warnings(&self, grid: &Grid) -> Vec<String> {
        let mut out = Vec::new();
        let cpw = C0 / (self.f_max * self.max_eps_r().sqrt()) / grid.dr.max(grid.dz);
        if cpw < 15.0 {
            out.push(format!(
                "only {cpw:.1} cells per wavelength in the densest material at f_max; 20 or more is recommended"
            ));
        }
        for (k, b) in self.bodies.iter().enumerate() {
            let (r0, r1, z0, z1) = b.shape.bounds();
            if (r1 - r0) < 3.0 * grid.dr || (z1 - z0) < 3.0 * grid.dz {
                out.push(format!(
                    "body[{k}] ({}) is less than three cells across ({:.4} × {:.4} mm cells); its resonances will be coarse",
                    b.shape.kind(),
                    grid.dr / MM,
                    grid.dz / MM
                ));
            }
        }
        out
    }

    /// Checks that every body can be represented on `grid`: a body thinner
    /// than one cell in r or z would be lost or distorted by the grid.
    pub fn check_resolution(&self, grid: &Grid) -> Result<(), ScenarioError> {
        for (k, b) in self.bodies.iter().enumerate() {
            let (r0, r1, z0, z1) = b.shape.bounds();
            let across_z = (z1 - z0) < grid.dz;
            let (size, step, extent) = if across_z {
                (z1 - z0, grid.dz, self.z_max - self.z_min)
            } else if (r1 - r0) < grid.dr {
                (r1 - r0, grid.dr, self.radius)
            } else {
                continue;
            };
            // The key that sets the thin size, and the value written there
            // (m), for the "metres for millimetres" hint.
            let (key, written) = match b.shape {
                Shape::Cylinder { radius, height, .. } => {
                    if across_z {
                        ("height", Some(height))
                    } else {
                        ("radius", Some(radius))
                    }
                }
                Shape::Ring {
                    outer_radius,
                    height,
                    ..
                } => {
                    if across_z {
                        ("height", Some(height))
                    } else {
                        ("outer_radius", Some(outer_radius))
                    }
                }
                Shape::Sphere { radius, .. } => ("radius", Some(radius)),
                Shape::Cone {
                    radius_bottom,
                    radius_top,
                    height,
                    ..
                } => {
                    if across_z {
                        ("height", Some(height))
                    } else if radius_bottom >= radius_top {
                        ("radius_bottom", Some(radius_bottom))
                    } else {
                        ("radius_top", Some(radius_top))
                    }
                }
                Shape::Polygon { .. } => ("points", None),
            };
            let refine = format!(
                "set region.cell to {} mm or less, or raise region.cells_per_wavelength",
                below(0.5 * size / MM)
            );
            let hint = match written {
                // Read as metres, the value would be a size the grid
                // resolves and the region holds.
                Some(v) if size * 1e3 >= 3.0 * step && v * 1e3 <= extent => format!(
                    "lengths are in millimetres: did you mean {key} = {}? Otherwise {refine}",
                    sig(v / MM * 1e3)
                ),
                _ => refine,
            };
            return Err(ScenarioError {
                file: String::new(),
                key: format!("body[{k}].{key}"),
                message: format!(
                    "the {} is {} mm across in {}, thinner than one cell ({} mm)",
                    b.shape.kind(),
                    sig(size / MM),
                    if across_z { "z" } else { "r" },
                    approx(step / MM)
                ),
                hint: Some(hint),
            });
        }
        Ok(())
    }

    /// The solver's problem for this scenario.
    pub fn problem(&self) -> Result<Problem, ScenarioError> {
        let grid = self.solver_grid()?;
        self.check_resolution(&grid)?;
        let materials = fill(&grid, &self.solver_bodies(&grid), FillOptions::default());
        let all_metal = [&materials.er, &materials.ephi, &materials.ez]
            .iter()
            .all(|n| n.pec.iter().all(|&p| p));
        if all_metal {
            let last = self
                .bodies
                .iter()
                .rposition(|b| b.material == Material::Pec)
                .unwrap_or(0);
            return Err(ScenarioError {
                file: String::new(),
                key: format!("body[{last}]"),
                message: "the conductors fill the whole region: every grid node is metal, so there is no field to solve for".into(),
                hint: Some("make the conductor smaller than the region, or the region larger".into()),
            });
        }
        let mut options = RunOptions::default();
        if let Some(p) = self.max_periods {
            options.max_periods = p;
        }
        Ok(Problem {
            materials,
            walls: self.walls,
            f_min: self.f_min,
            f_max: self.f_max,
            options,
        })
    }
}

fn read_orders(rd: &Reader, v: &Value, key: &str) -> Result<Vec<u32>, ScenarioError> {
    let allowed = "whole numbers from 0 to 64";
    let one = |x: &Value| -> Result<u32, ScenarioError> {
        let whole = match x {
            Value::Integer(i) => Some(*i as f64),
            // m = [1.0] means m = 1; 1.5 is refused below.
            Value::Float(f) if f.fract() == 0.0 => Some(*f),
            _ => None,
        };
        match whole {
            Some(i) if (0.0..=64.0).contains(&i) => Ok(i as u32),
            Some(i) => Err(rd.err(
                key,
                format!(
                    "azimuthal order {} is out of range; allowed: {allowed}",
                    tok(i)
                ),
                (i < 0.0).then(|| {
                    "m counts the cos mφ periods around the axis; −m gives the same modes as m"
                        .to_string()
                }),
            )),
            None => {
                let hint = match x {
                    Value::String(s) => {
                        let nums: Option<Vec<i64>> =
                            s.split(',').map(|p| p.trim().parse::<i64>().ok()).collect();
                        nums.filter(|n| !n.is_empty()).map(|n| {
                            let list: Vec<String> = n.iter().map(|i| i.to_string()).collect();
                            format!("write a list without quotes: m = [{}]", list.join(", "))
                        })
                    }
                    _ => None,
                };
                Err(rd.err(
                    key,
                    format!("azimuthal orders are {allowed}, found {}", describe(x)),
                    hint,
                ))
            }
        }
    };
    let mut out = match v {
        Value::Array(a) if a.is_empty() => {
            return Err(rd.err(
                key,
                format!("the list is empty; give at least one order ({allowed})"),
                Some("e.g. m = [0, 1, 2]".into()),
            ))
        }
        Value::Array(a) => a.iter().map(one).collect::<Result<Vec<_>, _>>()?,
        other => vec![one(other)?],
    };
    out.sort_unstable();
    out.dedup();
    Ok(out)
}

const SHAPES: [&str; 5] = ["cylinder", "ring", "sphere", "cone", "polygon"];

/// The keys of each shape, besides the material keys.
fn shape_keys(shape: &str) -> &'static [&'static str] {
    match shape {
        "cylinder" => &["radius", "height", "base"],
        "ring" => &["inner_radius", "outer_radius", "height", "base"],
        "sphere" => &["radius", "center"],
        "cone" => &["radius_bottom", "radius_top", "height", "base"],
        "polygon" => &["points"],
        _ => &[],
    }
}

fn read_body(rd: &Reader, t: &Table, k: usize) -> Result<Body, ScenarioError> {
    let p = format!("body[{k}]");
    let full = |key: &str| format!("{p}.{key}");
    let shapes = SHAPES.map(|s| format!("\"{s}\"")).join(", ");
    let Some(shape_name) = rd.string(t, "shape", &full("shape"))? else {
        // Which shape the keys given belong to, if only one.
        let fits: Vec<&str> = SHAPES
            .iter()
            .copied()
            .filter(|s| {
                let keys = shape_keys(s);
                t.keys().any(|key| keys.contains(&key.as_str()))
                    && t.keys().all(|key| {
                        keys.contains(&key.as_str())
                            || ["eps_r", "loss_tangent", "conductor"].contains(&key.as_str())
                    })
            })
            .collect();
        return Err(rd.err(
            &full("shape"),
            format!("missing; allowed: {shapes}"),
            match fits.as_slice() {
                [one] => Some(format!(
                    "these keys are those of a {one}: add shape = \"{one}\""
                )),
                _ => None,
            },
        ));
    };
    if !SHAPES.contains(&shape_name) {
        return Err(rd.err(
            &full("shape"),
            format!("unknown shape \"{}\"; allowed: {shapes}", clip(shape_name)),
            closest(shape_name, &SHAPES).map(|c| format!("did you mean \"{c}\"?")),
        ));
    }
    let common = ["shape", "eps_r", "loss_tangent", "conductor"];
    let extra = shape_keys(shape_name);
    let known: Vec<&str> = common.iter().chain(extra).copied().collect();
    // A key of another shape gets a message naming the keys of this one.
    for key in t.keys() {
        if !known.contains(&key.as_str())
            && SHAPES.iter().any(|s| shape_keys(s).contains(&key.as_str()))
        {
            return Err(rd.err(
                &full(key),
                format!("not a key of a {shape_name}"),
                Some(format!(
                    "a {shape_name} takes {} (and eps_r, loss_tangent or conductor)",
                    extra.join(", ")
                )),
            ));
        }
    }
    rd.check_keys(t, &p, &known)?;
    let len = |key: &str, what: &str| -> Result<f64, ScenarioError> {
        let v = rd.required_length(t, key, &full(key), what)?;
        rd.positive(v, &full(key), "mm")
    };
    let shape = match shape_name {
        "sphere" => Shape::Sphere {
            radius: len("radius", "radius in mm")? * MM,
            center: rd.required_length(t, "center", &full("center"), "z of the centre in mm")? * MM,
        },
        "cone" => {
            let rb = rd.required_length(
                t,
                "radius_bottom",
                &full("radius_bottom"),
                "bottom radius in mm",
            )?;
            let rt =
                rd.required_length(t, "radius_top", &full("radius_top"), "top radius in mm")?;
            for (key, v) in [("radius_bottom", rb), ("radius_top", rt)] {
                if v < 0.0 {
                    return Err(rd.err(
                        &full(key),
                        format!("must be ≥ 0, got {} mm; a profile lies in r ≥ 0", tok(v)),
                        None,
                    ));
                }
            }
            if rb == 0.0 && rt == 0.0 {
                return Err(rd.err(
                    &full("radius_bottom"),
                    "radius_bottom and radius_top are both 0: the cone has no volume; allowed: at least one of them positive".into(),
                    None,
                ));
            }
            Shape::Cone {
                radius_bottom: rb * MM,
                radius_top: rt * MM,
                height: len("height", "height in mm")? * MM,
                base: rd.required_length(t, "base", &full("base"), "z of the bottom face in mm")?
                    * MM,
            }
        }
        "polygon" => Shape::Polygon {
            points: read_points(rd, t, &full("points"))?,
        },
        _ => rect_shape(rd, t, &p, shape_name)?,
    };

    let eps = rd.number(t, "eps_r", &full("eps_r"))?;
    let tan_d = rd.number(t, "loss_tangent", &full("loss_tangent"))?;
    let conductor = rd.string(t, "conductor", &full("conductor"))?;
    let material = match (eps, conductor) {
        (Some(_), Some(_)) => {
            return Err(rd.err(
                &p,
                "has both eps_r and conductor; a body is either dielectric or metal".into(),
                Some("delete one of the two".into()),
            ))
        }
        (None, Some("pec")) => {
            if tan_d.is_some() {
                return Err(rd.err(
                    &full("loss_tangent"),
                    "a loss tangent applies to a dielectric, and this body is a conductor (\"pec\")".into(),
                    Some("delete loss_tangent, or give eps_r instead of conductor".into()),
                ));
            }
            Material::Pec
        }
        (None, Some(other)) => {
            let lower = other.trim().to_lowercase();
            return Err(rd.err(
                &full("conductor"),
                format!("unknown conductor \"{}\"; allowed: \"pec\"", clip(other)),
                Some(if lower == "pec" {
                    "write it in lower case: \"pec\"".into()
                } else {
                    "only perfect conductors are modelled in this release: use \"pec\"".into()
                }),
            ));
        }
        (Some(e), None) => {
            if !(1.0..=MAX_EPS_R).contains(&e) {
                return Err(rd.err(
                    &full("eps_r"),
                    format!(
                        "relative permittivity must lie in 1 … {MAX_EPS_R:e}, got {}",
                        tok(e)
                    ),
                    (e < 1.0).then(|| {
                        "ε_r < 1 is not modelled; for metal write conductor = \"pec\" instead of eps_r"
                            .to_string()
                    }),
                ));
            }
            let tan_d = tan_d.unwrap_or(0.0);
            if !(0.0..1.0).contains(&tan_d) {
                return Err(rd.err(
                    &full("loss_tangent"),
                    format!("must lie in [0, 1), got {}", tok(tan_d)),
                    (tan_d < 0.0).then(|| {
                        "a negative loss tangent would be a gain medium; low-loss ceramics have 1e-4 or less"
                            .to_string()
                    }),
                ));
            }
            Material::Dielectric {
                eps_r: e,
                loss_tangent: tan_d,
            }
        }
        (None, None) => {
            return Err(rd.err(
                &p,
                "has neither eps_r nor conductor".into(),
                Some("add eps_r = … for a dielectric or conductor = \"pec\" for metal".into()),
            ))
        }
    };
    Ok(Body { shape, material })
}

/// `points = [[r, z], …]` in mm: 3 to [`MAX_POLYGON_POINTS`] points, finite,
/// r ≥ 0, enclosing an area, the edges not crossing or touching one
/// another. A last point equal to the first (closing the profile
/// explicitly) is dropped.
fn read_points(rd: &Reader, t: &Table, key: &str) -> Result<Vec<(f64, f64)>, ScenarioError> {
    let Some(v) = t.get("points") else {
        return Err(rd.err(
            key,
            "missing (the profile as [[r, z], …] in mm)".into(),
            None,
        ));
    };
    let Value::Array(items) = v else {
        return Err(rd.err(
            key,
            format!("expected an array of [r, z] pairs, found {}", describe(v)),
            Some("e.g. points = [[0.0, 0.0], [2.1, 0.0], [0.0, 3.4]]".into()),
        ));
    };
    if items.len() > MAX_POLYGON_POINTS + 1 {
        return Err(rd.err(
            key,
            format!(
                "{} points; a profile may have at most {MAX_POLYGON_POINTS}",
                items.len()
            ),
            None,
        ));
    }
    let num = |x: &Value| match x {
        Value::Float(f) if f.is_finite() && f.abs() <= MAX_LENGTH_MM => Some(*f),
        Value::Integer(i) if (*i as f64).abs() <= MAX_LENGTH_MM => Some(*i as f64),
        _ => None,
    };
    let mut pts = Vec::new();
    for (k, item) in items.iter().enumerate() {
        let at = format!("{key}[{k}]");
        let pair = match item {
            Value::Array(p) if p.len() == 2 => (num(&p[0]), num(&p[1])),
            _ => (None, None),
        };
        let (Some(r), Some(z)) = pair else {
            let found = match item {
                Value::Array(p) if p.len() == 2 => {
                    let d: Vec<String> = p.iter().map(describe).collect();
                    format!("[{}]", d.join(", "))
                }
                other => describe(other),
            };
            return Err(rd.err(
                &at,
                format!(
                    "expected a pair [r, z] of finite numbers within ±{MAX_LENGTH_MM:e} mm, found {found}"
                ),
                None,
            ));
        };
        if r < 0.0 {
            return Err(rd.err(
                &at,
                format!(
                    "r = {} mm crosses the axis; a profile lies in r ≥ 0",
                    tok(r)
                ),
                Some("put the axis part of the profile on r = 0".into()),
            ));
        }
        pts.push((r, z));
    }
    if pts.len() > 3 && pts.first() == pts.last() {
        pts.pop();
    }
    if pts.len() < 3 {
        return Err(rd.err(
            key,
            format!("a profile needs at least 3 points, got {}", pts.len()),
            Some("give the corners of the (r, z) profile in order, e.g. [[0.0, 0.0], [2.1, 0.0], [0.0, 3.4]]".into()),
        ));
    }
    let n = pts.len();
    for k in 0..n {
        let j = (k + 1) % n;
        if pts[k] == pts[j] {
            return Err(rd.err(
                &format!("{key}[{j}]"),
                format!(
                    "repeats the point before it, [{}, {}]",
                    tok(pts[j].0),
                    tok(pts[j].1)
                ),
                Some("delete one of the two".into()),
            ));
        }
    }
    // Area in mm² (the points are still in mm: no underflow for small
    // profiles, no overflow within ±MAX_LENGTH_MM).
    let area: f64 = (0..n)
        .map(|k| {
            let (a, b) = (pts[k], pts[(k + 1) % n]);
            a.0 * b.1 - b.0 * a.1
        })
        .sum::<f64>()
        * 0.5;
    let span = pts
        .iter()
        .flat_map(|p| [p.0.abs(), p.1.abs()])
        .fold(0.0f64, f64::max);
    if area.abs() <= 1e-12 * span * span {
        return Err(rd.err(
            key,
            "the points enclose no area (they lie on one line)".into(),
            None,
        ));
    }
    let extent = |f: fn(&(f64, f64)) -> f64| {
        let (lo, hi) = pts
            .iter()
            .map(f)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
                (lo.min(x), hi.max(x))
            });
        hi - lo
    };
    if extent(|p| p.0) < MIN_SIZE_MM || extent(|p| p.1) < MIN_SIZE_MM {
        return Err(rd.err(
            key,
            format!("the profile is less than {MIN_SIZE_MM:e} mm across in r or z"),
            Some("lengths are in millimetres".into()),
        ));
    }
    if let Some((a, b)) = crossing_edges(&pts) {
        return Err(rd.err(
            key,
            format!(
                "the profile crosses itself: the edge from point {a} to {} meets the edge from point {b} to {}",
                (a + 1) % n,
                (b + 1) % n
            ),
            Some("list the points in order around the profile, without a figure-eight".into()),
        ));
    }
    Ok(pts.into_iter().map(|(r, z)| (r * MM, z * MM)).collect())
}

/// The first pair of edges (by start index) of a closed polygon that meet
/// anywhere other than at the vertex two neighbouring edges share, or that
/// fold back along each other at it. O(n²), n ≤ [`MAX_POLYGON_POINTS`].
fn crossing_edges(pts: &[(f64, f64)]) -> Option<(usize, usize)> {
    type P = (f64, f64);
    let n = pts.len();
    let orient = |a: P, b: P, c: P| (b.0 - a.0) * (c.1 - a.1) - (b.1 - a.1) * (c.0 - a.0);
    let within = |a: P, b: P, c: P| {
        // c, collinear with a–b, lies on the closed segment.
        c.0 >= a.0.min(b.0) && c.0 <= a.0.max(b.0) && c.1 >= a.1.min(b.1) && c.1 <= a.1.max(b.1)
    };
    let meet = |p1: P, p2: P, q1: P, q2: P| {
        let (d1, d2) = (orient(q1, q2, p1), orient(q1, q2, p2));
        let (d3, d4) = (orient(p1, p2, q1), orient(p1, p2, q2));
        if ((d1 > 0.0 && d2 < 0.0) || (d1 < 0.0 && d2 > 0.0))
            && ((d3 > 0.0 && d4 < 0.0) || (d3 < 0.0 && d4 > 0.0))
        {
            return true;
        }
        (d1 == 0.0 && within(q1, q2, p1))
            || (d2 == 0.0 && within(q1, q2, p2))
            || (d3 == 0.0 && within(p1, p2, q1))
            || (d4 == 0.0 && within(p1, p2, q2))
    };
    for a in 0..n {
        let (a0, a1) = (pts[a], pts[(a + 1) % n]);
        // Folding back: the next edge runs back along this one.
        let a2 = pts[(a + 2) % n];
        let dot = (a1.0 - a0.0) * (a2.0 - a1.0) + (a1.1 - a0.1) * (a2.1 - a1.1);
        if orient(a0, a1, a2) == 0.0 && dot < 0.0 {
            return Some((a, (a + 1) % n));
        }
        for b in a + 2..n {
            if a == 0 && b == n - 1 {
                continue; // neighbours across the closing vertex
            }
            if meet(a0, a1, pts[b], pts[(b + 1) % n]) {
                return Some((a, b));
            }
        }
    }
    None
}

fn rect_shape(rd: &Reader, t: &Table, p: &str, shape_name: &str) -> Result<Shape, ScenarioError> {
    let full = |key: &str| format!("{p}.{key}");
    let len = |key: &str, what: &str| -> Result<f64, ScenarioError> {
        let v = rd.required_length(t, key, &full(key), what)?;
        rd.positive(v, &full(key), "mm")
    };
    let height = len("height", "height in mm")?;
    let base = rd.required_length(t, "base", &full("base"), "z of the bottom face in mm")?;
    Ok(match shape_name {
        "cylinder" => Shape::Cylinder {
            radius: len("radius", "radius in mm")? * MM,
            height: height * MM,
            base: base * MM,
        },
        _ => {
            let inner = rd.required_length(
                t,
                "inner_radius",
                &full("inner_radius"),
                "inner radius in mm",
            )?;
            if inner < 0.0 {
                return Err(rd.err(
                    &full("inner_radius"),
                    format!(
                        "must be ≥ 0, got {} mm; a profile lies in r ≥ 0",
                        tok(inner)
                    ),
                    None,
                ));
            }
            let outer = len("outer_radius", "outer radius in mm")?;
            if outer <= inner {
                return Err(rd.err(
                    &full("outer_radius"),
                    format!(
                        "must exceed inner_radius = {} mm, got {} mm",
                        tok(inner),
                        tok(outer)
                    ),
                    (outer < inner).then(|| {
                        format!(
                            "did you mean inner_radius = {}, outer_radius = {}?",
                            tok(outer),
                            tok(inner)
                        )
                    }),
                ));
            }
            Shape::Ring {
                inner_radius: inner * MM,
                outer_radius: outer * MM,
                height: height * MM,
                base: base * MM,
            }
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    const GOOD: &str = r#"
[region]
radius = 10.0
z_min = 0.0
z_max = 20.0
cell = 0.25
[boundary]
outer = "pec"
bottom = "pec"
top = "pmc"
[[body]]
shape = "cylinder"
radius = 10.0
height = 4.0
base = 0.0
eps_r = 4.0
[search]
m = [2, 0, 1]
f_min = 5.0
f_max = 25.0
"#;

    #[test]
    fn reads_the_documented_example() {
        let s = Scenario::parse(GOOD, "good.toml").unwrap();
        assert_eq!(s.m, vec![0, 1, 2]);
        assert_eq!(s.walls.top, ZWall::Pmc);
        assert!((s.f_max - 25e9).abs() < 1.0);
        assert!((s.cell_size() - 0.25e-3).abs() < 1e-15);
        let g = s.grid().unwrap();
        assert_eq!((g.nr, g.nz), (40, 80));
    }

    fn err(text: &str) -> ScenarioError {
        Scenario::parse(text, "t.toml").unwrap_err()
    }

    #[test]
    fn mistakes_name_key_and_value() {
        let e = err(&GOOD.replace("radius = 10.0\nz_min", "radus = 10.0\nz_min"));
        assert_eq!(e.key, "region.radus");
        assert!(e.hint.unwrap().contains("radius"));
        let e = err(&GOOD.replace("eps_r = 4.0", "eps_r = 0.5"));
        assert_eq!(e.key, "body[0].eps_r");
        assert!(e.message.contains("0.5"));
        let e = err(&GOOD.replace("f_max = 25.0", "f_max = 4.0"));
        assert_eq!(e.key, "search.f_max");
        let e = err(&GOOD.replace("m = [2, 0, 1]", "m = [1, -1]"));
        assert!(e.message.contains("-1"));
        let e = err(&GOOD.replace("top = \"pmc\"", "top = \"PMC\""));
        assert!(e.hint.unwrap().contains("\"pmc\""));
        let e = err("[region\nradius=1");
        assert!(e.message.contains("not valid TOML"));
        let e = err(&GOOD.replace("z_min = 0.0\nz_max = 20.0\n", ""));
        assert_eq!(e.key, "region.z_min");
        let e = err(&GOOD.replace("base = 0.0", "base = 25.0"));
        assert_eq!(e.key, "body[0]");
        assert!(e.message.contains("outside the region"));
    }

    #[test]
    fn a_body_thinner_than_a_cell_is_refused_with_a_hint() {
        let s = Scenario::parse(&GOOD.replace("height = 4.0", "height = 0.1"), "t.toml").unwrap();
        let e = s.problem().unwrap_err();
        assert_eq!(e.key, "body[0].height");
        assert!(e.message.contains("0.1 mm") && e.hint.unwrap().contains("region.cell"));
    }

    #[test]
    fn crossing_edges_finds_figure_eights_touches_and_fold_backs() {
        let square = [(0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)];
        assert_eq!(crossing_edges(&square), None);
        let bow_tie = [(0.0, 0.0), (1.0, 1.0), (1.0, 0.0), (0.0, 1.0)];
        assert_eq!(crossing_edges(&bow_tie), Some((0, 2)));
        // Touching itself at one point: the vertex (1, 1) lies on edge 3–4.
        let pinched = [
            (0.0, 0.0),
            (2.0, 0.0),
            (1.0, 1.0),
            (2.0, 2.0),
            (0.0, 2.0),
            (1.0, 1.0),
        ];
        assert!(crossing_edges(&pinched).is_some());
        // Doubling back along an edge.
        let fold = [(0.0, 0.0), (2.0, 0.0), (1.0, 0.0), (1.0, 1.0)];
        assert!(crossing_edges(&fold).is_some());
        // Collinear points going the same way are fine.
        let straight = [(0.0, 0.0), (1.0, 0.0), (2.0, 0.0), (2.0, 1.0)];
        assert_eq!(crossing_edges(&straight), None);
    }

    #[test]
    fn suggestions_round_down_and_quote_compactly() {
        assert_eq!(below(0.3559842865), "0.355");
        assert_eq!(below(0.1 - 0.05), "0.05");
        assert_eq!(below(505_000.0), "505000");
        assert_eq!(tok(1e300), "1e300");
        assert_eq!(tok(f64::NEG_INFINITY), "-inf");
        assert_eq!(sig(9.7e-3 / 1e-3), "9.7");
        assert_eq!(closest("cnoe", &SHAPES), Some("cone"));
        assert_eq!(closest("zzzzzzzz", &SHAPES), None);
    }

    #[test]
    fn toml_errors_name_the_key_of_their_line() {
        let e = err(&GOOD.replace("height = 4.0", "height = 4.0\nheight = 5.0"));
        assert_eq!(e.key, "body[0].height");
        assert!(e.message.contains("line 15") && e.message.contains("height = 5.0"));
        let e = err(&GOOD.replace("f_min = 5.0", "f_min = 5 GHz"));
        assert_eq!(e.key, "search.f_min");
        assert!(e.hint.unwrap().contains("write the number alone (5)"));
    }

    #[test]
    fn region_left_out_is_drawn_around_the_bodies() {
        let text = "[boundary]\nbottom = \"pec\"\n[[body]]\nshape = \"sphere\"\nradius = 3.3\ncenter = 0.0\neps_r = 21.0\n[search]\nm = [1]\nf_min = 6.0\nf_max = 9.0\n";
        let s = Scenario::parse(text, "t.toml").unwrap();
        // 0.2 λ0 at 6 GHz = 9.993 mm of clearance; PEC bottom is z = 0.
        let clear = 0.2 * C0 / 6e9;
        assert!((s.radius - (3.3e-3 + clear)).abs() < 1e-9);
        assert_eq!(s.z_min, 0.0);
        assert!((s.z_max - (3.3e-3 + clear)).abs() < 1e-9);
        assert!(matches!(s.walls.outer, OuterWall::Pml(_)) && matches!(s.walls.top, ZWall::Pml(_)));
        assert_eq!(s.walls.bottom, ZWall::Pec);
        let e = Scenario::parse("[search]\nf_min = 1.0\nf_max = 2.0\n", "t.toml").unwrap_err();
        assert_eq!(e.key, "region");
    }
}
