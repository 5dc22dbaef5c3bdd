//! Radiation figures of every mode of an open structure: directivity and its
//! direction, Q from stored energy and power beside the ring-down Q, the
//! impedance bandwidth, front-to-back and cross-polar levels, and the
//! principal-plane cuts, with text, CSV and JSON forms.
//!
//! The physics is in [`lathe_solver::farfield`]. This module decides, per
//! run of a [`Study`], what lies below the region: the mid-plane of a
//! structure solved as two halves is a mirror (its image completes the
//! lower half of space), a PEC or PMC bottom of a structure solved whole is
//! a ground plane (radiation into the upper half space only), and an
//! absorbing bottom is open space.
//!
//! Units at this edge: GHz, degrees, dB/dBi; the bandwidth is a fraction
//! of the centre frequency.
use crate::scenario::{Scenario, ScenarioError};
use crate::study::{problems, Study};
use lathe_solver::farfield::{
    bandwidth, Cut, Cuts, EnergyOptions, FarFieldError, FarFieldOptions, LowerSpace, ModeData,
    Plane, Radiator,
};
use lathe_solver::{OuterWall, ZWall};
use rayon::prelude::*;
use serde_json::{json, Value};
use std::fmt::Write as _;

/// Options of [`radiation`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RadiationOptions {
    /// Step of the cuts in θ, degrees. Default 1.
    pub cut_step_deg: f64,
    /// VSWR for the bandwidth. Default 2.
    pub vswr: f64,
    /// Cells between the radiation surface and the absorbers. Default 2.
    pub margin_cells: usize,
}

impl Default for RadiationOptions {
    fn default() -> Self {
        RadiationOptions {
            cut_step_deg: 1.0,
            vswr: 2.0,
            margin_cells: 2,
        }
    }
}

/// The radiation figures of one mode.
#[derive(Debug, Clone, PartialEq)]
pub struct Radiation {
    /// The mode's name.
    pub label: String,
    /// Azimuthal order.
    pub m: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Symmetry plane of the half it was solved in, if any.
    pub plane: Option<ZWall>,
    /// What lies below the region.
    pub lower: LowerSpace,
    /// Largest directivity, dBi.
    pub directivity_dbi: f64,
    /// Its polar angle, degrees.
    pub theta_max_deg: f64,
    /// Its azimuth, degrees (0: E-plane, 90°/m: H-plane).
    pub phi_max_deg: f64,
    /// Q from harmonic inversion of the ring-down.
    pub q: f64,
    /// Q from stored energy and radiated power (None: see `q_energy_note`).
    pub q_energy: Option<f64>,
    /// (Q_energy / Q − 1) in percent.
    pub q_energy_diff_percent: Option<f64>,
    /// Why there is no Q_energy.
    pub q_energy_note: Option<String>,
    /// Fractional bandwidth for VSWR below the chosen value (default 2),
    /// from the ring-down Q: (VSWR − 1)/(Q √VSWR) (Balanis eq. 14-88a).
    pub bandwidth_vswr2: Option<f64>,
    /// Front-to-back ratio, dB (open lower half space only).
    pub front_to_back_db: Option<f64>,
    /// Largest cross-polar partial directivity over the three cuts in the
    /// forward half space |θ| ≤ 90°, relative to the peak directivity, dB.
    pub cross_polar_db: f64,
    /// Radiated power from the far field, W (arbitrary scale of the
    /// transform).
    pub power_far_w: f64,
    /// Power through the radiation surface, W (same scale; larger than the
    /// far-field power for a decaying mode, see the solver docs).
    pub power_surface_w: f64,
    /// E-plane, H-plane and diagonal cuts.
    pub cuts: Cuts,
}

/// A mode without radiation figures, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Skipped {
    /// The mode's name.
    pub label: String,
    /// Azimuthal order.
    pub m: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Why.
    pub reason: String,
}

/// Radiation figures of every mode of a study.
#[derive(Debug, Clone, PartialEq)]
pub struct RadiationStudy {
    /// Modes with figures, by frequency.
    pub modes: Vec<Radiation>,
    /// Modes without.
    pub skipped: Vec<Skipped>,
}

impl RadiationStudy {
    /// The mode of this name, if any.
    pub fn find(&self, label: &str) -> Option<&Radiation> {
        self.modes.iter().find(|r| r.label == label)
    }
}

