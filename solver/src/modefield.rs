//! The field of each mode at its own frequency, by a running Fourier
//! transform over the ring-down, and the mode's name from it.
//!
//! # Phasor convention
//! Engineering time convention: a field component u(t) = Re{U e^{jωt}}, so
//! U = (2/N) Σ_n u(t_n) e^{−jωt_n} over the samples of the ring-down. E is
//! sampled at whole steps and H half a step earlier, so H's sum carries that
//! time. For a decaying mode the sum weights the early ring-down most; the
//! pattern is the mode's, other modes leak in by about their amplitude ratio
//! divided by |Δω|·T. Accumulation is on the probe sampling (every
//! `decimation` steps), which aliases nothing into the band by construction
//! of the plan.
//!
//! An accumulator is opened for each mode the first harmonic-inversion
//! check finds (and for each new one later), so the transform covers the
//! ring-down from that check on; memory is capped (see [`MAX_BYTES`]).
use crate::fields::Fields;
use lathe_mesh::Component;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Most bytes the accumulators of one run may hold.
pub const MAX_BYTES: usize = 1 << 30;

/// The complex field of one mode: six components on their own Yee
/// positions, same shapes as [`Fields`], phasors U of u = Re{U e^{jωt}}.
#[derive(Debug, Clone, PartialEq)]
pub struct ModeField {
    /// Frequency the transform was taken at, Hz.
    pub freq_hz: f64,
    /// Samples summed.
    pub samples: usize,
    /// The six components, in the order of [`Component::ALL`].
    pub components: Vec<Vec<Complex64>>,
}

impl ModeField {
    /// The phasors of component `c`.
    pub fn get(&self, c: Component) -> &[Complex64] {
        let k = Component::ALL
            .iter()
            .position(|&x| x == c)
            .expect("a component");
        &self.components[k]
    }
}

/// A running transform at one frequency.
#[derive(Debug, Clone)]
pub(crate) struct Accumulator {
    pub freq_hz: f64,
    samples: usize,
    sums: Vec<Vec<Complex64>>,
}

impl Accumulator {
    pub fn new(freq_hz: f64, f: &Fields) -> Accumulator {
        Accumulator {
            freq_hz,
            samples: 0,
            sums: Component::ALL
                .iter()
                .map(|&c| vec![Complex64::new(0.0, 0.0); f.get(c).len()])
                .collect(),
        }
    }

    /// Samples summed so far.
    pub fn samples(&self) -> usize {
        self.samples
    }

    /// Adds the fields at time `t` (E; H at t − dt/2).
    pub fn add(&mut self, f: &Fields, t: f64, dt: f64) {
        let w = 2.0 * PI * self.freq_hz;
        let pe = Complex64::from_polar(1.0, -w * t);
        let ph = Complex64::from_polar(1.0, -w * (t - 0.5 * dt));
        for (k, &c) in Component::ALL.iter().enumerate() {
            let p = if c.is_electric() { pe } else { ph };
            for (s, &u) in self.sums[k].iter_mut().zip(f.get(c)) {
                *s += p * u;
            }
        }
        self.samples += 1;
    }

    pub fn finish(&self) -> ModeField {
        let scale = 2.0 / self.samples.max(1) as f64;
        ModeField {
            freq_hz: self.freq_hz,
            samples: self.samples,
            components: self
                .sums
                .iter()
                .map(|v| v.iter().map(|x| x * scale).collect())
                .collect(),
        }
    }
}
