//! Field files: the complex fields of the modes a study found, in HDF5.
//!
//! One file holds every mode that has a field ([`write_study`]), or any set
//! of [`ModeRecord`]s ([`write()`]). It is written by the pure-Rust
//! `hdf5-pure` crate and read by any HDF5 reader (h5py, the HDF5 C library,
//! [`read`] here). The layout is our own and is described below; every
//! string attribute is a variable-length UTF-8 string, every integer a
//! 64-bit signed integer unless said otherwise, every real a 64-bit float.
//!
//! # Root attributes
//!
//! | attribute | type | value |
//! |---|---|---|
//! | `program` | string | `"lathe"` |
//! | `version` | string | the version of the program that wrote the file |
//! | `convention` | string | [`CONVENTION`] |
//! | `convention_m0` | string | [`CONVENTION_M0`] |
//! | `units` | string | [`UNITS`] |
//! | `mode_count` | int | number of mode groups |
//!
//! # One group per mode
//!
//! Groups are named `mode_000`, `mode_001`, … (at least three digits) in
//! order of frequency, ties broken by azimuthal order m and then by the
//! order the records were given. Attributes of a group:
//!
//! | attribute | type | meaning |
//! |---|---|---|
//! | `m` | int | azimuthal order |
//! | `frequency_hz` | real | resonance frequency, Hz |
//! | `q` | real | quality factor Q = πf/γ |
//! | `q_is_lower_bound` | uint8 | 1 when `q` is only a lower bound, else 0 |
//! | `label` | string | the trade's name of the mode (TE01δ, …); `""` when unlabelled |
//! | `symmetry_plane` | string | `"none"`, or `"pec"` / `"pmc"`: the run covered only the half z ≥ `z0` above a mid-plane wall of that kind at z = `z0` |
//! | `wall_outer`, `wall_bottom`, `wall_top` | string | `"pec"`, `"pmc"` or `"pml"`: the wall at r = radius, z = `z0`, z = top |
//! | `absorber_cells_outer`, `absorber_cells_bottom`, `absorber_cells_top` | int | absorber (PML) thickness in cells at that wall, 0 for none |
//! | `nr`, `nz` | int | cells of the grid in r and z |
//! | `axis_rod_cells` | int | for m ≥ 2, E was held at zero for r ≤ `axis_rod_cells`·`dr` (the axis rod, where the fields of order m vanish as r^(m−1)); 0 for none. Files written before it existed have no such attribute and no rod |
//! | `dr`, `dz`, `z0` | real | radial and axial step and the bottom plane, m |
//! | `transform_frequency_hz` | real | frequency of the running Fourier transform the field came from, Hz |
//! | `transform_samples` | int | samples that transform summed |
//! | `normalisation` | string | [`NORMALISATION`] |
//!
//! The grid includes the absorber cells. The physical region is
//! `r ≤ r_int[nr − absorber_cells_outer]` and
//! `z_int[absorber_cells_bottom] ≤ z ≤ z_int[nz − absorber_cells_top]`;
//! outside it the field decays into the absorber and means nothing.
//!
//! Datasets of a group:
//!
//! - `r_int` (nr + 1), `r_half` (nr), `z_int` (nz + 1), `z_half` (nz): the
//!   node coordinates in metres, `r_int[i] = i·dr`, `r_half[i] = (i + ½)·dr`,
//!   `z_int[j] = z0 + j·dz`, `z_half[j] = z0 + (j + ½)·dz`.
//! - `Er`, `Ephi`, `Ez`, `Hr`, `Hphi`, `Hz`: the phasors U of each
//!   component on its own staggered nodes, a 2-D dataset of shape
//!   (rows in r, columns in z) with element type compound `{r: f64, i: f64}`
//!   (real and imaginary part; h5py reads it as `complex128`). Shapes and
//!   coordinates (see [`lathe_mesh::Component`]):
//!
//!   | dataset | shape | r nodes | z nodes |
//!   |---|---|---|---|
//!   | `Er`   | nr × (nz+1)     | `r_half` | `z_int` |
//!   | `Ephi` | (nr+1) × (nz+1) | `r_int`  | `z_int` |
//!   | `Ez`   | (nr+1) × nz     | `r_int`  | `z_half` |
//!   | `Hr`   | (nr+1) × nz     | `r_int`  | `z_half` |
//!   | `Hphi` | nr × nz         | `r_half` | `z_half` |
//!   | `Hz`   | nr × (nz+1)     | `r_half` | `z_int` |
//!
//!   Each carries the attributes `r_coordinate` and `z_coordinate` (the
//!   names of its coordinate datasets), `unit` (`"V/m"` or `"A/m"`) and
//!   `azimuthal_factor` (`"cos(m phi)"` or `"sin(m phi)"`); in a group with
//!   a symmetry plane also `parity_about_plane`, `"even"` or `"odd"`: how
//!   the component continues below z = `z0` (mirror images: across a PEC
//!   plane tangential E and normal H are odd, normal E and tangential H
//!   even; across a PMC plane the reverse).
//! - `abs_e_centres`: real, nr × nz, on (`r_half`, `z_half`):
//!   `sqrt(|E_r|² + |E_φ|² + |E_z|²)` of the amplitudes at the cell centres,
//!   each component first averaged linearly (as a complex number) from its
//!   nearest nodes (E_r from 2 nodes in z, E_z from 2 in r, E_φ from the 4
//!   corners). For m = 0 this is |E| itself; for m ≥ 1 it is √2 times the
//!   RMS of |E| over φ. Attributes `r_coordinate`, `z_coordinate`, `unit`,
//!   `description`.
//!
//! Every stored value is finite: [`write()`] refuses a record holding a NaN
//! or infinite field value, frequency or step, and names it.
use crate::study::Study;
use hdf5_pure::{AttrValue, CompoundTypeBuilder, Datatype, DatatypeByteOrder, FileBuilder};
use lathe_mesh::{Component, Grid};
use lathe_solver::{Mode, ModeField, RunOutput, Walls, ZWall};
use num_complex::Complex64;
use std::collections::HashMap;
use std::path::{Path, PathBuf};

