//! What a field picture is drawn from: one mode of one run, its grid and
//! walls, and the bodies of the scenario.
use super::PlotError;
use crate::study::Study;
use lathe_mesh::{Body, Grid};
use lathe_solver::{Mode, ModeField, RunOutput, Walls, ZWall};

/// One mode with everything needed to draw it.
#[derive(Debug, Clone, Copy)]
pub struct ModeScene<'a> {
    /// The grid the run was solved on (absorber cells included).
    pub grid: &'a Grid,
    /// The walls of the run.
    pub walls: &'a Walls,
    /// The mode (frequency, Q, label).
    pub mode: &'a Mode,
    /// Its field.
    pub field: &'a ModeField,
    /// The bodies of the scenario, SI (`Scenario::bodies`).
    pub bodies: &'a [Body],
    /// The symmetry plane the run was solved over (its bottom wall), if
    /// it is half of a symmetric study; the maps can unfold it.
    pub plane: Option<ZWall>,
}

impl<'a> ModeScene<'a> {
    /// Mode `index` of `run` (in the order of `run.modes`), over the
    /// whole region the run solved.
    pub fn from_run(
        run: &'a RunOutput,
        index: usize,
        bodies: &'a [Body],
    ) -> Result<ModeScene<'a>, PlotError> {
        let (mode, field) = run.mode_with_field(index).ok_or(PlotError::NoMode {
            index,
            count: run.modes.len(),
        })?;
        let field = field.ok_or_else(|| PlotError::NoField {
            label: if mode.label.is_empty() {
                format!("#{index}")
            } else {
                mode.label.clone()
            },
            freq_ghz: mode.freq_hz / 1e9,
        })?;
        Ok(ModeScene {
            grid: &run.grid,
            walls: &run.walls,
            mode,
            field,
            bodies,
            plane: None,
        })
    }

    /// Mode `index` of run `run` of a study, with the run's symmetry
    /// plane (a half solved over a PEC or PMC mid-plane covers only
    /// z ≥ the plane).
    pub fn from_study(
        study: &'a Study,
        run: usize,
        index: usize,
        bodies: &'a [Body],
    ) -> Result<ModeScene<'a>, PlotError> {
        let r = study.runs.get(run).ok_or_else(|| PlotError::Input {
            what: "run".into(),
            message: format!("no run {run}: the study has {}", study.runs.len()),
        })?;
        let mut s = ModeScene::from_run(&r.output, index, bodies)?;
        s.plane = r.plane;
        Ok(s)
    }

    /// Absorber cells (outer, bottom, top).
    pub(crate) fn absorber_cells(&self) -> (usize, usize, usize) {
        let z = |w: ZWall| w.absorber().map_or(0, |a| a.cells);
        (
            self.walls.outer.absorber().map_or(0, |a| a.cells),
            z(self.walls.bottom),
            z(self.walls.top),
        )
    }

    /// The physical region (absorbers excluded): (outer radius, bottom z,
    /// top z), m.
    pub(crate) fn physical(&self) -> (f64, f64, f64) {
        let (o, b, t) = self.absorber_cells();
        let g = self.grid;
        (
            g.radius() - o as f64 * g.dr,
            g.z0 + b as f64 * g.dz,
            g.z_top() - t as f64 * g.dz,
        )
    }
}
