//! The time-step limit of the discrete operator, computed for the actual
//! grid, materials, walls and azimuthal order.
//!
//! Eliminating H from the leapfrog scheme gives, for E alone,
//! e_{n+1} − 2e_n + e_{n−1} = −Δt² A e_n with A = ε⁻¹ L μ⁻¹ K (L, K the
//! discrete curls of [`crate::kernel`]). A is self-adjoint and positive in
//! the inner product ⟨x, y⟩ = Σ w ε x y (w the node's volume weight: its
//! radius, half of it on a PMC plane, Δr/8 for the m = 0 axis node), because
//! the kernel's curls are mutual adjoints under those weights. A mode of
//! eigenvalue λ = ω² evolves as e^{±iθn} with sin(θ/2) = ω Δt/2, so the
//! scheme is stable exactly when Δt < 2/√λ_max.
//!
//! λ_max is found by the Lanczos iteration on A in that inner product,
//! applying A matrix-free through the kernel itself (one H update and one E
//! update per iteration, from a seeded random start). The largest Ritz value
//! approaches λ_max from below with an error falling roughly as 1/k² in the
//! iteration count k even when the top of the spectrum is dense; iterating
//! until it changes by less than 1e-7 over ten iterations leaves it well
//! within the safety factor the run applies (see [`crate::plan()`]). With the
//! off-diagonal permittivity coupling at curved interfaces
//! ([`crate::coefficients::Coupling`]) E = N D with N symmetric and positive
//! in the volume weights but not diagonal; the iteration then runs on D,
//! A_D = L μ⁻¹ K N (the same non-zero eigenvalues), self-adjoint in
//! ⟨x, y⟩ = Σ w x (N y), and the estimate matches the dense value to
//! round-off (solver/tests/operator.rs).
use crate::boundary::{Walls, ZWall};
use crate::coefficients::Coefficients;
use crate::fields::Fields;
use crate::kernel::{update_e, update_h};
use lathe_mesh::{Component, MaterialMap};

/// The stability analysis of one run.
#[derive(Debug, Clone, PartialEq)]
pub struct StabilityLimit {
    /// Largest eigenvalue λ_max of the curl-curl operator, 1/s².
    pub lambda_max: f64,
    /// Stability limit 2/√λ_max, s.
    pub dt_max: f64,
    /// Lanczos iterations used.
    pub iterations: usize,
    /// For comparison: the 2D Cartesian vacuum limit 1/(c√(Δr⁻² + Δz⁻²)).
    pub dt_cartesian: f64,
}

/// Computes the stability limit of order `m` on `map` with `walls`, with the
/// axis rod of [`crate::coefficients::axis_rod_rows`].
pub fn stability_limit(map: &MaterialMap, walls: &Walls, m: u32) -> StabilityLimit {
    stability_limit_with_rod(map, walls, m, crate::coefficients::axis_rod_rows(m))
}