/// The time and angle convention, stored as the root attribute `convention`.
pub const CONVENTION: &str =
    "u(t) = Re{U exp(j omega t)}; E_r, E_z, H_phi ~ cos(m phi); E_phi, H_r, H_z ~ sin(m phi)";

/// What the convention means for m = 0, root attribute `convention_m0`.
pub const CONVENTION_M0: &str = "for m = 0 every component is independent of phi \
     (read both factors as 1); E_r, E_z, H_phi are then the TM family and E_phi, H_r, H_z the TE family";

/// Units of the stored quantities, root attribute `units`.
pub const UNITS: &str = "SI: V/m, A/m, m, Hz";

/// The normalisation note stored on every mode group.
pub const NORMALISATION: &str = "arbitrary overall amplitude and phase: the six components \
     share one unknown complex factor (their ratios, E to H included, are the mode's)";

/// A symmetry plane a run was solved over (at its bottom plane z0), or none.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SymmetryPlane {
    /// The whole region was solved.
    None,
    /// Upper half over a PEC mid-plane (tangential E zero on it).
    Pec,
    /// Upper half over a PMC mid-plane (tangential H zero on it).
    Pmc,
}

impl SymmetryPlane {
    /// The plane of a [`crate::study::StudyRun`]: `None` → `None`,
    /// `Some(Pec)` → `Pec`, `Some(Pmc)` → `Pmc`.
    ///
    /// # Panics
    /// On `Some(ZWall::Pml(_))`, which is not a symmetry plane (a study
    /// never makes one).
    pub fn from_plane(plane: Option<ZWall>) -> SymmetryPlane {
        match plane {
            None => SymmetryPlane::None,
            Some(ZWall::Pec) => SymmetryPlane::Pec,
            Some(ZWall::Pmc) => SymmetryPlane::Pmc,
            Some(ZWall::Pml(_)) => panic!("expected a PEC or PMC symmetry plane, got a PML"),
        }
    }

