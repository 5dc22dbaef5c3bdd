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
use lathe_mesh::{fill, Body, FillOptions, Grid, Material, Shape};
use lathe_solver::consts::C0;
use lathe_solver::{Absorber, OuterWall, Problem, RunOptions, Walls, ZWall};
use std::fmt;
use toml::{Table, Value};

/// Default cells per wavelength in the densest material at f_max. With the
/// leapfrog's time dispersion removed (see `lathe_solver::modes`), the
/// remaining error of a Yee grid is the spatial one, at most (kΔ)²/24 for
/// propagation along a grid axis: 0.18 % at 30 cells per wavelength, and far
/// less for the modes below f_max. 30 rather than 24 because curved
/// surfaces are still staircased for E_r and E_z (first order): at 24 the
/// Q of a sphere's TM1 mode was off by 4.7 %, at 30 by 1.3 %
/// (tests/open_resonator.rs).
pub const DEFAULT_CELLS_PER_WAVELENGTH: f64 = 30.0;

/// A mistake in a scenario, quoting the file, the key and the value.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioError {
    /// The file name as given by the caller.
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
        if self.key.is_empty() {
            write!(f, "{}: {}", self.file, self.message)?;
        } else {
            write!(f, "{}: {}: {}", self.file, self.key, self.message)?;
        }
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
                let best = known
                    .iter()
                    .map(|c| (edit_distance(k, c), *c))
                    .min()
                    .filter(|(d, _)| *d <= 3.max(k.len() / 3));
                let hint = match best {
                    Some((_, c)) => Some(format!("did you mean `{c}`?")),
                    None => Some(format!("known keys here: {}", known.join(", "))),
                };
                let key = if prefix.is_empty() {
                    k.clone()
                } else {
                    format!("{prefix}.{k}")
                };
                return Err(self.err(&key, "unknown key".into(), hint));
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
                None,
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
                    Err(self.err(full, format!("{x} is not a finite number"), None))
                }
            }
            Some(Value::Integer(i)) => Ok(Some(*i as f64)),
            Some(v) => Err(self.err(
                full,
                format!("expected a number, found {}", describe(v)),
                matches!(v, Value::String(_)).then(|| "write numbers without quotes".to_string()),
            )),
        }
    }

    fn required(&self, t: &Table, key: &str, full: &str, what: &str) -> Result<f64, ScenarioError> {
        self.number(t, key, full)?
            .ok_or_else(|| self.err(full, format!("missing (the {what})"), None))
    }

    fn positive(&self, v: f64, full: &str, unit: &str) -> Result<f64, ScenarioError> {
        if v > 0.0 {
            Ok(v)
        } else {
            Err(self.err(full, format!("must be positive, got {v} {unit}"), None))
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
                None,
            )),
        }
    }
}

