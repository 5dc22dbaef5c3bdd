//! The spectrum of each probe signal, with the modes harmonic inversion
//! found marked on it.
//!
//! The ring-down x_n = x(t₀ + nΔt), n = 0 … N−1, is multiplied by a
//! window w_n — Hann, w_n = sin²(πn/(N−1)) (the default: a high-Q mode
//! has not decayed when the record ends, and the abrupt end would spread
//! its peak into sidelobes 13 dB down that hide weaker modes), or
//! rectangular, w = 1 (better for strongly damped signals, which are
//! largest at the start the taper suppresses) — zero-padded to P = the power of two at or above
//! `pad_factor`·N, and transformed, X_k = Σ w_n x_n e^{−2πjkn/P} (radix-2
//! FFT, checked against the direct sum in the tests), at frequencies
//! f_k = k/(PΔt). The picture shows 20 log₁₀|X_k| in dB relative to the
//! largest value of any probe in the band. Zero-padding interpolates the
//! spectrum between the N-point bins (resolution 1/(NΔt) is not improved).
//!
//! The marks are at the modes' reported frequencies, which are corrected
//! for the leapfrog's time dispersion (`lathe_solver::modes`): the peaks of
//! the raw signal sit higher by about (2πfΔt)²/24 relative, less than
//! 0.1 % at the default resolution.
use super::colour::line_colour;
use super::draw::{
    de, nice_ticks, polyline, rgb, text, text_at, text_width, tick_label, Clip, Draw, Raster,
    FAMILY,
};
use super::{PlotError, PlotFrame};
use lathe_solver::{Mode, RunOutput};
use num_complex::Complex64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// The taper applied before the transform.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Window {
    /// No taper.
    Rectangular,
    /// w_n = sin²(πn/(N−1)).
    Hann,
}

/// Options of a spectrum plot.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectrumOptions {
    /// Window (default Hann).
    pub window: Window,
    /// Zero-padding: transform length at least this times the signal
    /// length (default 8; the length is capped at 2²³ points).
    pub pad_factor: usize,
    /// Decibels shown below the largest peak (default 100).
    pub range_db: f64,
    /// Picture size, pixels (default 1000 × 580).
    pub size: (u32, u32),
}

impl Default for SpectrumOptions {
    fn default() -> Self {
        SpectrumOptions {
            window: Window::Hann,
            pad_factor: 8,
            range_db: 100.0,
            size: (1000, 580),
        }
    }
}

/// The amplitude spectrum of one signal over a band.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeSpectrum {
    /// Bin frequencies in the band, Hz, increasing.
    pub freq_hz: Vec<f64>,
    /// |X_k| (see the module docs), in the signal's units times samples.
    pub magnitude: Vec<f64>,
    /// Transform length P.
    pub length: usize,
}

/// Largest transform length.
const MAX_LEN: usize = 1 << 23;

/// The spectrum of `signal` (spacing `sample_dt`, s) over `band_hz`.
/// Errors: empty or non-finite signal, a spacing that is not positive, or
/// a band that is empty or beyond the Nyquist frequency 1/(2Δt).
pub fn probe_spectrum(
    signal: &[f64],
    sample_dt: f64,
    band_hz: (f64, f64),
    window: Window,
    pad_factor: usize,
) -> Result<ProbeSpectrum, PlotError> {
    let bad = |what: &str, message: String| PlotError::Input {
        what: what.into(),
        message,
    };
    if signal.len() < 2 {
        return Err(bad(
            "probe signal",
            format!("{} samples; at least 2 are needed", signal.len()),
        ));
    }
    if let Some(k) = signal.iter().position(|x| !x.is_finite()) {
        return Err(bad("probe signal", format!("sample {k} is {}", signal[k])));
    }
    if !(sample_dt > 0.0 && sample_dt.is_finite()) {
        return Err(bad(
            "sample spacing",
            format!("{sample_dt} s; it must be positive"),
        ));
    }
    let nyquist = 0.5 / sample_dt;
    let (f0, f1) = band_hz;
    if !(f0 >= 0.0 && f1 > f0 && f1 <= nyquist * (1.0 + 1e-12)) {
        return Err(bad(
            "band",
            format!(
                "{:.6} … {:.6} GHz; it must be increasing, ≥ 0 and below the Nyquist frequency {:.6} GHz",
                f0 / 1e9,
                f1 / 1e9,
                nyquist / 1e9
            ),
        ));
    }
    let n = signal.len();
    let len = (pad_factor.max(1) * n)
        .next_power_of_two()
        .min(MAX_LEN)
        .max(n.next_power_of_two());
    let mut buf: Vec<Complex64> = vec![Complex64::new(0.0, 0.0); len];
    for (k, (b, &x)) in buf.iter_mut().zip(signal).enumerate() {
        let w = match window {
            Window::Rectangular => 1.0,
            Window::Hann => (std::f64::consts::PI * k as f64 / (n - 1) as f64)
                .sin()
                .powi(2),
        };
        *b = Complex64::new(w * x, 0.0);
    }
    fft(&mut buf);
    let df = 1.0 / (len as f64 * sample_dt);
    let k0 = (f0 / df).ceil() as usize;
    let k1 = ((f1 / df).floor() as usize).min(len / 2);
    Ok(ProbeSpectrum {
        freq_hz: (k0..=k1).map(|k| k as f64 * df).collect(),
        magnitude: (k0..=k1).map(|k| buf[k].norm()).collect(),
        length: len,
    })
}