    /// Name as stored in the file: `"none"`, `"pec"`, `"pmc"`.
    pub fn name(self) -> &'static str {
        match self {
            SymmetryPlane::None => "none",
            SymmetryPlane::Pec => "pec",
            SymmetryPlane::Pmc => "pmc",
        }
    }

    fn parse(s: &str) -> Option<SymmetryPlane> {
        match s {
            "none" => Some(SymmetryPlane::None),
            "pec" => Some(SymmetryPlane::Pec),
            "pmc" => Some(SymmetryPlane::Pmc),
            _ => None,
        }
    }

    /// How component `c` continues below the plane: `Some(true)` even,
    /// `Some(false)` odd, `None` without a plane. By image theory a PEC
    /// plane mirrors E with tangential parts reversed and H (an axial
    /// vector) with its normal part reversed; a PMC plane the other way.
    pub fn is_even(self, c: Component) -> Option<bool> {
        let tangential = !matches!(c, Component::Ez | Component::Hz);
        // Odd under a PEC plane: tangential E, normal H.
        let odd_under_pec = c.is_electric() == tangential;
        match self {
            SymmetryPlane::None => None,
            SymmetryPlane::Pec => Some(!odd_under_pec),
            SymmetryPlane::Pmc => Some(odd_under_pec),
        }
    }
}

/// Absorber thickness in cells at each wall (0 where there is none).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct AbsorberCells {
    /// At r = radius.
    pub outer: usize,
    /// At z = z0.
    pub bottom: usize,
    /// At the top plane.
    pub top: usize,
}

impl AbsorberCells {
    /// The absorber cells of `walls`.
    pub fn of(walls: &Walls) -> AbsorberCells {
        AbsorberCells {
            outer: walls.outer.absorber().map_or(0, |a| a.cells),
            bottom: walls.bottom.absorber().map_or(0, |a| a.cells),
            top: walls.top.absorber().map_or(0, |a| a.cells),
        }
    }
}

/// The kind of each wall as stored (`"pec"`, `"pmc"`, `"pml"`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WallNames {
    /// At r = radius.
    pub outer: String,
    /// At z = z0.
    pub bottom: String,
    /// At the top plane.
    pub top: String,
}

impl WallNames {
    /// The names of `walls`.
    pub fn of(walls: &Walls) -> WallNames {
        WallNames {
            outer: walls.outer.name().to_string(),
            bottom: walls.bottom.name().to_string(),
            top: walls.top.name().to_string(),
        }
    }
}

/// One mode to write: its figures, the run it came from, and its field.
///
/// Borrowed, so a record costs nothing to make; [`ModeRecord::from_run`]
/// builds one from a solver run.
#[derive(Debug, Clone)]
pub struct ModeRecord<'a> {
    /// Azimuthal order.
    pub m: u32,
    /// Resonance frequency, Hz.
    pub freq_hz: f64,
    /// Q = πf/γ (may be +∞; not NaN).
    pub q: f64,
    /// Whether `q` is only a lower bound.
    pub q_is_lower_bound: bool,
    /// The trade's name of the mode, `""` when unlabelled.
    pub label: &'a str,
    /// The symmetry plane of the run.
    pub plane: SymmetryPlane,
    /// The walls of the run.
    pub walls: Walls,
    /// The grid of the run (absorber cells included).
    pub grid: &'a Grid,
    /// Rows of the run's axis rod (E held at r ≤ `axis_rod`·Δr; 0 for
    /// none).
    pub axis_rod: usize,
    /// The field, six components on `grid` in the order of
    /// [`Component::ALL`].
    pub field: &'a ModeField,
}

impl<'a> ModeRecord<'a> {
    /// The record of `mode` with field `field`, from `run` solved over
    /// `plane` (as in [`crate::study::StudyRun`]).
    ///
    /// # Panics
    /// When `plane` is a PML (see [`SymmetryPlane::from_plane`]).
    pub fn from_run(
        mode: &'a Mode,
        field: &'a ModeField,
        plane: Option<ZWall>,
        run: &'a RunOutput,
    ) -> ModeRecord<'a> {
        ModeRecord {
            m: mode.m,
            freq_hz: mode.freq_hz,
            q: mode.q,
            q_is_lower_bound: mode.q_is_lower_bound,
            label: &mode.label,
            plane: SymmetryPlane::from_plane(plane),
            walls: run.walls,
            grid: &run.grid,
            axis_rod: run.report.axis_rod,
            field,
        }
    }
}

