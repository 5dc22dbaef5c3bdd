//! The standard set of pictures of a study, written into one folder: what
//! a command-line option such as "write the plots to DIR" calls.
use super::{Animation, AnimationOptions, FieldMap, Figure, MapOptions, ModeScene, PlotError};
use super::{Shown, Spectrum, SpectrumOptions};
use crate::scenario::Scenario;
use crate::study::Study;
use lathe_solver::ZWall;
use std::path::{Path, PathBuf};

/// Which pictures [`write_study`] makes besides the default set.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SetOptions {
    /// Also an animated GIF of one period of each mode.
    pub animate: bool,
    /// Also an SVG of each field map.
    pub svg: bool,
    /// Field maps span −r … r.
    pub mirror: bool,
}

/// What [`write_study`] wrote, and what it could not draw.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Written {
    /// Files written, in order.
    pub files: Vec<PathBuf>,
    /// Pictures left out, each with its reason (e.g. a mode whose field
    /// the run did not keep).
    pub skipped: Vec<String>,
}

/// A file-name-safe form of a mode label: letters and digits kept, δ
/// written `d`, anything else `_`.
pub fn file_label(label: &str) -> String {
    let s: String = label
        .chars()
        .map(|c| match c {
            'δ' => 'd',
            c if c.is_ascii_alphanumeric() => c,
            _ => '_',
        })
        .collect();
    let s = s.trim_matches('_').to_string();
    if s.is_empty() {
        "mode".into()
    } else {
        s
    }
}

/// Writes into `dir` (created if missing):
///
/// - `spectrum_m{m}[_pec|_pmc].png` — the probe spectra of each run over
///   the scenario's band (the suffix names the symmetry plane of a half);
/// - `mode{n}_{label}_m{m}.png` — the field map of every mode (n counts the
///   study's modes by frequency from 01, as `Study::modes` lists them),
///   unfolded about a symmetry plane;
/// - for m ≥ 1 also `mode{n}_{label}_m{m}_ephi.png`, the map of |E_φ|;
/// - with [`SetOptions::svg`] an `.svg` of each field map, with
///   [`SetOptions::animate`] `mode{n}_{label}_m{m}_period.gif`.
///
/// A mode without a kept field, or whose E_φ is zero, is listed in
/// [`Written::skipped`]; a file that cannot be written stops with the error
/// naming it.
pub fn write_study(
    study: &Study,
    scenario: &Scenario,
    dir: impl AsRef<Path>,
    opts: &SetOptions,
) -> Result<Written, PlotError> {
    let dir = dir.as_ref();
    std::fs::create_dir_all(dir).map_err(|source| PlotError::Write {
        path: dir.to_path_buf(),
        source,
    })?;
    let mut out = Written::default();
    let band = (scenario.f_min, scenario.f_max);
    let plane_tag = |p: Option<ZWall>| match p {
        Some(w) => format!("_{}", w.name()),
        None => String::new(),
    };
    for run in &study.runs {
        let name = format!(
            "spectrum_m{}{}.png",
            run.output.report.m,
            plane_tag(run.plane)
        );
        let fig = Spectrum::new(&run.output, band, &SpectrumOptions::default())?;
        out.files.push(fig.write(dir.join(name))?);
    }
    // Every mode of the study, by frequency (then m), as Study::modes.
    let mut all: Vec<(usize, usize)> = study
        .runs
        .iter()
        .enumerate()
        .flat_map(|(r, run)| (0..run.output.modes.len()).map(move |k| (r, k)))
        .collect();
    let mode = |&(r, k): &(usize, usize)| &study.runs[r].output.modes[k];
    all.sort_by(|a, b| {
        mode(a)
            .freq_hz
            .total_cmp(&mode(b).freq_hz)
            .then(mode(a).m.cmp(&mode(b).m))
    });
    let map_opts = MapOptions {
        mirror: opts.mirror,
        ..MapOptions::default()
    };
    for (n, &(r, k)) in all.iter().enumerate() {
        let md = mode(&(r, k));
        let stem = format!("mode{:02}_{}_m{}", n + 1, file_label(&md.label), md.m);
        let scene = match ModeScene::from_study(study, r, k, &scenario.bodies) {
            Ok(s) => s,
            Err(e @ PlotError::NoField { .. }) => {
                out.skipped.push(format!("{stem}: {e}"));
                continue;
            }
            Err(e) => return Err(e),
        };
        let fig = FieldMap::new(&scene, &map_opts)?;
        out.files.push(fig.write(dir.join(format!("{stem}.png")))?);
        if opts.svg {
            out.files.push(fig.write(dir.join(format!("{stem}.svg")))?);
        }
        if md.m >= 1 {
            let ephi = MapOptions {
                shown: Shown::Azimuthal,
                ..map_opts.clone()
            };
            match FieldMap::new(&scene, &ephi) {
                Ok(f) => out
                    .files
                    .push(f.write(dir.join(format!("{stem}_ephi.png")))?),
                Err(e @ PlotError::Input { .. }) => out.skipped.push(format!("{stem}_ephi: {e}")),
                Err(e) => return Err(e),
            }
        }
        if opts.animate {
            let a = AnimationOptions {
                map: MapOptions {
                    width: 760,
                    ..map_opts.clone()
                },
                ..AnimationOptions::default()
            };
            match Animation::new(&scene, &a) {
                Ok(anim) => out
                    .files
                    .push(anim.write_gif(dir.join(format!("{stem}_period.gif")))?),
                Err(e @ PlotError::Input { .. }) => out.skipped.push(format!("{stem}_period: {e}")),
                Err(e) => return Err(e),
            }
        }
    }
    Ok(out)
}