/// In-place radix-2 decimation-in-time FFT, X_k = Σ x_n e^{−2πjkn/N};
/// `x.len()` must be a power of two.
fn fft(x: &mut [Complex64]) {
    let n = x.len();
    assert!(
        n.is_power_of_two(),
        "expected a power-of-two length, got {n}"
    );
    let mut j = 0;
    for i in 1..n {
        let mut bit = n >> 1;
        while j & bit != 0 {
            j ^= bit;
            bit >>= 1;
        }
        j |= bit;
        if i < j {
            x.swap(i, j);
        }
    }
    let mut size = 2;
    while size <= n {
        let step = Complex64::from_polar(1.0, -2.0 * std::f64::consts::PI / size as f64);
        for start in (0..n).step_by(size) {
            let mut w = Complex64::new(1.0, 0.0);
            for k in 0..size / 2 {
                let a = x[start + k];
                let b = x[start + k + size / 2] * w;
                x[start + k] = a + b;
                x[start + k + size / 2] = a - b;
                w *= step;
            }
        }
        size <<= 1;
    }
}

/// The probe spectra of a run with its modes marked.
#[derive(Debug, Clone, PartialEq)]
pub struct Spectrum {
    curves: Vec<(String, Vec<f64>, Vec<f64>)>,
    marks: Vec<(f64, String)>,
    band: (f64, f64),
    range_db: f64,
    size: (u32, u32),
    title: String,
    subtitle: String,
    legend_rows: usize,
}

/// The legend's items: each probe, then the mode mark.
const MARK_TEXT: &str = "mode (harmonic inversion)";

/// Where each legend item starts, (x, row), for a picture `width` wide.
fn legend_layout(names: &[&str], width: f64) -> Vec<(f64, usize)> {
    let mut out = Vec::new();
    let (mut x, mut row) = (12.0, 0);
    for n in names {
        let w = 36.0 + text_width(n, 16.0);
        if x + w > width - 12.0 && x > 12.0 {
            x = 12.0;
            row += 1;
        }
        out.push((x, row));
        x += w + 22.0;
    }
    out
}

impl Spectrum {
    /// The spectra of `run`'s probe signals over `band_hz` (the search
    /// band, Hz) with its modes marked.
    pub fn new(
        run: &RunOutput,
        band_hz: (f64, f64),
        opts: &SpectrumOptions,
    ) -> Result<Spectrum, PlotError> {
        Spectrum::from_signals(
            &run.signals,
            run.report.sample_dt,
            &run.modes,
            band_hz,
            opts,
            &format!("Probe spectra, m = {}", run.report.m),
        )
    }