/// What stops writing or reading a field file. Every message starts
/// "cannot write field file PATH:" or "cannot read field file PATH:".
#[derive(Debug, thiserror::Error)]
pub enum FieldFileError {
    /// The file could not be created or written.
    #[error("cannot write field file {}: {cause}", .path.display())]
    Write {
        /// The file.
        path: PathBuf,
        /// What the HDF5 writer reported.
        cause: hdf5_pure::Error,
    },
    /// A field value is NaN or infinite.
    #[error(
        "cannot write field file {}: mode m = {m} at {freq_hz} Hz: {component} at (i, j) = ({i}, {j}) is {value}, not finite",
        .path.display()
    )]
    NonFinite {
        /// The file.
        path: PathBuf,
        /// Azimuthal order of the mode.
        m: u32,
        /// Frequency of the mode, Hz.
        freq_hz: f64,
        /// The component.
        component: &'static str,
        /// Radial index.
        i: usize,
        /// Axial index.
        j: usize,
        /// The value.
        value: Complex64,
    },
    /// A record is inconsistent (wrong array sizes, a non-finite figure).
    #[error("cannot write field file {}: {reason}", .path.display())]
    BadRecord {
        /// The file.
        path: PathBuf,
        /// What is wrong, naming the mode and the value.
        reason: String,
    },
    /// The file could not be opened or parsed as HDF5.
    #[error("cannot read field file {}: {cause}", .path.display())]
    Open {
        /// The file.
        path: PathBuf,
        /// What the HDF5 reader reported.
        cause: hdf5_pure::Error,
    },
    /// The file is HDF5 but not laid out as a field file.
    #[error("cannot read field file {}: {reason}", .path.display())]
    Layout {
        /// The file.
        path: PathBuf,
        /// What is missing or malformed.
        reason: String,
    },
}

/// A field file read back by [`read`].
#[derive(Debug, Clone, PartialEq)]
pub struct FieldFile {
    /// Root attribute `program`.
    pub program: String,
    /// Root attribute `version`.
    pub version: String,
    /// Root attribute `convention`.
    pub convention: String,
    /// Root attribute `units`.
    pub units: String,
    /// The mode groups, in file order (by frequency).
    pub modes: Vec<StoredMode>,
}

/// One mode group of a field file.
#[derive(Debug, Clone, PartialEq)]
pub struct StoredMode {
    /// Group name (`mode_000`, …).
    pub name: String,
    /// Azimuthal order.
    pub m: u32,
    /// Resonance frequency, Hz.
    pub freq_hz: f64,
    /// Q.
    pub q: f64,
    /// Whether `q` is only a lower bound.
    pub q_is_lower_bound: bool,
    /// Label, `""` when unlabelled.
    pub label: String,
    /// Symmetry plane of the run.
    pub plane: SymmetryPlane,
    /// Wall kinds.
    pub walls: WallNames,
    /// Absorber cells.
    pub absorber: AbsorberCells,
    /// Attribute `axis_rod_cells` (0 when the file has none).
    pub axis_rod: usize,
    /// The grid, rebuilt from `nr`, `nz`, `dr`, `dz`, `z0`.
    pub grid: Grid,
    /// Dataset `r_int`.
    pub r_int: Vec<f64>,
    /// Dataset `r_half`.
    pub r_half: Vec<f64>,
    /// Dataset `z_int`.
    pub z_int: Vec<f64>,
    /// Dataset `z_half`.
    pub z_half: Vec<f64>,
    /// The field (`freq_hz` and `samples` from the transform attributes).
    pub field: ModeField,
    /// Dataset `abs_e_centres`, nr × nz, row-major in r.
    pub abs_e_centres: Vec<f64>,
}

/// Writes every mode of `study` that has a field to `path` (see the
/// module docs for the layout) and returns how many were written. Modes
/// without a field (memory did not allow a transform) are left out.
pub fn write_study(path: &Path, study: &Study) -> Result<usize, FieldFileError> {
    let mut records = Vec::new();
    for run in &study.runs {
        for (mode, field) in run.output.modes.iter().zip(&run.output.mode_fields) {
            if let Some(field) = field {
                records.push(ModeRecord::from_run(mode, field, run.plane, &run.output));
            }
        }
    }
    write(path, &records)?;
    Ok(records.len())
}

