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
//!
//! # Separating the modes (`demix`)
//! A plain transform at ω_l also holds every other mode k, weighted by how
//! little the sum cancels it (about A_k/(|ω_k − ω_l| T)): a weakly excited
//! mode's map would show its strong neighbours. Since harmonic inversion
//! gives every pole s_k = −γ_k + jω_k, the mixing is known exactly. With
//! the field at a node after the pulse u(t) = Σ_k Re{A_k e^{s_k (t − τ_k)}}
//! (τ_k the first sample of mode k's transform, so A_k is its phasor
//! then), each transform is
//!
//! ```text
//! S_l = Σ_n u(t_n) e^{−jω_l t_n} = ½ Σ_k [A_k G_lk + A_k* H_lk],
//! G_lk = Σ_n e^{s_k (t_n − τ_k) − jω_l t_n},  H_lk: s_k → s_k*,
//! ```
//!
//! sums over transform l's own samples t_n = t_l + nΔ, in closed form as
//! geometric series. With the conjugate equations this is a 2K × 2K
//! linear system, the same at every node (H samples are taken half a step
//! earlier: its own system). It is inverted once and applied node by node.
//! Modes the inversion did not report (outside the band, or too weak)
//! cannot be removed and leak in as before. When the system is
//! ill-conditioned (two modes closer than the transforms can separate) the
//! plain transforms are kept.
use crate::fields::Fields;
use lathe_mesh::Component;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Most bytes the accumulators of one run may hold.
pub const MAX_BYTES: usize = 1 << 30;

/// The complex field of one mode: six components on their own Yee
/// positions, same shapes as [`Fields`], phasors U of u = Re{U e^{jωt}}
/// at the first sample of the mode's transform (E and H at the same
/// instant), separated from the other modes of the run (module docs); the
/// overall amplitude and phase are arbitrary.
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
    /// Time of the first sample (E's time; H's is half a step earlier).
    first: f64,
    /// Spacing of the samples.
    spacing: f64,
    sums: Vec<Vec<Complex64>>,
}