    /// The same from plain data: `signals` sampled every `sample_dt` s,
    /// `modes` to mark, `title` on top.
    pub fn from_signals(
        signals: &[Vec<f64>],
        sample_dt: f64,
        modes: &[Mode],
        band_hz: (f64, f64),
        opts: &SpectrumOptions,
        title: &str,
    ) -> Result<Spectrum, PlotError> {
        if signals.is_empty() {
            return Err(PlotError::Input {
                what: "probe signals".into(),
                message: "none given".into(),
            });
        }
        if !(opts.range_db > 0.0 && opts.range_db.is_finite()) {
            return Err(PlotError::Input {
                what: "range_db".into(),
                message: format!("{}; it must be positive", opts.range_db),
            });
        }
        let spectra: Vec<ProbeSpectrum> = signals
            .iter()
            .map(|s| probe_spectrum(s, sample_dt, band_hz, opts.window, opts.pad_factor))
            .collect::<Result<_, _>>()?;
        let peak = spectra
            .iter()
            .flat_map(|s| s.magnitude.iter())
            .fold(0.0f64, |a, &b| a.max(b));
        let floor = -opts.range_db;
        let curves = spectra
            .iter()
            .enumerate()
            .map(|(k, s)| {
                let db = s
                    .magnitude
                    .iter()
                    .map(|&a| {
                        if peak > 0.0 && a > 0.0 {
                            (20.0 * (a / peak).log10()).max(floor)
                        } else {
                            floor
                        }
                    })
                    .collect();
                (format!("probe {}", k + 1), s.freq_hz.clone(), db)
            })
            .collect();
        let marks = modes
            .iter()
            .filter(|m| m.freq_hz >= band_hz.0 && m.freq_hz <= band_hz.1)
            .map(|m| {
                let label = if m.label.is_empty() {
                    format!("{:.4} GHz", m.freq_hz / 1e9)
                } else {
                    m.label.clone()
                };
                (m.freq_hz, label)
            })
            .collect();
        let n = signals[0].len();
        let size = (opts.size.0.max(480), opts.size.1.max(320));
        let names: Vec<String> = (0..signals.len())
            .map(|k| format!("probe {}", k + 1))
            .collect();
        let mut items: Vec<&str> = names.iter().map(|s| s.as_str()).collect();
        items.push(MARK_TEXT);
        let legend_rows = legend_layout(&items, size.0 as f64)
            .last()
            .map_or(1, |l| l.1 + 1);
        let win = match opts.window {
            Window::Rectangular => "no window",
            Window::Hann => "Hann window",
        };
        Ok(Spectrum {
            curves,
            marks,
            band: band_hz,
            range_db: opts.range_db,
            size,
            legend_rows,
            title: title.to_string(),
            subtitle: format!(
                "|FFT| of the ring-down: {n} samples, {win}, zero-padded to {}; dB below the largest peak of any probe",
                spectra[0].length
            ),
        })
    }
}

impl Draw for Spectrum {
    fn canvas_size(&self) -> (u32, u32) {
        self.size
    }

