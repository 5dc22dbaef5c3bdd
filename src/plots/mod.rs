//! Pictures of a run: field maps of a mode, an animation of one period,
//! probe spectra, and radiation-pattern charts.
//!
//! Every picture is a value that implements [`Figure`]: build it from the
//! run (or from plain data), then [`Figure::write`] it to a `.png` or
//! `.svg` file, or [`Figure::render`] it to pixels in memory.
//!
//! | picture | built by | shows |
//! |---|---|---|
//! | field map | [`FieldMap::new`] | one mode over the (r, z) half-plane (or mirrored to −r … r): amplitude as colour, in-plane direction as arrows, bodies and walls |
//! | animation | [`Animation::new`] | one period of the real field Re{U e^{jωt}} of one component, signed, as PNG frames or an animated GIF |
//! | probe spectrum | [`Spectrum::new`] | \|FFT\| of each probe signal in dB over the search band, each mode marked |
//! | polar cut | [`PolarCut::new`] | co- and cross-polar dB against θ on a polar chart |
//! | directivity map | [`DirectivityMap::new`] | dBi over (θ, φ) as colour |
//!
//! [`write_study`] writes the standard set for a whole study (a spectrum
//! per run, a map per mode, optionally animations) into one folder.
//!
//! ```no_run
//! use lathe::plots::{Figure, FieldMap, MapOptions, ModeScene, Spectrum, SpectrumOptions};
//! # fn demo(run: &lathe::solver::RunOutput, s: &lathe::scenario::Scenario) -> Result<(), lathe::plots::PlotError> {
//! let scene = ModeScene::from_run(run, 0, &s.bodies)?;
//! FieldMap::new(&scene, &MapOptions::default())?.write("plots/mode0.png")?;
//! Spectrum::new(run, (s.f_min, s.f_max), &SpectrumOptions::default())?.write("plots/spectrum.png")?;
//! # Ok(()) }
//! ```
//!
//! # Conventions
//! SI inside; axes in mm, frequencies in GHz. Phasors u(t) = Re{U e^{jωt}};
//! E_r, E_z, H_φ ∝ cos mφ and E_φ, H_r, H_z ∝ sin mφ. Field amplitudes are in
//! the solver's arbitrary scale, so maps are normalised to their largest
//! value in the physical region (absorber cells excluded). Colour maps are
//! our own, built in Oklab ([`colour`]). Text uses the bundled Noto Sans
//! font, registered on first use, so nothing depends on the fonts of the
//! system. SVG output draws a filled map as at most 5000 rectangles
//! ([`MapOptions::svg_blocks`] for field maps), sampled at each block's
//! centre, which keeps a file near 0.5 MB; PNG output samples every pixel.
//!
//! # Errors
//! Every function returns [`PlotError`]; a file that cannot be written is
//! reported with its path.
mod animation;
pub mod colour;
mod draw;
pub mod field;
mod field_map;
mod pattern;
mod scene;
mod set;
mod spectrum;

pub use animation::{Animation, AnimationOptions};
pub use colour::ColourMap;
pub use field::{CentredField, FieldKind, Shown};
pub use field_map::{AbsorberView, FieldMap, MapOptions};
pub use pattern::{DirectivityMap, PolarCut};
pub use scene::ModeScene;
pub use set::{file_label, write_study, SetOptions, Written};
pub use spectrum::{probe_spectrum, ProbeSpectrum, Spectrum, SpectrumOptions, Window};

use plotters::prelude::*;
use std::path::{Path, PathBuf};

/// What stops a picture.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// A file or folder could not be created or written.
    #[error("cannot write {}: {source}", path.display())]
    Write {
        /// The path that could not be written.
        path: PathBuf,
        /// Why.
        #[source]
        source: std::io::Error,
    },
    /// The drawing or encoding library failed on this file.
    #[error("cannot draw {}: {message}", path.display())]
    Draw {
        /// The file being drawn.
        path: PathBuf,
        /// The library's message.
        message: String,
    },
    /// The file name has no picture format this module writes.
    #[error("cannot write {}: unknown picture format; use a name ending in .png or .svg", path.display())]
    Format {
        /// The file name given.
        path: PathBuf,
    },
    /// There is no such mode in the run.
    #[error("no mode {index}: the run found {count} modes")]
    NoMode {
        /// The index asked for.
        index: usize,
        /// Modes in the run.
        count: usize,
    },
    /// The run kept no field for this mode.
    #[error("mode {label} at {freq_ghz:.6} GHz has no field: the run kept none (memory cap or no running transform)")]
    NoField {
        /// The mode's label (or its index when unlabelled).
        label: String,
        /// Its frequency, GHz.
        freq_ghz: f64,
    },
    /// Input data that cannot be drawn, quoting what is wrong.
    #[error("{what}: {message}")]
    Input {
        /// Which input.
        what: String,
        /// What is wrong with it, quoting the value.
        message: String,
    },
}