/// What prevents radiation figures of a whole study.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RadiationError {
    /// The scenario cannot be meshed again.
    #[error("{0}")]
    Input(ScenarioError),
    /// The transform cannot be set up for this structure.
    #[error("{0}")]
    FarField(FarFieldError),
    /// The study does not belong to the scenario.
    #[error("the study has a run over {0} that the scenario does not produce")]
    Mismatch(&'static str),
}

/// Whether the scenario is open (some wall is an absorber).
pub fn is_open(s: &Scenario) -> bool {
    matches!(s.walls.outer, OuterWall::Pml(_))
        || matches!(s.walls.top, ZWall::Pml(_))
        || matches!(s.walls.bottom, ZWall::Pml(_))
}

/// What lies below a run: a mirror for a symmetry half, else from the
/// bottom wall.
pub fn lower_space(plane: Option<ZWall>, bottom: ZWall) -> LowerSpace {
    match (plane, bottom) {
        (Some(ZWall::Pec), _) => LowerSpace::Mirror(Plane::Pec),
        (Some(ZWall::Pmc), _) => LowerSpace::Mirror(Plane::Pmc),
        (_, ZWall::Pec) => LowerSpace::Ground(Plane::Pec),
        (_, ZWall::Pmc) => LowerSpace::Ground(Plane::Pmc),
        _ => LowerSpace::Open,
    }
}

fn wall_name(p: Option<ZWall>) -> &'static str {
    match p {
        Some(ZWall::Pec) => "a pec mid-plane",
        Some(ZWall::Pmc) => "a pmc mid-plane",
        _ => "the whole region",
    }
}

/// The radiation figures of every mode of `study`, solved from `scenario`.
/// `Ok(None)` for a closed structure (no absorbing wall). A structure with
/// absorbers but no free space to radiate into (absorbers not at both the
/// outer radius and the top), or with a body that reaches the radiation
/// surface, is an error naming the reason.
pub fn radiation(
    study: &Study,
    scenario: &Scenario,
    opts: &RadiationOptions,
) -> Result<Option<RadiationStudy>, RadiationError> {
    if !is_open(scenario) {
        return Ok(None);
    }
    let probs = problems(scenario).map_err(RadiationError::Input)?;
    // Every mode's figures are independent of the others': they are worked
    // out side by side on the caller's rayon pool and collected in the
    // modes' order, so the figures, the skipped list and the first error do
    // not depend on the number of threads.
    let mut jobs = Vec::new();
    for run in &study.runs {
        let (_, _, problem) = probs
            .iter()
            .find(|(p, _, _)| *p == run.plane)
            .ok_or(RadiationError::Mismatch(wall_name(run.plane)))?;
        let lower = lower_space(run.plane, run.output.walls.bottom);
        let mut fo = FarFieldOptions::new(lower);
        fo.margin_cells = opts.margin_cells;
        jobs.extend((0..run.output.modes.len()).map(|k| (run, problem, fo, k)));
    }
    let done: Vec<Result<Result<Radiation, Skipped>, RadiationError>> = jobs
        .par_iter()
        .map(|&(run, problem, fo, k)| {
            let out = &run.output;
            let md = &out.modes[k];
            let data = match ModeData::from_run(out, k, &problem.materials) {
                Ok(d) => d,
                Err(e) => {
                    return Ok(Err(Skipped {
                        label: md.label.clone(),
                        m: md.m,
                        freq_hz: md.freq_hz,
                        reason: e.to_string(),
                    }))
                }
            };
            let rad = Radiator::new(data, &fo).map_err(RadiationError::FarField)?;
            Ok(Ok(figures(&rad, md, run.plane, opts)))
        })
        .collect();
    let mut modes = Vec::new();
    let mut skipped = Vec::new();
    for d in done {
        match d? {
            Ok(r) => modes.push(r),
            Err(s) => skipped.push(s),
        }
    }
    modes.sort_by(|a, b| a.freq_hz.total_cmp(&b.freq_hz).then(a.m.cmp(&b.m)));
    Ok(Some(RadiationStudy { modes, skipped }))
}

/// The radiator of mode `k` of run `run` of `study` (for pattern maps and
/// other far-field queries beyond [`Radiation`]); `problem` is the run's
/// own (from [`crate::study::problems`], the one of the run's plane), for
/// its materials.
pub fn radiator<'a>(
    study: &'a Study,
    problem: &'a lathe_solver::Problem,
    run: usize,
    k: usize,
    opts: &RadiationOptions,
) -> Result<Radiator<'a>, RadiationError> {
    let r = &study.runs[run];
    let out = &r.output;
    let mut fo = FarFieldOptions::new(lower_space(r.plane, out.walls.bottom));
    fo.margin_cells = opts.margin_cells;
    let data = ModeData::from_run(out, k, &problem.materials).map_err(RadiationError::FarField)?;
    Radiator::new(data, &fo).map_err(RadiationError::FarField)
}