/// Writes `records` to `path` (created or replaced), one group per record,
/// sorted by frequency then m (stable). Every record is checked first:
/// nothing is written when one is inconsistent or holds a non-finite value.
pub fn write(path: &Path, records: &[ModeRecord]) -> Result<(), FieldFileError> {
    for r in records {
        check_record(path, r)?;
    }
    let mut order: Vec<&ModeRecord> = records.iter().collect();
    order.sort_by(|a, b| a.freq_hz.total_cmp(&b.freq_hz).then(a.m.cmp(&b.m)));
    let digits = order.len().saturating_sub(1).to_string().len().max(3);
    let mut fb = FileBuilder::new();
    fb.set_attr("program", text("lathe"));
    fb.set_attr("version", text(env!("CARGO_PKG_VERSION")));
    fb.set_attr("convention", text(CONVENTION));
    fb.set_attr("convention_m0", text(CONVENTION_M0));
    fb.set_attr("units", text(UNITS));
    fb.set_attr("mode_count", AttrValue::I64(order.len() as i64));
    let complex = complex_type();
    for (k, r) in order.iter().enumerate() {
        let g = r.grid;
        let mut grp = fb.create_group(&format!("mode_{k:0digits$}"));
        let cells = AbsorberCells::of(&r.walls);
        let walls = WallNames::of(&r.walls);
        grp.set_attr("m", AttrValue::I64(r.m as i64));
        grp.set_attr("frequency_hz", AttrValue::F64(r.freq_hz));
        grp.set_attr("q", AttrValue::F64(r.q));
        grp.set_attr("q_is_lower_bound", AttrValue::U8(r.q_is_lower_bound as u8));
        grp.set_attr("label", text(r.label));
        grp.set_attr("symmetry_plane", text(r.plane.name()));
        grp.set_attr("wall_outer", text(&walls.outer));
        grp.set_attr("wall_bottom", text(&walls.bottom));
        grp.set_attr("wall_top", text(&walls.top));
        grp.set_attr("absorber_cells_outer", AttrValue::I64(cells.outer as i64));
        grp.set_attr("absorber_cells_bottom", AttrValue::I64(cells.bottom as i64));
        grp.set_attr("absorber_cells_top", AttrValue::I64(cells.top as i64));
        grp.set_attr("nr", AttrValue::I64(g.nr as i64));
        grp.set_attr("nz", AttrValue::I64(g.nz as i64));
        grp.set_attr("axis_rod_cells", AttrValue::I64(r.axis_rod as i64));
        grp.set_attr("dr", AttrValue::F64(g.dr));
        grp.set_attr("dz", AttrValue::F64(g.dz));
        grp.set_attr("z0", AttrValue::F64(g.z0));
        grp.set_attr("transform_frequency_hz", AttrValue::F64(r.field.freq_hz));
        grp.set_attr("transform_samples", AttrValue::I64(r.field.samples as i64));
        grp.set_attr("normalisation", text(NORMALISATION));
        let coords = coordinates(g);
        for (name, v) in ["r_int", "r_half", "z_int", "z_half"].iter().zip(&coords) {
            grp.create_dataset(name)
                .with_f64_data(v)
                .set_attr("unit", text("m"));
        }
        for (k, &c) in Component::ALL.iter().enumerate() {
            let (rows, cols) = c.shape(g);
            let (rn, zn) = coordinate_names(c);
            let values = &r.field.components[k];
            let mut raw = Vec::with_capacity(16 * values.len());
            for u in values {
                raw.extend_from_slice(&u.re.to_le_bytes());
                raw.extend_from_slice(&u.im.to_le_bytes());
            }
            let ds = grp
                .create_dataset(c.name())
                .with_compound_data(complex.clone(), raw, values.len() as u64)
                .with_shape(&[rows as u64, cols as u64]);
            ds.set_attr("r_coordinate", text(rn))
                .set_attr("z_coordinate", text(zn))
                .set_attr("unit", text(if c.is_electric() { "V/m" } else { "A/m" }))
                .set_attr(
                    "azimuthal_factor",
                    text(match c {
                        Component::Er | Component::Ez | Component::Hphi => "cos(m phi)",
                        _ => "sin(m phi)",
                    }),
                );
            if let Some(even) = r.plane.is_even(c) {
                ds.set_attr(
                    "parity_about_plane",
                    text(if even { "even" } else { "odd" }),
                );
            }
        }
        let abs_e = abs_e_centres(g, r.field);
        if let Some(n) = abs_e.iter().position(|v| !v.is_finite()) {
            return Err(FieldFileError::BadRecord {
                path: path.to_path_buf(),
                reason: format!(
                    "mode m = {} at {} Hz: |E| at cell ({}, {}) overflows ({})",
                    r.m,
                    r.freq_hz,
                    n / g.nz,
                    n % g.nz,
                    abs_e[n]
                ),
            });
        }
        grp.create_dataset("abs_e_centres")
            .with_f64_data(&abs_e)
            .with_shape(&[g.nr as u64, g.nz as u64])
            .set_attr("r_coordinate", text("r_half"))
            .set_attr("z_coordinate", text("z_half"))
            .set_attr("unit", text("V/m"))
            .set_attr("description", text(ABS_E_DESCRIPTION));
        fb.add_group(grp.finish());
    }
    fb.write(path).map_err(|cause| FieldFileError::Write {
        path: path.to_path_buf(),
        cause,
    })
}