    fn draw_on<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        _raster: Raster,
    ) -> Result<Option<PlotFrame>, String> {
        root.draw_text(&self.title, &text(24.0), (12, 10))
            .map_err(de)?;
        root.draw_text(&self.subtitle, &text(15.0), (12, 42))
            .map_err(de)?;
        let (_, area) = root.split_vertically(70 + 24 * self.legend_rows as i32);
        let (f0, f1) = (self.band.0 / 1e9, self.band.1 / 1e9);
        let mut chart = ChartBuilder::on(&area)
            .margin(12)
            .margin_right(24)
            .x_label_area_size(56)
            .y_label_area_size(76)
            .build_cartesian_2d(f0..f1, -self.range_db..0.0)
            .map_err(de)?;
        let ft = nice_ticks(f0, f1, 8);
        let fs = if ft.len() > 1 { ft[1] - ft[0] } else { 1.0 };
        let ffmt = |v: &f64| tick_label(*v, fs);
        let dfmt = |v: &f64| tick_label(*v, 10.0);
        chart
            .configure_mesh()
            .x_labels(ft.len().max(2))
            .y_labels(((self.range_db / 10.0) as usize + 1).clamp(3, 12))
            .x_label_formatter(&ffmt)
            .y_label_formatter(&dfmt)
            .light_line_style(TRANSPARENT)
            .bold_line_style(RGBColor(225, 225, 225))
            .x_desc("f (GHz)")
            .y_desc("|FFT| (dB)")
            .label_style((FAMILY, 17.0))
            .axis_desc_style((FAMILY, 19.0))
            .draw()
            .map_err(de)?;
        let (left, bottom) = chart.backend_coord(&(f0, -self.range_db));
        let (right, top) = chart.backend_coord(&(f1, 0.0));
        let frame = PlotFrame {
            left,
            right,
            top,
            bottom,
            x_mm: (f0, f1),
            z_mm: (-self.range_db, 0.0),
        };
        let clip = Clip {
            x0: left as f64,
            y0: top as f64,
            x1: right as f64,
            y1: bottom as f64,
        };
        let px = |f: f64, db: f64| {
            let (a, b) = frame.pixel_of(f, db);
            (a as f64, b as f64)
        };
        // Mode marks under the curves.
        for (f, _) in &self.marks {
            let f = f / 1e9;
            polyline(
                root,
                &[px(f, -self.range_db), px(f, 0.0)],
                &clip,
                RGBColor(90, 90, 90).stroke_width(1),
                Some((6, 4)),
            )?;
        }
        // Curves: the largest value of each pixel column keeps every peak.
        for (k, (_, fr, db)) in self.curves.iter().enumerate() {
            let mut cols: Vec<(i32, f64)> = Vec::new();
            for (f, d) in fr.iter().zip(db) {
                let x = frame.pixel_of(f / 1e9, 0.0).0;
                match cols.last_mut() {
                    Some(c) if c.0 == x => c.1 = c.1.max(*d),
                    _ => cols.push((x, *d)),
                }
            }
            let pts: Vec<(f64, f64)> = cols.iter().map(|&(x, d)| (x as f64, px(f0, d).1)).collect();
            polyline(root, &pts, &clip, rgb(line_colour(k)).stroke_width(2), None)?;
        }
        // Labels of the marks, written upwards beside each line on a
        // white patch.
        let style = text_at(16.0, HPos::Right, VPos::Top).transform(FontTransform::Rotate270);
        for (f, label) in &self.marks {
            let (x, _) = frame.pixel_of(f / 1e9, 0.0);
            let (tw, th) = root.estimate_text_size(label, &text(16.0)).map_err(de)?;
            root.draw(&Rectangle::new(
                [(x + 2, top + 4), (x + 4 + th as i32, top + 8 + tw as i32)],
                WHITE.mix(0.8).filled(),
            ))
            .map_err(de)?;
            root.draw_text(label, &style, (x + 3, top + 6))
                .map_err(de)?;
        }
        // Legend: rows under the subtitle.
        let mut items: Vec<&str> = self.curves.iter().map(|c| c.0.as_str()).collect();
        items.push(MARK_TEXT);
        let st = text_at(16.0, HPos::Left, VPos::Center);
        let all = Clip {
            x0: 0.0,
            y0: 0.0,
            x1: 1e9,
            y1: 1e9,
        };
        for (k, (name, (x, row))) in items
            .iter()
            .zip(legend_layout(&items, self.size.0 as f64))
            .enumerate()
        {
            let y = 80.0 + 24.0 * row as f64;
            let seg = [(x, y), (x + 28.0, y)];
            if k < self.curves.len() {
                polyline(root, &seg, &all, rgb(line_colour(k)).stroke_width(3), None)?;
            } else {
                polyline(
                    root,
                    &seg,
                    &all,
                    RGBColor(90, 90, 90).stroke_width(1),
                    Some((6, 4)),
                )?;
            }
            root.draw_text(name, &st, (x as i32 + 36, y as i32))
                .map_err(de)?;
        }
        Ok(Some(frame))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fft_matches_the_direct_sum() {
        // Reference: the DFT's definition, summed directly.
        let x: Vec<Complex64> = (0..64)
            .map(|n| {
                Complex64::new(
                    (0.3 * n as f64).sin() + 0.1 * n as f64,
                    (0.7 * n as f64).cos(),
                )
            })
            .collect();
        let mut y = x.clone();
        fft(&mut y);
        for (k, yk) in y.iter().enumerate() {
            let d: Complex64 = x
                .iter()
                .enumerate()
                .map(|(n, xn)| {
                    xn * Complex64::from_polar(
                        1.0,
                        -2.0 * std::f64::consts::PI * (k * n) as f64 / 64.0,
                    )
                })
                .sum();
            assert!((yk - d).norm() < 1e-9 * (1.0 + d.norm()), "bin {k}");
        }
    }

    #[test]
    fn a_decaying_tone_peaks_at_its_frequency() {
        let (f, dt) = (3.3e9, 1e-11);
        let s: Vec<f64> = (0..2000)
            .map(|n| {
                let t = n as f64 * dt;
                (-2e8 * t).exp() * (2.0 * std::f64::consts::PI * f * t).cos()
            })
            .collect();
        for w in [Window::Rectangular, Window::Hann] {
            let sp = probe_spectrum(&s, dt, (2e9, 5e9), w, 8).unwrap();
            let k = (0..sp.magnitude.len())
                .max_by(|&a, &b| sp.magnitude[a].total_cmp(&sp.magnitude[b]))
                .unwrap();
            let bin = 1.0 / (sp.length as f64 * dt);
            assert!((sp.freq_hz[k] - f).abs() <= bin, "{w:?}: {}", sp.freq_hz[k]);
        }
    }

    #[test]
    fn a_band_past_nyquist_is_an_error() {
        let e = probe_spectrum(&[0.0, 1.0, 0.0], 1e-10, (1e9, 6e9), Window::Hann, 1);
        assert!(e.unwrap_err().to_string().contains("Nyquist"));
    }
}