/// Adds `directivity_dbi`, `q_energy`, `q_energy_diff_percent` and
/// `bandwidth_vswr2` (fraction of the centre frequency) to each mode of a
/// `lathe::output::json` document that has radiation figures (matched by m
/// and frequency), and the whole radiation document under `"radiation"`.
pub fn add_to_json(doc: &mut Value, r: &RadiationStudy) {
    if let Some(modes) = doc["modes"].as_array_mut() {
        for v in modes.iter_mut() {
            let (m, f) = (v["m"].as_u64(), v["freq_hz"].as_f64());
            if let Some(x) = r
                .modes
                .iter()
                .find(|x| Some(x.m as u64) == m && Some(x.freq_hz) == f)
            {
                v["directivity_dbi"] = json!(x.directivity_dbi);
                v["q_energy"] = json!(x.q_energy);
                v["q_energy_diff_percent"] = json!(x.q_energy_diff_percent);
                v["bandwidth_vswr2"] = json!(x.bandwidth_vswr2);
            }
        }
    }
    doc["radiation"] = json(r, false);
}

/// The figures of one mode from its radiator.
pub fn figures(
    rad: &Radiator,
    md: &lathe_solver::Mode,
    plane: Option<ZWall>,
    opts: &RadiationOptions,
) -> Radiation {
    let peak = rad.max_directivity();
    let cuts = rad.cuts(opts.cut_step_deg);
    let d_dbi = peak.dbi();
    // Ludwig's third definition refers to the forward direction (near
    // θ = 180° its co-polar unit vector is no longer x̂), so the cross-polar
    // level is taken over the forward half space |θ| ≤ 90°.
    let worst_cross = [&cuts.e_plane, &cuts.h_plane, &cuts.diagonal]
        .iter()
        .flat_map(|c| c.theta_deg.iter().zip(&c.cross_dbi))
        .filter(|(t, _)| t.abs() <= 90.0)
        .map(|(_, &x)| x)
        .fold(f64::NEG_INFINITY, f64::max);
    let (q_energy, note) = if md.q_is_lower_bound {
        (
            None,
            Some("the ring-down Q is only a lower bound (no measurable decay)".to_string()),
        )
    } else {
        match rad.stored_energy(&EnergyOptions::default()) {
            Ok(e) if e.q.is_finite() && e.q > 0.0 => (Some(e.q), None),
            Ok(e) => (
                None,
                Some(format!(
                    "stored energy came out non-positive (Q {:.3e})",
                    e.q
                )),
            ),
            Err(err) => (None, Some(err.to_string())),
        }
    };
    Radiation {
        label: md.label.clone(),
        m: md.m,
        freq_hz: md.freq_hz,
        plane,
        lower: rad.lower(),
        directivity_dbi: d_dbi,
        theta_max_deg: peak.theta.to_degrees(),
        phi_max_deg: peak.phi.to_degrees(),
        q: md.q,
        q_energy,
        q_energy_diff_percent: q_energy.map(|q| 100.0 * (q / md.q - 1.0)),
        q_energy_note: note,
        bandwidth_vswr2: if md.q_is_lower_bound {
            None
        } else {
            bandwidth(md.q, opts.vswr)
        },
        front_to_back_db: rad.front_to_back_db(),
        cross_polar_db: (worst_cross - d_dbi).max(lathe_solver::farfield::FLOOR_DB),
        power_far_w: rad.far_power(),
        power_surface_w: rad.surface_power(),
        cuts,
    }
}

/// The lower space's name as written in outputs.
pub fn lower_name(l: LowerSpace) -> &'static str {
    match l {
        LowerSpace::Open => "open",
        LowerSpace::Ground(Plane::Pec) => "pec ground plane",
        LowerSpace::Ground(Plane::Pmc) => "pmc ground plane",
        LowerSpace::Mirror(Plane::Pec) => "pec mirror",
        LowerSpace::Mirror(Plane::Pmc) => "pmc mirror",
    }
}

fn opt(v: Option<f64>, prec: usize, width: usize) -> String {
    match v {
        Some(x) => format!("{x:>width$.prec$}"),
        None => format!("{:>width$}", "—"),
    }
}

