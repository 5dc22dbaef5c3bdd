//! The animation of one period of a mode's real field.
//!
//! One period of the real field u(t) = Re{U e^{jωt}} of a single component,
//! signed, on the diverging colour map (zero white), scaled by the
//! component's largest |U| so the colours breathe with time; arrows show the
//! in-plane field at each instant, scaled once for the whole period (by the
//! larger of the in-plane envelope's maximum and a fifth of the total
//! envelope's) so they grow and shrink too. The component is chosen by
//! [`AnimationOptions::component`] (default: the strongest of E_r, E_φ,
//! E_z, by Σ r|U|²). In a mirrored animation the left half shows the
//! Cartesian components — along the picture's x axis for U_r, out of the
//! page for U_φ — so their sign there is −(−1)^m that of the component at
//! the same r; U_z keeps (−1)^m. Frames are written as numbered PNG files
//! in a folder, or as one looping GIF (colours quantised to 256 per frame
//! by the GIF encoder).
use super::colour::ColourMap;
use super::draw::tick_label;
use super::field::{CentredField, FieldKind, Shown};
use super::field_map::{
    base, max_inside, mode_name, wrap, Arrows, Base, ARROW_FLOOR, ARROW_SHARE, NEGLIGIBLE, SUB_PX,
};
use super::scene::ModeScene;
use super::{FieldMap, Figure, MapOptions, PlotError};
use lathe_mesh::Component;
use plotters::prelude::*;
use std::path::{Path, PathBuf};

/// Options of an animation.
#[derive(Debug, Clone, PartialEq)]
pub struct AnimationOptions {
    /// Layout, field for the arrows, mirror, absorber view (its `shown` is
    /// not used: the colour is one signed component).
    pub map: MapOptions,
    /// The component shown in colour; `None` (default) takes the strongest
    /// component of `map.field` by Σ r|U|².
    pub component: Option<Component>,
    /// Frames per period (default 24, at least 2).
    pub frames: usize,
    /// Time each frame is shown in a GIF, ms (default 80).
    pub frame_ms: u32,
}

impl Default for AnimationOptions {
    fn default() -> Self {
        AnimationOptions {
            map: MapOptions {
                width: 760,
                ..MapOptions::default()
            },
            component: None,
            frames: 24,
            frame_ms: 80,
        }
    }
}

/// One period of a mode's real field, frame by frame (see the module
/// docs).
#[derive(Debug, Clone)]
pub struct Animation {
    template: FieldMap,
    cf: CentredField,
    component: Component,
    peak: f64,
    arrow_scale: f64,
    kind: FieldKind,
    arrows: bool,
    frames: usize,
    frame_ms: u32,
    sub_lines: usize,
}

impl Animation {
    /// Prepares the animation of `scene`'s mode. Errors: the chosen
    /// component is zero (e.g. E_z of an m = 0 TE mode).
    pub fn new(scene: &ModeScene, opts: &AnimationOptions) -> Result<Animation, PlotError> {
        let Base {
            map: mut template,
            cf,
            inside,
            kind,
        } = base(scene, &opts.map)?;
        let m = scene.mode.m;
        let weight = |c: Component| -> f64 {
            let v = cf.get(c);
            let mut s = 0.0;
            for i in 0..cf.nr {
                let r = (i as f64 + 0.5) * cf.dr;
                for j in 0..cf.nz {
                    if inside[i * cf.nz + j] {
                        s += r * v[i * cf.nz + j].norm_sqr();
                    }
                }
            }
            s
        };
        let component = match opts.component {
            Some(c) => c,
            None => kind
                .components()
                .into_iter()
                .max_by(|a, b| weight(*a).total_cmp(&weight(*b)))
                .expect("three components"),
        };
        let modulus: Vec<f64> = cf.get(component).iter().map(|u| u.norm()).collect();
        let peak = max_inside(&modulus, &inside);
        let total = max_inside(&cf.amplitude(kind, Shown::Total), &inside);
        if !(peak > NEGLIGIBLE * total && peak.is_finite()) {
            return Err(PlotError::Input {
                what: "animation".into(),
                message: format!(
                    "component {} is zero (below {NEGLIGIBLE:e} of the total) everywhere for {}; choose another",
                    component.name(),
                    mode_name(scene.mode)
                ),
            });
        }
        let in_plane = max_inside(&cf.amplitude(kind, Shown::InPlane), &inside);
        let arrows = opts.map.arrows && in_plane >= ARROW_FLOOR * total;
        let arrow_scale = in_plane.max(ARROW_SHARE * total);
        let sign_m = (-1f64).powi(m as i32);
        template.signed = true;
        template.left_sign = match component {
            Component::Ez | Component::Hz => sign_m,
            _ => -sign_m,
        };
        template.map = ColourMap::diverging();
        template.bar_label = format!("{} / max |{}|", pretty(component), pretty(component));
        template.bar_ticks = (0..=4)
            .map(|k| {
                let v = -1.0 + 0.5 * k as f64;
                (0.5 * (v + 1.0), tick_label(v, 0.5))
            })
            .collect();
        let mut anim = Animation {
            template,
            cf,
            component,
            peak,
            arrow_scale,
            kind,
            arrows,
            frames: opts.frames.max(2),
            frame_ms: opts.frame_ms.max(10),
            sub_lines: 1,
        };
        // Every frame gets as many subtitle lines as the longest needs, so
        // all frames have one size.
        let width = anim.template.width as f64 - 24.0;
        anim.sub_lines = (0..anim.frames)
            .map(|k| wrap(&anim.subtitle(k), SUB_PX, width).len())
            .max()
            .unwrap_or(1);
        Ok(anim)
    }