const ABS_E_DESCRIPTION: &str = "sqrt(|E_r|^2 + |E_phi|^2 + |E_z|^2) at the cell centres \
     ((i+1/2) dr, z0 + (j+1/2) dz), each complex component averaged linearly from its nearest \
     nodes; |E| for m = 0, sqrt(2) times the RMS of |E| over phi for m >= 1";

fn text(s: &str) -> AttrValue {
    AttrValue::VarLenString(s.to_string())
}

/// The compound {r: f64, i: f64} that h5py reads as complex128.
fn complex_type() -> Datatype {
    CompoundTypeBuilder::new()
        .f64_field("r")
        .f64_field("i")
        .build()
        .expect("two f64 fields make a valid compound")
}

/// `r_int`, `r_half`, `z_int`, `z_half` of `g`.
fn coordinates(g: &Grid) -> [Vec<f64>; 4] {
    [
        (0..=g.nr).map(|i| g.r_int(i)).collect(),
        (0..g.nr).map(|i| g.r_half(i)).collect(),
        (0..=g.nz).map(|j| g.z_int(j)).collect(),
        (0..g.nz).map(|j| g.z_half(j)).collect(),
    ]
}

/// Names of the coordinate datasets of component `c`.
fn coordinate_names(c: Component) -> (&'static str, &'static str) {
    let (rh, zh) = c.staggering();
    (
        if rh { "r_half" } else { "r_int" },
        if zh { "z_half" } else { "z_int" },
    )
}

/// |E| at the cell centres ((i+½)Δr, (j+½)Δz), nr × nz row-major:
/// E_r (at (i+½, j)) averaged over j, j+1; E_z (at (i, j+½)) over i, i+1;
/// E_φ (at (i, j)) over the four corners; then the norm of the three.
///
/// # Panics
/// When the components of `field` do not have the shapes of `g`.
pub fn abs_e_centres(g: &Grid, field: &ModeField) -> Vec<f64> {
    let (nr, nz) = (g.nr, g.nz);
    let er = field.get(Component::Er);
    let ephi = field.get(Component::Ephi);
    let ez = field.get(Component::Ez);
    let mut out = Vec::with_capacity(nr * nz);
    for i in 0..nr {
        for j in 0..nz {
            // Weights applied before summing and norms by hypot, so no
            // intermediate overflows while the result is representable.
            let a = 0.5 * er[i * (nz + 1) + j] + 0.5 * er[i * (nz + 1) + j + 1];
            let b = 0.25 * ephi[i * (nz + 1) + j]
                + 0.25 * ephi[i * (nz + 1) + j + 1]
                + 0.25 * ephi[(i + 1) * (nz + 1) + j]
                + 0.25 * ephi[(i + 1) * (nz + 1) + j + 1];
            let c = 0.5 * ez[i * nz + j] + 0.5 * ez[(i + 1) * nz + j];
            out.push(a.norm().hypot(b.norm()).hypot(c.norm()));
        }
    }
    out
}