/// A rendered picture: 8-bit RGB pixels, row by row from the top.
#[derive(Debug, Clone, PartialEq)]
pub struct Picture {
    /// Width, pixels.
    pub width: u32,
    /// Height, pixels.
    pub height: u32,
    /// `3·width·height` bytes, R G B per pixel.
    pub rgb: Vec<u8>,
    /// Where the data area lies, for pictures that have one in (r, z).
    pub frame: Option<PlotFrame>,
}

impl Picture {
    /// The colour of pixel (x, y), or `None` outside the picture.
    pub fn pixel(&self, x: i32, y: i32) -> Option<[u8; 3]> {
        if x < 0 || y < 0 || x as u32 >= self.width || y as u32 >= self.height {
            return None;
        }
        let k = 3 * (y as usize * self.width as usize + x as usize);
        Some([self.rgb[k], self.rgb[k + 1], self.rgb[k + 2]])
    }

    /// Writes the pixels as a PNG file (parent folders are created).
    pub fn write_png(&self, path: impl AsRef<Path>) -> Result<(), PlotError> {
        let path = path.as_ref();
        prepare(path)?;
        let draw_err = |e: &dyn std::fmt::Display| PlotError::Draw {
            path: path.to_path_buf(),
            message: e.to_string(),
        };
        let mut be = BitMapBackend::new(path, (self.width, self.height));
        be.blit_bitmap((0, 0), (self.width, self.height), &self.rgb)
            .map_err(|e| draw_err(&e))?;
        be.present().map_err(|e| draw_err(&e))?;
        Ok(())
    }
}

/// The data area of a picture and its coordinates: pixel `left` shows
/// x = `x_mm.0`, pixel `right` x = `x_mm.1`; pixel `top` z = `z_mm.1`,
/// `bottom` z = `z_mm.0`. In a field map these are r (x = ±r when
/// mirrored) and z in mm; a spectrum uses them for f in GHz and dB, a
/// directivity map for θ and φ in degrees.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotFrame {
    /// Pixel column of the left edge.
    pub left: i32,
    /// Pixel column of the right edge.
    pub right: i32,
    /// Pixel row of the top edge.
    pub top: i32,
    /// Pixel row of the bottom edge.
    pub bottom: i32,
    /// x at the left and right edges, mm.
    pub x_mm: (f64, f64),
    /// z at the bottom and top edges, mm.
    pub z_mm: (f64, f64),
}

impl PlotFrame {
    /// The pixel showing (x, z), both in mm.
    pub fn pixel_of(&self, x_mm: f64, z_mm: f64) -> (i32, i32) {
        let u = (x_mm - self.x_mm.0) / (self.x_mm.1 - self.x_mm.0);
        let w = (z_mm - self.z_mm.0) / (self.z_mm.1 - self.z_mm.0);
        (
            (self.left as f64 + u * (self.right - self.left) as f64).round() as i32,
            (self.bottom as f64 - w * (self.bottom - self.top) as f64).round() as i32,
        )
    }

    /// The (x, z) in mm a pixel shows.
    pub fn coords_of(&self, px: i32, py: i32) -> (f64, f64) {
        let u = (px - self.left) as f64 / (self.right - self.left) as f64;
        let w = (self.bottom - py) as f64 / (self.bottom - self.top) as f64;
        (
            self.x_mm.0 + u * (self.x_mm.1 - self.x_mm.0),
            self.z_mm.0 + w * (self.z_mm.1 - self.z_mm.0),
        )
    }
}

/// A picture that can be drawn to a PNG or SVG file, or to memory.
///
/// Implemented by [`FieldMap`], [`Spectrum`], [`PolarCut`] and
/// [`DirectivityMap`].
pub trait Figure: draw::Draw {
    /// Size in pixels (width, height).
    fn size(&self) -> (u32, u32) {
        self.canvas_size()
    }

    /// Draws the picture to pixels in memory (the same pixels
    /// [`Figure::write`] puts in a PNG).
    fn render(&self) -> Result<Picture, PlotError> {
        draw::render(self, Path::new("<memory>"))
    }

    /// Writes the picture to `path`: PNG or SVG by the name's extension
    /// (`.png`, `.svg`, any case). Parent folders are created. Returns the
    /// path written.
    fn write(&self, path: impl AsRef<Path>) -> Result<PathBuf, PlotError> {
        let path = path.as_ref();
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase());
        match ext.as_deref() {
            Some("png") => draw::render(self, path)?.write_png(path)?,
            Some("svg") => draw::write_svg(self, path)?,
            _ => {
                return Err(PlotError::Format {
                    path: path.to_path_buf(),
                })
            }
        }
        Ok(path.to_path_buf())
    }
}

impl<T: draw::Draw> Figure for T {}

/// Creates the parent folders of `path` and checks that the file itself
/// can be created, so that the error names the path.
fn prepare(path: &Path) -> Result<(), PlotError> {
    let err = |source| PlotError::Write {
        path: path.to_path_buf(),
        source,
    };
    if let Some(parent) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
        std::fs::create_dir_all(parent).map_err(err)?;
    }
    std::fs::File::create(path).map_err(err)?;
    Ok(())
}