/// Computes the stability limit of order `m` on `map` with `walls` and an
/// axis rod of `rod` rows ([`crate::coefficients::in_axis_rod`]; 0 for none).
pub fn stability_limit_with_rod(
    map: &MaterialMap,
    walls: &Walls,
    m: u32,
    rod: usize,
) -> StabilityLimit {
    let g = &map.grid;
    let c1 = Coefficients::with_axis_rod(map, walls, m, 1.0, rod);
    let weights = node_weights(&c1, map, walls);
    let n = weights.len();
    let mut f = Fields::zeros(g);
    // With the off-diagonal coupling E = N D, N not diagonal. The operator
    // is then taken on D, A_D = L μ⁻¹ K N (the same non-zero eigenvalues as
    // A), which is self-adjoint in ⟨x, y⟩ = Σ w x (N y): N is symmetric and
    // positive definite in the volume weights (crate::skew). Without it
    // N is diagonal and A is taken on E as in the module docs.
    let cb: Vec<f64> = [Component::Er, Component::Ephi, Component::Ez]
        .iter()
        .flat_map(|&c| c1.cb(c).iter().copied())
        .collect();
    let (na, nb) = (f.er.len(), f.ephi.len());
    let coupling = c1.coupling.as_ref();
    let apply_n = |x: &[f64]| -> Vec<f64> {
        let mut out: Vec<f64> = x.iter().zip(&cb).map(|(x, c)| x * c).collect();
        if let Some(cp) = coupling {
            for (l, taps) in &cp.er {
                out[*l] += taps.iter().map(|&(k, w)| w * x[na + nb + k]).sum::<f64>();
            }
            for (l, taps) in &cp.er_er {
                out[*l] += taps.iter().map(|&(k, w)| w * x[k]).sum::<f64>();
            }
            for (k, taps) in &cp.ez {
                out[na + nb + k] += taps.iter().map(|&(l, w)| w * x[l]).sum::<f64>();
            }
            for (k, taps) in &cp.ez_ez {
                out[na + nb + k] += taps.iter().map(|&(l, w)| w * x[na + nb + l]).sum::<f64>();
            }
        }
        out
    };
    let mut vacuum = c1.clone();
    vacuum.coupling = None;
    for v in [&mut vacuum.cb_er, &mut vacuum.cb_ephi, &mut vacuum.cb_ez] {
        v.iter_mut().filter(|x| **x != 0.0).for_each(|x| *x = 1.0);
    }
    let apply = |f: &mut Fields, v: &[f64], out: &mut [f64]| {
        f.clear();
        if coupling.is_some() {
            scatter(f, &apply_n(v));
        } else {
            scatter(f, v);
        }
        update_h(f, &c1);
        for c in [Component::Er, Component::Ephi, Component::Ez] {
            f.get_mut(c).fill(0.0);
        }
        update_e(f, if coupling.is_some() { &vacuum } else { &c1 });
        gather(f, out);
        out.iter_mut().for_each(|x| *x = -*x);
    };
    let volume: Vec<f64> = weights.iter().zip(&cb).map(|(w, c)| w * c).collect();
    let dot = |a: &[f64], b: &[f64]| -> f64 {
        match coupling {
            Some(_) => a
                .iter()
                .zip(&apply_n(b))
                .zip(&volume)
                .map(|((x, y), w)| x * y * w)
                .sum(),
            None => a
                .iter()
                .zip(b)
                .zip(&weights)
                .map(|((x, y), w)| x * y * w)
                .sum(),
        }
    };
    // Seeded random start on the free nodes.
    let mut state = 0x9E37_79B9_7F4A_7C15u64 ^ (m as u64);
    let mut q: Vec<f64> = weights
        .iter()
        .map(|&w| {
            if w > 0.0 {
                uniform(&mut state) - 0.5
            } else {
                0.0
            }
        })
        .collect();
    let nq = dot(&q, &q).sqrt();
    let dt_cartesian = 1.0 / (crate::consts::C0 * (g.dr.powi(-2) + g.dz.powi(-2)).sqrt());
    if nq == 0.0 {
        // No free node: nothing can evolve; any step is stable.
        return StabilityLimit {
            lambda_max: 0.0,
            dt_max: f64::INFINITY,
            iterations: 0,
            dt_cartesian,
        };
    }
    q.iter_mut().for_each(|x| *x /= nq);
    let mut q_prev = vec![0.0; n];
    let mut w = vec![0.0; n];
    let (mut alpha, mut beta) = (Vec::new(), Vec::new());
    let mut history: Vec<f64> = Vec::new();
    let max_iter = 400.min(n.max(1));
    let mut lambda = 0.0;
    for k in 0..max_iter {
        apply(&mut f, &q, &mut w);
        let a = dot(&w, &q);
        let b_prev = beta.last().copied().unwrap_or(0.0);
        for ((wi, qi), pi) in w.iter_mut().zip(&q).zip(&q_prev) {
            *wi -= a * qi + b_prev * pi;
        }
        alpha.push(a);
        let b = dot(&w, &w).sqrt();
        lambda = tridiagonal_max_eigenvalue(&alpha, &beta);
        history.push(lambda);
        if k >= 10 {
            let old = history[k - 10];
            if (lambda - old).abs() <= 1e-7 * lambda {
                break;
            }
        }
        if b <= 1e-14 * lambda.sqrt().max(1.0) {
            break; // invariant subspace: λ is exact
        }
        beta.push(b);
        std::mem::swap(&mut q_prev, &mut q);
        for (qi, wi) in q.iter_mut().zip(&w) {
            *qi = wi / b;
        }
    }
    StabilityLimit {
        lambda_max: lambda,
        dt_max: 2.0 / lambda.sqrt(),
        iterations: history.len(),
        dt_cartesian,
    }
}