/// The radiation table as text, one line per mode.
pub fn table(r: &RadiationStudy) -> String {
    let mut s = String::new();
    s.push_str("  m  mode            f (GHz)   D (dBi)  θmax°  φmax°         Q  Q_energy    ΔQ %  BW VSWR2 %  F/B dB  X-pol dB\n");
    for x in &r.modes {
        let _ = writeln!(
            s,
            "{:>3}  {:<12}  {:>9.5}  {:>8.2}  {:>5.1}  {:>5.1}  {:>8.2}  {}  {}  {}  {}  {}",
            x.m,
            x.label,
            x.freq_hz / 1e9,
            x.directivity_dbi,
            x.theta_max_deg,
            x.phi_max_deg,
            x.q,
            opt(x.q_energy, 2, 8),
            opt(x.q_energy_diff_percent, 2, 6),
            opt(x.bandwidth_vswr2.map(|b| 100.0 * b), 3, 10),
            opt(x.front_to_back_db, 1, 6),
            if x.cross_polar_db > lathe_solver::farfield::FLOOR_DB + 1.0 {
                format!("{:>8.1}", x.cross_polar_db)
            } else {
                format!("{:>8}", "none")
            }
        );
    }
    for k in &r.skipped {
        let _ = writeln!(
            s,
            "{:>3}  {:<12}  {:>9.5}  skipped: {}",
            k.m,
            k.label,
            k.freq_hz / 1e9,
            k.reason
        );
    }
    s
}

/// The E- and H-plane cuts as CSV: `theta_deg,e_co_dbi,e_cross_dbi,h_co_dbi,h_cross_dbi`,
/// one row per θ (signed: θ < 0 is the half plane φ + 180°). Exact zeros
/// (the cross-polar field in a principal plane) are written as the floor
/// −300 dBi.
pub fn cuts_csv(r: &Radiation) -> String {
    let (e, h) = (&r.cuts.e_plane, &r.cuts.h_plane);
    let mut s = String::from("theta_deg,e_co_dbi,e_cross_dbi,h_co_dbi,h_cross_dbi\n");
    for k in 0..e.theta_deg.len() {
        let _ = writeln!(
            s,
            "{},{:.4},{:.4},{:.4},{:.4}",
            e.theta_deg[k], e.co_dbi[k], e.cross_dbi[k], h.co_dbi[k], h.cross_dbi[k]
        );
    }
    s
}

fn cut_json(c: &Cut) -> Value {
    json!({
        "phi_deg": c.phi_deg,
        "theta_deg": c.theta_deg,
        "co_dbi": c.co_dbi,
        "cross_dbi": c.cross_dbi,
    })
}

impl Radiation {
    /// The figures as JSON (without the cuts unless `with_cuts`).
    pub fn to_json(&self, with_cuts: bool) -> Value {
        let mut v = json!({
            "label": self.label,
            "m": self.m,
            "freq_hz": self.freq_hz,
            "plane": match self.plane { Some(ZWall::Pec) => "pec", Some(ZWall::Pmc) => "pmc", _ => "" },
            "lower_space": lower_name(self.lower),
            "directivity_dbi": self.directivity_dbi,
            "theta_max_deg": self.theta_max_deg,
            "phi_max_deg": self.phi_max_deg,
            "q": self.q,
            "q_energy": self.q_energy,
            "q_energy_diff_percent": self.q_energy_diff_percent,
            "q_energy_note": self.q_energy_note,
            "bandwidth_vswr2": self.bandwidth_vswr2,
            "front_to_back_db": self.front_to_back_db,
            "cross_polar_db": self.cross_polar_db,
            "polarisation": self.cuts.polarisation.name(),
        });
        if with_cuts {
            v["cuts"] = json!({
                "e_plane": cut_json(&self.cuts.e_plane),
                "h_plane": cut_json(&self.cuts.h_plane),
                "diagonal": cut_json(&self.cuts.diagonal),
            });
        }
        v
    }
}

/// The JSON document `{"modes": [...], "skipped": [...]}`.
pub fn json(r: &RadiationStudy, with_cuts: bool) -> Value {
    json!({
        "modes": r.modes.iter().map(|x| x.to_json(with_cuts)).collect::<Vec<_>>(),
        "skipped": r.skipped.iter().map(|k| json!({
            "label": k.label, "m": k.m, "freq_hz": k.freq_hz, "reason": k.reason,
        })).collect::<Vec<_>>(),
    })
}