fn check_record(path: &Path, r: &ModeRecord) -> Result<(), FieldFileError> {
    let bad = |reason: String| FieldFileError::BadRecord {
        path: path.to_path_buf(),
        reason,
    };
    let who = format!("mode m = {} at {} Hz", r.m, r.freq_hz);
    if !(r.freq_hz.is_finite() && r.freq_hz > 0.0) {
        return Err(bad(format!(
            "mode m = {}: frequency {} Hz is not a positive finite number",
            r.m, r.freq_hz
        )));
    }
    if r.q.is_nan() || r.q <= 0.0 {
        return Err(bad(format!("{who}: Q = {} is not positive", r.q)));
    }
    if !r.field.freq_hz.is_finite() {
        return Err(bad(format!(
            "{who}: transform frequency {} Hz is not finite",
            r.field.freq_hz
        )));
    }
    let g = r.grid;
    for (what, v) in [("dr", g.dr), ("dz", g.dz), ("z0", g.z0)] {
        if !v.is_finite() || (what != "z0" && v <= 0.0) {
            return Err(bad(format!("{who}: grid {what} = {v} m is not valid")));
        }
    }
    if g.nr == 0 || g.nz == 0 {
        return Err(bad(format!(
            "{who}: grid of {} × {} cells is empty",
            g.nr, g.nz
        )));
    }
    if r.field.components.len() != Component::ALL.len() {
        return Err(bad(format!(
            "{who}: field holds {} components, expected 6",
            r.field.components.len()
        )));
    }
    for (k, &c) in Component::ALL.iter().enumerate() {
        let (rows, cols) = c.shape(g);
        let v = &r.field.components[k];
        if v.len() != rows * cols {
            return Err(bad(format!(
                "{who}: {} holds {} values, the grid needs {rows} × {cols} = {}",
                c.name(),
                v.len(),
                rows * cols
            )));
        }
        if let Some(n) = v
            .iter()
            .position(|u| !(u.re.is_finite() && u.im.is_finite()))
        {
            return Err(FieldFileError::NonFinite {
                path: path.to_path_buf(),
                m: r.m,
                freq_hz: r.freq_hz,
                component: c.name(),
                i: n / cols,
                j: n % cols,
                value: v[n],
            });
        }
    }
    Ok(())
}

/// Reads a field file written by [`write()`] (or by anything that keeps its
/// layout), decoding the complex datasets from their raw records.
pub fn read(path: &Path) -> Result<FieldFile, FieldFileError> {
    let open = |cause| FieldFileError::Open {
        path: path.to_path_buf(),
        cause,
    };
    let layout = |reason: String| FieldFileError::Layout {
        path: path.to_path_buf(),
        reason,
    };
    let file = hdf5_pure::File::open(path).map_err(open)?;
    let root = file.root();
    let attrs = root.attrs().map_err(open)?;
    let string = |a: &HashMap<String, AttrValue>, key: &str, at: &str| {
        a.get(key)
            .and_then(AttrValue::as_str)
            .map(str::to_string)
            .ok_or_else(|| layout(format!("{at}: string attribute `{key}` missing")))
    };
    let program = string(&attrs, "program", "root")?;
    let version = string(&attrs, "version", "root")?;
    let convention = string(&attrs, "convention", "root")?;
    let units = string(&attrs, "units", "root")?;
    let mut names: Vec<String> = root
        .groups()
        .map_err(open)?
        .into_iter()
        .filter(|n| n.starts_with("mode_"))
        .collect();
    names.sort();
    let mut modes = Vec::with_capacity(names.len());
    for name in names {
        let grp = file.group(&name).map_err(open)?;
        let a = grp.attrs().map_err(open)?;
        let int = |key: &str| {
            a.get(key)
                .and_then(AttrValue::as_i64)
                .filter(|&v| v >= 0)
                .ok_or_else(|| {
                    layout(format!(
                        "group {name}: attribute `{key}` missing or not a non-negative integer"
                    ))
                })
        };
        let real = |key: &str| {
            a.get(key).and_then(AttrValue::as_f64).ok_or_else(|| {
                layout(format!(
                    "group {name}: attribute `{key}` missing or not a real"
                ))
            })
        };
        let nr = int("nr")? as usize;
        let nz = int("nz")? as usize;
        let grid = Grid {
            nr,
            nz,
            dr: real("dr")?,
            dz: real("dz")?,
            z0: real("z0")?,
        };
        let plane_name = string(&a, "symmetry_plane", &name)?;
        let plane = SymmetryPlane::parse(&plane_name).ok_or_else(|| {
            layout(format!(
                "group {name}: symmetry_plane = \"{plane_name}\", expected none, pec or pmc"
            ))
        })?;
        let f64_set = |ds: &str, len: usize| -> Result<Vec<f64>, FieldFileError> {
            let d = grp.dataset(ds).map_err(open)?;
            let v = d.read_f64().map_err(open)?;
            if v.len() != len {
                return Err(layout(format!(
                    "group {name}: {ds} holds {} values, expected {len}",
                    v.len()
                )));
            }
            Ok(v)
        };
        let mut components = Vec::with_capacity(6);
        for &c in Component::ALL.iter() {
            let (rows, cols) = c.shape(&grid);
            let d = grp.dataset(c.name()).map_err(open)?;
            let shape = d.shape().map_err(open)?;
            if shape != [rows as u64, cols as u64] {
                return Err(layout(format!(
                    "group {name}: {} has shape {shape:?}, expected [{rows}, {cols}]",
                    c.name()
                )));
            }
            if !is_complex_type(&d.datatype().map_err(open)?) {
                return Err(layout(format!(
                    "group {name}: {} is not a compound {{r: f64, i: f64}}",
                    c.name()
                )));
            }
            let raw = d.read_raw().map_err(open)?;
            if raw.len() != 16 * rows * cols {
                return Err(layout(format!(
                    "group {name}: {} holds {} bytes, expected {}",
                    c.name(),
                    raw.len(),
                    16 * rows * cols
                )));
            }
            let le = |b: &[u8]| f64::from_le_bytes(b.try_into().expect("8 bytes"));
            components.push(
                raw.chunks_exact(16)
                    .map(|b| Complex64::new(le(&b[..8]), le(&b[8..])))
                    .collect(),
            );
        }
        modes.push(StoredMode {
            m: int("m")? as u32,
            freq_hz: real("frequency_hz")?,
            q: real("q")?,
            q_is_lower_bound: int("q_is_lower_bound")? != 0,
            label: string(&a, "label", &name)?,
            plane,
            walls: WallNames {
                outer: string(&a, "wall_outer", &name)?,
                bottom: string(&a, "wall_bottom", &name)?,
                top: string(&a, "wall_top", &name)?,
            },
            absorber: AbsorberCells {
                outer: int("absorber_cells_outer")? as usize,
                bottom: int("absorber_cells_bottom")? as usize,
                top: int("absorber_cells_top")? as usize,
            },
            axis_rod: match a.get("axis_rod_cells") {
                None => 0,
                Some(_) => int("axis_rod_cells")? as usize,
            },
            r_int: f64_set("r_int", nr + 1)?,
            r_half: f64_set("r_half", nr)?,
            z_int: f64_set("z_int", nz + 1)?,
            z_half: f64_set("z_half", nz)?,
            abs_e_centres: f64_set("abs_e_centres", nr * nz)?,
            field: ModeField {
                freq_hz: real("transform_frequency_hz")?,
                samples: int("transform_samples")? as usize,
                components,
            },
            grid,
            name,
        });
    }
    Ok(FieldFile {
        program,
        version,
        convention,
        units,
        modes,
    })
}