/// Volume weight × ε of every free E node, in the order er | ephi | ez; zero
/// for held nodes. Weights are r·Δr·Δz of the dual cell (see module docs).
pub(crate) fn node_weights(c1: &Coefficients, map: &MaterialMap, walls: &Walls) -> Vec<f64> {
    let g = &map.grid;
    let mut out = Vec::new();
    for comp in [Component::Er, Component::Ephi, Component::Ez] {
        let (ni, nj) = comp.shape(g);
        let cb = c1.cb(comp);
        let (rh, zh) = comp.staggering();
        for i in 0..ni {
            for j in 0..nj {
                let k = i * nj + j;
                if cb[k] == 0.0 {
                    out.push(0.0);
                    continue;
                }
                let mut w = if rh { g.r_half(i) } else { g.r_int(i) };
                if !rh && i == 0 {
                    w = g.dr / 8.0; // m = 0 axis E_z: disc of radius Δr/2
                }
                if !zh
                    && ((j == 0 && walls.bottom == ZWall::Pmc)
                        || (j == nj - 1 && walls.top == ZWall::Pmc))
                {
                    w *= 0.5;
                }
                // cb = 1/(ε0 ε_r) for Δt = 1.
                out.push(w * g.dr * g.dz / cb[k]);
            }
        }
    }
    out
}

pub(crate) fn scatter(f: &mut Fields, v: &[f64]) {
    let (a, b) = (f.er.len(), f.ephi.len());
    f.er.copy_from_slice(&v[..a]);
    f.ephi.copy_from_slice(&v[a..a + b]);
    f.ez.copy_from_slice(&v[a + b..]);
}

pub(crate) fn gather(f: &Fields, out: &mut [f64]) {
    let (a, b) = (f.er.len(), f.ephi.len());
    out[..a].copy_from_slice(&f.er);
    out[a..a + b].copy_from_slice(&f.ephi);
    out[a + b..].copy_from_slice(&f.ez);
}

/// splitmix64 step mapped to [0, 1).
pub(crate) fn uniform(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64
}

/// Largest eigenvalue of the symmetric tridiagonal matrix with diagonal
/// `a` and off-diagonal `b` (len a.len() − 1 or more; extra ignored), by
/// Sturm-sequence bisection to full precision.
pub(crate) fn tridiagonal_max_eigenvalue(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len();
    let off = |i: usize| if i < b.len() { b[i].abs() } else { 0.0 };
    // Gershgorin bracket.
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for (i, &ai) in a.iter().enumerate() {
        let right = if i + 1 < n { off(i) } else { 0.0 };
        let r = right + if i > 0 { off(i - 1) } else { 0.0 };
        lo = lo.min(ai - r);
        hi = hi.max(ai + r);
    }
    // count(x) = number of eigenvalues < x.
    let count = |x: f64| {
        let mut c = 0;
        let mut d = 1.0;
        for (i, &ai) in a.iter().enumerate() {
            let bb = if i > 0 { off(i - 1).powi(2) } else { 0.0 };
            d = ai - x - if i > 0 { bb / d } else { 0.0 };
            if d == 0.0 {
                d = -1e-300;
            }
            if d < 0.0 {
                c += 1;
            }
        }
        c
    };
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if count(mid) >= n {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi
}