    /// Frames per period.
    pub fn frames(&self) -> usize {
        self.frames
    }

    /// The component shown in colour.
    pub fn component(&self) -> Component {
        self.component
    }

    /// Frame `k` (0 … frames − 1, taken modulo frames): the field at
    /// ωt = 2πk/frames.
    pub fn frame(&self, k: usize) -> FieldMap {
        let k = k % self.frames;
        let psi = 2.0 * std::f64::consts::PI * k as f64 / self.frames as f64;
        let mut f = self.template.clone();
        f.values = self
            .cf
            .real_at(self.component, psi)
            .iter()
            .map(|v| v / self.peak)
            .collect();
        if self.arrows {
            let [cr, _, cz] = self.kind.components();
            f.arrows = Some(Arrows {
                vr: self.cf.real_at(cr, psi),
                vz: self.cf.real_at(cz, psi),
                scale: self.arrow_scale,
            });
        }
        f.subtitle = self.subtitle(k);
        f.min_sub_lines = self.sub_lines;
        f
    }

    /// The subtitle of frame `k`.
    fn subtitle(&self, k: usize) -> String {
        let mut sub = format!(
            "colour: {} (real field) at t = {}/{} T",
            pretty(self.component),
            k,
            self.frames
        );
        if self.arrows {
            let s = self.kind.symbol();
            sub += &format!("  ·  arrows: ({s}r, {s}z)");
        }
        sub + &self.template.subtitle
    }

    /// Writes the frames as `frame_000.png`, `frame_001.png`, … in
    /// folder `dir` (created if missing); returns their paths.
    pub fn write_frames(&self, dir: impl AsRef<Path>) -> Result<Vec<PathBuf>, PlotError> {
        let dir = dir.as_ref();
        std::fs::create_dir_all(dir).map_err(|source| PlotError::Write {
            path: dir.to_path_buf(),
            source,
        })?;
        (0..self.frames)
            .map(|k| self.frame(k).write(dir.join(format!("frame_{k:03}.png"))))
            .collect()
    }

    /// Writes the frames as one looping animated GIF at `path` (parent
    /// folders are created).
    pub fn write_gif(&self, path: impl AsRef<Path>) -> Result<PathBuf, PlotError> {
        let path = path.as_ref();
        super::prepare(path)?;
        let err = |e: &dyn std::fmt::Display| PlotError::Draw {
            path: path.to_path_buf(),
            message: e.to_string(),
        };
        let (w, h) = self.frame(0).size();
        let mut gif = BitMapBackend::gif(path, (w, h), self.frame_ms).map_err(|e| err(&e))?;
        for k in 0..self.frames {
            let pic = self.frame(k).render()?;
            gif.blit_bitmap((0, 0), (w, h), &pic.rgb)
                .map_err(|e| err(&e))?;
            gif.present().map_err(|e| err(&e))?;
        }
        Ok(path.to_path_buf())
    }
}

/// "Ez", "Eφ", … for titles.
fn pretty(c: Component) -> &'static str {
    match c {
        Component::Er => "Er",
        Component::Ephi => "Eφ",
        Component::Ez => "Ez",
        Component::Hr => "Hr",
        Component::Hphi => "Hφ",
        Component::Hz => "Hz",
    }
}