impl Accumulator {
    pub fn new(freq_hz: f64, f: &Fields) -> Accumulator {
        Accumulator {
            freq_hz,
            samples: 0,
            first: 0.0,
            spacing: 0.0,
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

    /// Adds the fields at time `t` (E; H at t − dt/2). Samples must come at
    /// a fixed spacing (the run's probe sampling).
    pub fn add(&mut self, f: &Fields, t: f64, dt: f64) {
        match self.samples {
            0 => self.first = t,
            1 => self.spacing = t - self.first,
            _ => {}
        }
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

impl ModeField {
    /// Writes the derived axis values of order m = 1 (e_φ(0) = −e_r(0),
    /// h_r(0) = h_φ(0), extrapolated as in [`crate::kernel::fill_axis`],
    /// which is linear, so it applies to the phasors as to real fields).
    pub fn fill_axis(&mut self, nr: usize, nz: usize, m: u32) {
        if m != 1 {
            return;
        }
        let nj1 = nz + 1;
        let at0 = |a: Complex64, b: Complex64| if nr >= 2 { (9.0 * a - b) / 8.0 } else { a };
        let k = |c: Component| {
            Component::ALL
                .iter()
                .position(|&x| x == c)
                .expect("a component")
        };
        let zero = Complex64::new(0.0, 0.0);
        for j in 0..nj1 {
            let er = &self.components[k(Component::Er)];
            let b = if nr >= 2 { er[nj1 + j] } else { zero };
            let v = -at0(er[j], b);
            self.components[k(Component::Ephi)][j] = v;
        }
        for j in 0..nz {
            let hp = &self.components[k(Component::Hphi)];
            let b = if nr >= 2 { hp[nz + j] } else { zero };
            let v = at0(hp[j], b);
            self.components[k(Component::Hr)][j] = v;
        }
    }
}

/// One mode for [`demix`]: its transform and its pole s = −γ + jω (the
/// frequency at which it rings on the grid), 1/s.
pub(crate) struct Pole<'a> {
    pub acc: &'a Accumulator,
    pub s: Complex64,
}

/// Condition number above which [`demix`] keeps the plain transforms.
const MAX_CONDITION: f64 = 1e8;

/// The fields of `poles`' modes with every other listed mode's share
/// removed (module docs: "Separating the modes"), each the phasor at its
/// transform's first sample; `None` when the system is ill-conditioned or
/// a transform is too short to be placed in time.
pub(crate) fn demix(poles: &[Pole], dt: f64) -> Option<Vec<ModeField>> {
    let k = poles.len();
    if k == 0 {
        return Some(Vec::new());
    }
    if poles
        .iter()
        .any(|p| p.acc.samples < 2 || p.acc.spacing <= 0.0)
    {
        return None;
    }
    let inverse = |shift: f64| -> Option<Vec<Vec<Complex64>>> {
        let n = 2 * k;
        let mut a = vec![vec![Complex64::new(0.0, 0.0); n]; n];
        for (l, pl) in poles.iter().enumerate() {
            let w = 2.0 * PI * pl.acc.freq_hz;
            let t0 = pl.acc.first - shift;
            for (kk, pk) in poles.iter().enumerate() {
                let tau = pk.acc.first;
                let g = series(pk.s, w, t0, tau, pl.acc.spacing, pl.acc.samples)?;
                let h = series(pk.s.conj(), w, t0, tau, pl.acc.spacing, pl.acc.samples)?;
                // Row l: S_l = ½ (G A + H A*); row K + l: S_l* = ½ (H* A + G* A*).
                a[l][kk] = 0.5 * g;
                a[l][k + kk] = 0.5 * h;
                a[k + l][kk] = 0.5 * h.conj();
                a[k + l][k + kk] = 0.5 * g.conj();
            }
        }
        invert(a)
    };
    let inv_e = inverse(0.0)?;
    let inv_h = inverse(0.5 * dt)?;
    let n_comp = Component::ALL.len();
    let mut out: Vec<ModeField> = poles
        .iter()
        .map(|p| ModeField {
            freq_hz: p.acc.freq_hz,
            samples: p.acc.samples,
            components: (0..n_comp)
                .map(|c| vec![Complex64::new(0.0, 0.0); p.acc.sums[c].len()])
                .collect(),
        })
        .collect();
    let mut rhs = vec![Complex64::new(0.0, 0.0); 2 * k];
    for (c, comp) in Component::ALL.iter().enumerate() {
        let inv = if comp.is_electric() { &inv_e } else { &inv_h };
        for node in 0..poles[0].acc.sums[c].len() {
            for (l, p) in poles.iter().enumerate() {
                rhs[l] = p.acc.sums[c][node];
                rhs[k + l] = rhs[l].conj();
            }
            for (kk, mf) in out.iter_mut().enumerate() {
                let mut x = Complex64::new(0.0, 0.0);
                for (q, r) in inv[kk].iter().zip(&rhs) {
                    x += q * r;
                }
                mf.components[c][node] = x;
            }
        }
    }
    Some(out)
}

/// Σ_{n<N} e^{s (t_n − τ) − jω t_n}, t_n = t0 + nΔ, as a geometric series;
/// `None` if it overflows (a strongly damped mode extrapolated far back).
fn series(s: Complex64, w: f64, t0: f64, tau: f64, spacing: f64, n: usize) -> Option<Complex64> {
    let x = (s - Complex64::new(0.0, w)) * spacing;
    let lead = (s * (t0 - tau) - Complex64::new(0.0, w * t0)).exp();
    let sum = if x.norm() < 1e-9 {
        Complex64::new(n as f64, 0.0)
    } else {
        (1.0 - (x * n as f64).exp()) / (1.0 - x.exp())
    };
    let v = lead * sum;
    v.is_finite().then_some(v)
}

/// The inverse of a small dense complex matrix by Gauss–Jordan elimination
/// with partial pivoting; `None` when singular or its condition number
/// (∞-norm) exceeds [`MAX_CONDITION`].
fn invert(mut a: Vec<Vec<Complex64>>) -> Option<Vec<Vec<Complex64>>> {
    let n = a.len();
    let norm = |m: &Vec<Vec<Complex64>>| {
        m.iter()
            .map(|row| row.iter().map(|x| x.norm()).sum::<f64>())
            .fold(0.0, f64::max)
    };
    let a_norm = norm(&a);
    let mut inv: Vec<Vec<Complex64>> = (0..n)
        .map(|i| {
            (0..n)
                .map(|j| Complex64::new(if i == j { 1.0 } else { 0.0 }, 0.0))
                .collect()
        })
        .collect();
    for col in 0..n {
        let piv = (col..n).max_by(|&x, &y| a[x][col].norm().total_cmp(&a[y][col].norm()))?;
        if a[piv][col].norm() == 0.0 {
            return None;
        }
        a.swap(col, piv);
        inv.swap(col, piv);
        let d = a[col][col];
        for j in 0..n {
            a[col][j] /= d;
            inv[col][j] /= d;
        }
        for i in 0..n {
            if i != col {
                let f = a[i][col];
                if f != Complex64::new(0.0, 0.0) {
                    for j in 0..n {
                        let (ac, ic) = (a[col][j], inv[col][j]);
                        a[i][j] -= f * ac;
                        inv[i][j] -= f * ic;
                    }
                }
            }
        }
    }
    let cond = a_norm * norm(&inv);
    (cond.is_finite() && cond < MAX_CONDITION).then_some(inv)
}

#[cfg(test)]
mod tests {
    use super::*;
    use lathe_mesh::Grid;

    /// Two decaying modes at 7.3 and 7.9 GHz (Q 40 and 900) with known
    /// phasors, sampled at the field nodes; the plain transforms mix them,
    /// the separated ones give back each phasor to round-off (an exact
    /// solution: the signal is exactly the model of `demix`).
    #[test]
    fn demix_recovers_the_phasors_of_a_two_mode_signal() {
        let g = Grid::new(1e-3, 0.0, 1e-3, 1e-3).unwrap();
        let mut f = Fields::zeros(&g);
        let dt = 1e-12;
        let spacing = 8.0 * dt;
        let modes = [(7.3e9, 40.0), (7.9e9, 900.0)];
        let s: Vec<Complex64> = modes
            .iter()
            .map(|&(fr, q)| {
                let w = 2.0 * PI * fr;
                Complex64::new(-w / (2.0 * q), w)
            })
            .collect();
        // Phasors at t = 0 of node k of every component: A_mode(k).
        let a = |mode: usize, k: usize| {
            Complex64::from_polar(1.0 + 0.3 * k as f64, 0.7 * k as f64 + 1.9 * mode as f64)
                * if mode == 0 { 1.0 } else { 0.05 }
        };
        let value =
            |t: f64, k: usize| -> f64 { (0..2).map(|md| (a(md, k) * (s[md] * t).exp()).re).sum() };
        let t_open = [0.0, 40.0 * spacing];
        let mut accs = [Accumulator::new(7.31e9, &f), Accumulator::new(7.9e9, &f)];
        for n in 0..3000 {
            let t = n as f64 * spacing;
            for (ci, &c) in Component::ALL.iter().enumerate() {
                let th = if c.is_electric() { t } else { t - 0.5 * dt };
                for (k, x) in f.get_mut(c).iter_mut().enumerate() {
                    *x = value(th, k + 10 * ci);
                }
            }
            for (acc, &t0) in accs.iter_mut().zip(&t_open) {
                if t >= t0 {
                    acc.add(&f, t, dt);
                }
            }
        }
        let poles: Vec<Pole> = accs
            .iter()
            .zip(&s)
            .map(|(acc, &s)| Pole { acc, s })
            .collect();
        let out = demix(&poles, dt).expect("well conditioned");
        for (md, mf) in out.iter().enumerate() {
            for (ci, &c) in Component::ALL.iter().enumerate() {
                for (k, u) in mf.get(c).iter().enumerate() {
                    // Phasor at the transform's first sample τ.
                    let want = a(md, k + 10 * ci) * (s[md] * t_open[md]).exp();
                    assert!(
                        (u - want).norm() < 1e-9 * want.norm().max(1e-3),
                        "mode {md} {c:?}[{k}]: {u} vs {want}"
                    );
                }
            }
        }
        // The plain transform of the weak mode is visibly polluted.
        let plain = accs[1].finish();
        let want = a(1, 0) * (s[1] * t_open[1]).exp();
        let ratio = plain.get(Component::Er)[0].norm() / want.norm();
        assert!((ratio - 1.0).abs() > 0.01, "ratio {ratio}");
    }
}