fn describe(v: &Value) -> String {
    match v {
        Value::String(s) => format!("the string \"{s}\""),
        Value::Integer(i) => format!("the integer {i}"),
        Value::Float(x) => format!("the number {x}"),
        Value::Boolean(b) => format!("the boolean {b}"),
        Value::Datetime(d) => format!("the date {d}"),
        Value::Array(_) => "an array".into(),
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

const MM: f64 = 1e-3;
const GHZ: f64 = 1e9;

impl Scenario {
    /// Reads a scenario from TOML text; `file` names it in messages.
    pub fn parse(text: &str, file: &str) -> Result<Scenario, ScenarioError> {
        let rd = Reader { file };
        let root: Table = text.parse::<Table>().map_err(|e| {
            let msg = e.to_string();
            rd.err("", format!("not valid TOML: {}", msg.trim()), None)
        })?;
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
            let r = rd.number(region, "radius", "region.radius")?;
            let lo = rd.number(region, "z_min", "region.z_min")?;
            let hi = rd.number(region, "z_max", "region.z_max")?;
            match (r, lo, hi) {
                (Some(r), Some(lo), Some(hi)) => {
                    let r = rd.positive(r, "region.radius", "mm")?;
                    if hi <= lo {
                        return Err(rd.err(
                            "region.z_max",
                            format!("must be above region.z_min = {lo} mm, got {hi} mm"),
                            None,
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
        let cell = match rd.number(region, "cell", "region.cell")? {
            Some(c) => Some(rd.positive(c, "region.cell", "mm")? * MM),
            None => None,
        };
        let cpw = match rd.number(
            region,
            "cells_per_wavelength",
            "region.cells_per_wavelength",
        )? {
            Some(c) if c >= 4.0 => c,
            Some(c) => {
                return Err(rd.err(
                    "region.cells_per_wavelength",
                    format!("must be at least 4, got {c}"),
                    Some("20 to 40 is usual; accuracy grows as its square".into()),
                ))
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
                            let lower = v.to_lowercase();
                            let hint = if allowed.contains(&lower.as_str()) {
                                Some(format!("write it in lower case: \"{lower}\""))
                            } else if k == 0 && lower == "pmc" {
                                Some(
                                    "a PMC outer wall is not offered; use \"pec\" or \"pml\""
                                        .into(),
                                )
                            } else {
                                None
                            };
                            return Err(rd.err(
                                &full,
                                format!("unknown wall \"{v}\"; allowed: {}", list.join(", ")),
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
                        format!("must be a whole number from 4 to 200, got {c}"),
                        None,
                    ));
                }
                pml.0 = c as usize;
            }
            if let Some(p) = rd.number(b, "pml_order", "boundary.pml_order")? {
                if !(1.0..=6.0).contains(&p) {
                    return Err(rd.err(
                        "boundary.pml_order",
                        format!("must lie in 1 … 6, got {p}"),
                        None,
                    ));
                }
                pml.1 = p;
            }
            if let Some(r) = rd.number(b, "pml_reflection", "boundary.pml_reflection")? {
                if !(1e-16..=1e-2).contains(&r) {
                    return Err(rd.err(
                        "boundary.pml_reflection",
                        format!("must lie in 1e-16 … 1e-2, got {r}"),
                        None,
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
                    format!("unknown value \"{other}\"; allowed: \"auto\", \"none\""),
                    None,
                ))
            }
        };
        let m = match search.get("m") {
            None => vec![0, 1, 2],
            Some(v) => read_orders(&rd, v, "search.m")?,
        };
        let f_min = rd.required(search, "f_min", "search.f_min", "lower band edge in GHz")?;
        let f_max = rd.required(search, "f_max", "search.f_max", "upper band edge in GHz")?;
        let f_min = rd.positive(f_min, "search.f_min", "GHz")?;
        if f_max <= f_min {
            return Err(rd.err(
                "search.f_max",
                format!("must be above search.f_min = {f_min} GHz, got {f_max} GHz"),
                None,
            ));
        }
        let max_periods = match rd.number(search, "max_periods", "search.max_periods")? {
            Some(p) if p >= 50.0 => Some(p),
            Some(p) => {
                return Err(rd.err(
                    "search.max_periods",
                    format!("must be at least 50, got {p}"),
                    None,
                ))
            }
            None => None,
        };
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
                (r1 + clear, z_lo, z_hi)
            }
        };
        for (k, b) in bodies.iter().enumerate() {
            let (r0, r1, b0, b1) = b.shape.bounds();
            if r0 >= radius * MM || b0 >= z_max * MM || b1 <= z_min * MM {
                return Err(rd.err(
                    &format!("body[{k}]"),
                    format!(
                        "the {} (r from {} to {} mm, z from {} to {} mm) lies outside the region (r ≤ {radius} mm, {z_min} ≤ z ≤ {z_max} mm)",
                        b.shape.kind(),
                        r0 / MM,
                        r1 / MM,
                        b0 / MM,
                        b1 / MM
                    ),
                    None,
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
        Ok(Scenario {
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
        })
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
        self.cell.unwrap_or_else(|| {
            C0 / (self.f_max * self.max_eps_r().sqrt()) / self.cells_per_wavelength
        })
    }

    /// The grid of the region the user described (without absorbers).
    pub fn grid(&self) -> Result<Grid, ScenarioError> {
        Grid::new(self.radius, self.z_min, self.z_max, self.cell_size()).map_err(|e| {
            ScenarioError {
                file: String::new(),
                key: "region.cell".into(),
                message: e.to_string(),
                hint: Some("use a larger cell or fewer cells_per_wavelength".into()),
            }
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
    /// the same steps.
    pub fn solver_grid(&self) -> Result<Grid, ScenarioError> {
        let g = self.grid()?;
        let (o, b, t) = self.absorber_cells();
        Ok(Grid {
            nr: g.nr + o,
            nz: g.nz + b + t,
            z0: g.z0 - b as f64 * g.dz,
            ..g
        })
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
            let (key, size, step) = if (z1 - z0) < grid.dz {
                (
                    if matches!(b.shape, Shape::Sphere { .. }) {
                        "radius"
                    } else {
                        "height"
                    },
                    z1 - z0,
                    grid.dz,
                )
            } else if (r1 - r0) < grid.dr {
                (
                    match b.shape {
                        Shape::Ring { .. } => "outer_radius",
                        _ => "radius",
                    },
                    r1 - r0,
                    grid.dr,
                )
            } else {
                continue;
            };
            return Err(ScenarioError {
                file: String::new(),
                key: format!("body[{k}].{key}"),
                message: format!(
                    "the {} is {:.4} mm across in that direction, thinner than one cell ({:.4} mm)",
                    b.shape.kind(),
                    size / MM,
                    step / MM
                ),
                hint: Some(format!(
                    "set region.cell to {:.4} mm or less, or raise region.cells_per_wavelength",
                    0.5 * size / MM
                )),
            });
        }
        Ok(())
    }

    /// The solver's problem for this scenario.
    pub fn problem(&self) -> Result<Problem, ScenarioError> {
        let grid = self.solver_grid()?;
        self.check_resolution(&grid)?;
        let materials = fill(&grid, &self.solver_bodies(&grid), FillOptions::default());
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
    let one = |x: &Value| -> Result<u32, ScenarioError> {
        match x {
            Value::Integer(i) if (0..=64).contains(i) => Ok(*i as u32),
            Value::Integer(i) => Err(rd.err(
                key,
                format!("azimuthal order {i} is out of range; allowed 0 … 64"),
                None,
            )),
            other => Err(rd.err(
                key,
                format!(
                    "azimuthal orders are whole numbers ≥ 0, found {}",
                    describe(other)
                ),
                None,
            )),
        }
    };
    let mut out = match v {
        Value::Array(a) if a.is_empty() => {
            return Err(rd.err(
                key,
                "the list is empty".into(),
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

fn read_body(rd: &Reader, t: &Table, k: usize) -> Result<Body, ScenarioError> {
    let p = format!("body[{k}]");
    let full = |key: &str| format!("{p}.{key}");
    let shape_name = rd.string(t, "shape", &full("shape"))?.ok_or_else(|| {
        rd.err(
            &full("shape"),
            "missing (\"cylinder\" or \"ring\")".into(),
            None,
        )
    })?;
    let common = ["shape", "eps_r", "loss_tangent", "conductor"];
    let extra: &[&str] = match shape_name {
        "cylinder" => &["radius", "height", "base"],
        "ring" => &["inner_radius", "outer_radius", "height", "base"],
        "sphere" => &["radius", "center"],
        "cone" => &["radius_bottom", "radius_top", "height", "base"],
        "polygon" => &["points"],
        other => {
            return Err(rd.err(
                &full("shape"),
                format!(
                    "unknown shape \"{other}\"; allowed: \"cylinder\", \"ring\", \"sphere\", \"cone\", \"polygon\""
                ),
                None,
            ))
        }
    };
    let known: Vec<&str> = common.iter().chain(extra).copied().collect();
    rd.check_keys(t, &p, &known)?;
    let len = |key: &str, what: &str| -> Result<f64, ScenarioError> {
        let v = rd.required(t, key, &full(key), what)?;
        rd.positive(v, &full(key), "mm")
    };
    let shape = match shape_name {
        "sphere" => Shape::Sphere {
            radius: len("radius", "radius in mm")? * MM,
            center: rd.required(t, "center", &full("center"), "z of the centre in mm")? * MM,
        },
        "cone" => {
            let rb = rd.required(
                t,
                "radius_bottom",
                &full("radius_bottom"),
                "bottom radius in mm",
            )?;
            let rt = rd.required(t, "radius_top", &full("radius_top"), "top radius in mm")?;
            for (key, v) in [("radius_bottom", rb), ("radius_top", rt)] {
                if v < 0.0 {
                    return Err(rd.err(&full(key), format!("must be ≥ 0, got {v} mm"), None));
                }
            }
            if rb == 0.0 && rt == 0.0 {
                return Err(rd.err(
                    &full("radius_bottom"),
                    "radius_bottom and radius_top are both 0: the cone has no volume".into(),
                    None,
                ));
            }
            Shape::Cone {
                radius_bottom: rb * MM,
                radius_top: rt * MM,
                height: len("height", "height in mm")? * MM,
                base: rd.required(t, "base", &full("base"), "z of the bottom face in mm")? * MM,
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
                None,
            ))
        }
        (None, Some("pec")) => Material::Pec,
        (None, Some(other)) => {
            return Err(rd.err(
                &full("conductor"),
                format!("unknown conductor \"{other}\"; allowed: \"pec\""),
                None,
            ))
        }
        (Some(e), None) => {
            if e < 1.0 {
                return Err(rd.err(
                    &full("eps_r"),
                    format!("relative permittivity must be ≥ 1, got {e}"),
                    None,
                ));
            }
            let tan_d = tan_d.unwrap_or(0.0);
            if !(0.0..1.0).contains(&tan_d) {
                return Err(rd.err(
                    &full("loss_tangent"),
                    format!("must lie in [0, 1), got {tan_d}"),
                    None,
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

/// `points = [[r, z], …]` in mm: at least three, finite, r ≥ 0, enclosing
/// an area.
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
            None,
        ));
    };
    let num = |x: &Value| match x {
        Value::Float(f) if f.is_finite() => Some(*f),
        Value::Integer(i) => Some(*i as f64),
        _ => None,
    };
    let mut pts = Vec::new();
    for (k, item) in items.iter().enumerate() {
        let pair = match item {
            Value::Array(p) if p.len() == 2 => (num(&p[0]), num(&p[1])),
            _ => (None, None),
        };
        let (Some(r), Some(z)) = pair else {
            return Err(rd.err(
                &format!("{key}[{k}]"),
                format!(
                    "expected a pair [r, z] of finite numbers, found {}",
                    describe(item)
                ),
                None,
            ));
        };
        if r < 0.0 {
            return Err(rd.err(
                &format!("{key}[{k}]"),
                format!("r = {r} mm crosses the axis; a profile lies in r ≥ 0"),
                Some("put the axis part of the profile on r = 0".into()),
            ));
        }
        pts.push((r * MM, z * MM));
    }
    if pts.len() < 3 {
        return Err(rd.err(
            key,
            format!("a profile needs at least 3 points, got {}", pts.len()),
            None,
        ));
    }
    let area: f64 = (0..pts.len())
        .map(|k| {
            let (a, b) = (pts[k], pts[(k + 1) % pts.len()]);
            a.0 * b.1 - b.0 * a.1
        })
        .sum::<f64>()
        * 0.5;
    if area.abs() < 1e-18 {
        return Err(rd.err(key, "the points enclose no area".into(), None));
    }
    Ok(pts)
}

fn rect_shape(rd: &Reader, t: &Table, p: &str, shape_name: &str) -> Result<Shape, ScenarioError> {
    let full = |key: &str| format!("{p}.{key}");
    let len = |key: &str, what: &str| -> Result<f64, ScenarioError> {
        let v = rd.required(t, key, &full(key), what)?;
        rd.positive(v, &full(key), "mm")
    };
    let height = len("height", "height in mm")?;
    let base = rd.required(t, "base", &full("base"), "z of the bottom face in mm")?;
    Ok(match shape_name {
        "cylinder" => Shape::Cylinder {
            radius: len("radius", "radius in mm")? * MM,
            height: height * MM,
            base: base * MM,
        },
        _ => {
            let inner = rd.required(
                t,
                "inner_radius",
                &full("inner_radius"),
                "inner radius in mm",
            )?;
            if inner < 0.0 {
                return Err(rd.err(
                    &full("inner_radius"),
                    format!("must be ≥ 0, got {inner} mm"),
                    None,
                ));
            }
            let outer = len("outer_radius", "outer radius in mm")?;
            if outer <= inner {
                return Err(rd.err(
                    &full("outer_radius"),
                    format!("must exceed inner_radius = {inner} mm, got {outer} mm"),
                    None,
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
        assert!(e.message.contains("0.1000 mm") && e.hint.unwrap().contains("region.cell"));
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