/// Whether `t` is the compound {r: f64 at 0, i: f64 at 8}, little-endian.
fn is_complex_type(t: &Datatype) -> bool {
    let f64_le = |t: &Datatype| {
        matches!(
            t,
            Datatype::FloatingPoint {
                size: 8,
                byte_order: DatatypeByteOrder::LittleEndian,
                ..
            }
        )
    };
    match t {
        Datatype::Compound { size: 16, members } => {
            members.len() == 2
                && members[0].name == "r"
                && members[0].byte_offset == 0
                && f64_le(&members[0].datatype)
                && members[1].name == "i"
                && members[1].byte_offset == 8
                && f64_le(&members[1].datatype)
        }
        _ => false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parity_follows_image_theory() {
        // Image theory (e.g. Balanis, *Advanced Engineering
        // Electromagnetics*, ch. 7 — from memory): over a PEC plane
        // tangential E and normal H are odd, normal E and tangential H even;
        // a PMC plane, its dual, reverses every parity.
        use Component::*;
        let pec = [
            (Er, false),
            (Ephi, false),
            (Ez, true),
            (Hr, true),
            (Hphi, true),
            (Hz, false),
        ];
        for (c, even) in pec {
            assert_eq!(SymmetryPlane::Pec.is_even(c), Some(even), "{}", c.name());
            assert_eq!(SymmetryPlane::Pmc.is_even(c), Some(!even), "{}", c.name());
            assert_eq!(SymmetryPlane::None.is_even(c), None);
        }
    }

    #[test]
    fn plane_names_round_trip() {
        for p in [SymmetryPlane::None, SymmetryPlane::Pec, SymmetryPlane::Pmc] {
            assert_eq!(SymmetryPlane::parse(p.name()), Some(p));
        }
        assert_eq!(
            SymmetryPlane::from_plane(Some(ZWall::Pmc)),
            SymmetryPlane::Pmc
        );
        assert_eq!(SymmetryPlane::parse("pml"), None);
    }
}
