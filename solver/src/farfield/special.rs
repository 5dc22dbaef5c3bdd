//! Special functions of the radiation integrals: Bessel functions of
//! complex argument, outgoing spherical Hankel functions in polynomial form,
//! Gauss–Legendre rules and normalised associated Legendre functions.
//!
//! Complex arguments appear because a decaying mode e^{−γt} is a field at
//! the complex frequency ω̃ = ω + jγ (time factor e^{jω̃t}), see
//! [`super`]: its far-field integrals carry k̃ = ω̃/c.
use num_complex::Complex64 as C;
use std::f64::consts::PI;

/// Bound on the aliasing error of the rectangle rule for `J_n`, 2⁻⁵⁶.
const ALIAS_TOLERANCE: f64 = 1.0 / 72_057_594_037_927_936.0;

/// Nodes `2M` of the rectangle rule on the period of Bessel's integral for
/// orders up to `n_max` at |z| = `a`, |Im z| = `b`.
///
/// The rule returns exactly Σ_l J_{n+2Ml}(z) (Jacobi–Anger, DLMF 10.12.1),
/// so its error is the aliases, each bounded by
/// |J_ν(z)| ≤ |z/2|^ν e^{|Im z|}/ν! (DLMF 10.14.4); with ν_min = 2M − n ≥ |z|
/// consecutive bounds at least halve, so 4·(bound at ν_min) bounds the sum.
fn rectangle_nodes(n_max: u32, a: f64, b: f64) -> usize {
    if a == 0.0 {
        return 2 * (n_max as usize + 1);
    }
    let ln_half = (0.5 * a).ln();
    let ln_limit = (ALIAS_TOLERANCE / 4.0).ln() - b;
    let mut nu: u64 = 1;
    let mut ln_bound = ln_half;
    while (nu as f64) < a || ln_bound > ln_limit {
        nu += 1;
        ln_bound += ln_half - (nu as f64).ln();
    }
    let two_m = nu + n_max as u64;
    (two_m + two_m % 2) as usize
}

/// Bessel functions J_{m−1}(z), J_m(z), J_{m+1}(z) of complex argument
/// (with J_{−1} = −J_1 for m = 0).
///
/// From Bessel's integral J_n(z) = (1/2π) ∫_0^{2π} e^{j(z sin τ − nτ)} dτ
/// (DLMF 10.9.2, valid for every complex z) by the rectangle rule with
/// enough nodes that the aliasing error is below 2⁻⁵⁶·e^{|Im z|}
/// (the bound of DLMF 10.14.4 on the aliases); the three orders share the nodes' e^{jz sin τ}.
/// Accuracy is absolute, about 1e-15·e^{|Im z|} for |z| ≲ 100.
pub fn bessel_j_triplet(m: u32, z: C) -> (C, C, C) {
    let top = m + 1;
    let nodes = rectangle_nodes(top, z.norm(), z.im.abs());
    let step = 2.0 * PI / nodes as f64;
    let (mut lo, mut mid, mut hi) = (C::new(0.0, 0.0), C::new(0.0, 0.0), C::new(0.0, 0.0));
    let lo_order = if m == 0 { 1 } else { m - 1 } as u64;
    let nodes_u = nodes as u64;
    for k in 0..nodes {
        let tau = k as f64 * step;
        let base = (C::i() * z * tau.sin()).exp();
        // Order phases n τ_k reduced exactly: n k mod 2M.
        let ph = |n: u64| {
            let a = ((n * k as u64) % nodes_u) as f64 * step;
            C::new(a.cos(), -a.sin())
        };
        lo += base * ph(lo_order);
        mid += base * ph(m as u64);
        hi += base * ph(top as u64);
    }
    let s = 1.0 / nodes as f64;
    let lo = if m == 0 { -lo * s } else { lo * s };
    (lo, mid * s, hi * s)
}

/// The rule of [`bessel_j_triplet`] for one order m with its node values
/// computed once: for many arguments (a far field's radii at every angle),
/// a triplet then costs one real exponential and one sine–cosine pair per
/// four nodes instead of five transcendental calls per node.
///
/// With N nodes τ_k = 2πk/N (N even), the node k + N/2 has sin τ = −sin τ_k,
/// so its e^{jz sin τ} is the reciprocal b_k⁻¹ of node k's b_k, and its phase
/// e^{−jnτ} is (−1)ⁿ times node k's. The rule's sum over all N nodes is
/// therefore, exactly in arithmetic,
///
/// ```text
/// J_n(z) ≈ (1/N) Σ_{k<N/2} e^{−jnτ_k} (b_k + (−1)ⁿ b_k⁻¹),
/// b_k = e^{−Im z sin τ_k} (cos(Re z sin τ_k) + j sin(Re z sin τ_k)),
/// ```
///
/// and node N/2 − k has the same sin τ as node k, with the phase
/// (−1)ⁿ e^{+jnτ_k}: the pair's phases add to 2 cos nτ_k for even n and to
/// −2j sin nτ_k for odd n, so b is needed at k ≤ N/4 only (k = 0 and
/// k = N/4 stand alone). The node count N is the one [`bessel_j_triplet`]
/// chooses for each z, hence the same aliasing bound; only the rounding
/// differs. The tables (sin τ_k and e^{−j2πq/N}) are kept for every N
/// that arguments within |z| ≤ `a_max`, |Im z| ≤ `b_max` need, up to 1024
/// nodes (|z| up to about 980); a larger argument takes the direct rule.
#[derive(Debug, Clone)]
pub struct BesselTriplets {
    m: u32,
    /// Index N/2: the tables of the N-node rule (empty where unused).
    rules: Vec<NodeTable>,
}

/// Most nodes [`BesselTriplets`] tables. The tables of every N up to it
/// hold about 1.25 (N/2)² values: 5 MiB at 1024, enough for |z| up to
/// about 980 (N is about |z| + m + 30); larger arguments take the direct
/// rule.
const MAX_TABLED_NODES: usize = 1024;

/// sin τ_k for k ≤ N/4 and the phases e^{−j2πq/N} for q < N.
#[derive(Debug, Clone, Default)]
struct NodeTable {
    sin: Vec<f64>,
    phase: Vec<C>,
}

impl BesselTriplets {
    /// The tables for order `m` (orders m − 1, m, m + 1) and arguments up
    /// to |z| ≤ `a_max`, |Im z| ≤ `b_max`.
    pub fn new(m: u32, a_max: f64, b_max: f64) -> BesselTriplets {
        // A hair of margin, so that an argument computed to within rounding
        // of the bound still finds its table.
        let grow = 1.0 + 1e-9;
        let n_max =
            rectangle_nodes(m + 1, a_max.abs() * grow, b_max.abs() * grow).min(MAX_TABLED_NODES);
        let rules = (0..=n_max / 2)
            .map(|half| {
                let n = 2 * half;
                let step = 2.0 * PI / n.max(1) as f64;
                NodeTable {
                    sin: (0..=half / 2).map(|k| (k as f64 * step).sin()).collect(),
                    phase: (0..n)
                        .map(|q| {
                            let a = q as f64 * step;
                            C::new(a.cos(), -a.sin())
                        })
                        .collect(),
                }
            })
            .collect();
        BesselTriplets { m, rules }
    }

    /// J_{m−1}(z), J_m(z), J_{m+1}(z), as [`bessel_j_triplet`] (with
    /// J_{−1} = −J_1 for m = 0).
    pub fn get(&self, z: C) -> (C, C, C) {
        let m = self.m;
        let top = m + 1;
        let nodes = rectangle_nodes(top, z.norm(), z.im.abs());
        let Some(t) = self.rules.get(nodes / 2).filter(|t| t.phase.len() == nodes) else {
            return bessel_j_triplet(m, z);
        };
        let lo_order = if m == 0 { 1 } else { m - 1 } as usize;
        let (mid_order, hi_order) = (m as usize, top as usize);
        let (mut lo, mut mid, mut hi) = (C::new(0.0, 0.0), C::new(0.0, 0.0), C::new(0.0, 0.0));
        // Orders m ± 1 have the parity opposite to m's.
        let mid_even = m % 2 == 0;
        let half = nodes / 2;
        for (k, &s) in t.sin[..=half / 2].iter().enumerate() {
            let (sn, cs) = (z.re * s).sin_cos();
            let g = (-z.im * s).exp();
            let b = C::new(g * cs, g * sn);
            let bi = C::new(cs / g, -sn / g);
            let (even, odd) = (b + bi, b - bi);
            let (x_mid, x_side) = if mid_even { (even, odd) } else { (odd, even) };
            // The phase of order n at node k, or of the pair (k, N/2 − k).
            let alone = k == 0 || 2 * k == half;
            let phase = |n: usize| {
                let p = t.phase[(n * k) % nodes];
                match (alone, n % 2 == 0) {
                    (true, _) => p,
                    (false, true) => C::new(2.0 * p.re, 0.0),
                    (false, false) => C::new(0.0, 2.0 * p.im),
                }
            };
            lo += x_side * phase(lo_order);
            mid += x_mid * phase(mid_order);
            hi += x_side * phase(hi_order);
        }
        let s = 1.0 / nodes as f64;
        let lo = if m == 0 { -lo * s } else { lo * s };
        (lo, mid * s, hi * s)
    }
}

/// Bessel function J_n(z), integer n ≥ 0, complex z (see [`bessel_j_triplet`]).
pub fn bessel_j_complex(n: u32, z: C) -> C {
    if n == 0 {
        bessel_j_triplet(0, z).1
    } else {
        bessel_j_triplet(n - 1, z).2
    }
}

/// The polynomial p_n(z) = Σ_{k=0}^{n} a_k (−j/z)^k, a_k = (n+k)!/(2^k k! (n−k)!),
/// and its derivative, such that the outgoing spherical Hankel function for
/// the time factor e^{jωt} is h_n⁽²⁾(z) = j^{n+1} e^{−jz} p_n(z)/z
/// (DLMF 10.49.6 conjugated; a_k are DLMF's a_k(n + ½)).
///
/// p_n → 1 for |z| → ∞; for real z, |p_n(x)|² = x² |h_n(x)|².
pub fn hankel_polynomial(n: u32, z: C) -> (C, C) {
    let w = -C::i() / z; // −j/z
    let (mut p, mut dp) = (C::new(1.0, 0.0), C::new(0.0, 0.0));
    let mut a = 1.0;
    let mut wk = C::new(1.0, 0.0);
    for k in 0..n {
        // a_{k+1} = a_k (n+k+1)(n−k) / (2(k+1)).
        a *= ((n + k + 1) as f64) * ((n - k) as f64) / (2.0 * (k + 1) as f64);
        wk *= w;
        let kk = (k + 1) as f64;
        p += a * wk;
        // d/dz (−j/z)^k = −k (−j/z)^k / z.
        dp += -kk * a * wk / z;
    }
    (p, dp)
}

/// Outgoing spherical Hankel function h_n⁽²⁾(z) = j_n(z) − j y_n(z) (time
/// factor e^{jωt}, outgoing), any complex z ≠ 0, from [`hankel_polynomial`].
pub fn spherical_hankel2(n: u32, z: C) -> C {
    let jn1 = C::i().powu(n + 1);
    jn1 * (-C::i() * z).exp() * hankel_polynomial(n, z).0 / z
}

/// Gauss–Legendre nodes and weights on [−1, 1] with `n` points (exact for
/// polynomials of degree 2n − 1), by Newton's method on P_n from the
/// Tricomi initial guesses (DLMF 3.5(v)).
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    assert!(n >= 1, "expected at least one node, got {n}");
    let mut x = vec![0.0; n];
    let mut w = vec![0.0; n];
    for i in 0..n.div_ceil(2) {
        let mut t = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            // P_n(t) and P_n'(t) by the three-term recurrence.
            let (mut p0, mut p1) = (1.0, t);
            for k in 2..=n {
                let p2 = ((2 * k - 1) as f64 * t * p1 - (k - 1) as f64 * p0) / k as f64;
                p0 = p1;
                p1 = p2;
            }
            let pn = if n == 1 { t } else { p1 };
            let pm = if n == 1 { 1.0 } else { p0 };
            dp = n as f64 * (t * pn - pm) / (t * t - 1.0);
            let step = pn / dp;
            t -= step;
            if step.abs() < 1e-16 {
                break;
            }
        }
        if n == 1 {
            dp = 1.0;
        }
        x[i] = -t;
        x[n - 1 - i] = t;
        let wi = 2.0 / ((1.0 - t * t) * dp * dp);
        w[i] = wi;
        w[n - 1 - i] = wi;
    }
    if n % 2 == 1 {
        x[n / 2] = 0.0;
    }
    (x, w)
}

/// Angular functions of the vector spherical harmonics of order m at
/// x = cos θ (0 < θ < π), degrees n = max(m, 1) … n_max:
/// τ_n = dP̄_n^m/dθ and π_n = m P̄_n^m / sin θ, with P̄_n^m the associated
/// Legendre function normalised to ∫_{−1}^{1} (P̄_n^m)² dx = 1 (no
/// Condon–Shortley phase). Then ∫_0^π (τ_n τ_n' + π_n π_n') sin θ dθ =
/// n(n+1) δ_{nn'} and ∫_0^π (τ_n π_n' + π_n τ_n') sin θ dθ = 0.
///
/// P̄ by the standard normalised recurrences P̄_m^m = c_m sin^m θ,
/// c_m = c_{m−1} √((2m+1)/(2m)), c_0 = 1/√2; P̄_{m+1}^m = √(2m+3) x P̄_m^m;
/// P̄_n^m = a_n x P̄_{n−1}^m − b_n P̄_{n−2}^m with a_n = √((4n²−1)/(n²−m²)),
/// b_n = √(((n−1)²−m²)(2n+1)/((n²−m²)(2n−3))). π_n runs the same recurrence
/// from c_m sin^{m−1} θ; τ_n = [n x P̄_n − √((2n+1)(n²−m²)/(2n−1)) P̄_{n−1}]/sin θ
/// (from (1−x²) dP_n^m/dx = (n+m) P_{n−1}^m − n x P_n^m).
pub fn vector_harmonics(m: u32, n_max: u32, x: f64) -> (Vec<f64>, Vec<f64>) {
    let n0 = m.max(1);
    assert!(n_max >= n0, "expected n_max ≥ {n0}, got {n_max}");
    let s = (1.0 - x * x).max(0.0).sqrt();
    let mf = m as f64;
    let mut c = std::f64::consts::FRAC_1_SQRT_2;
    for k in 1..=m {
        c *= ((2 * k + 1) as f64 / (2 * k) as f64).sqrt();
    }
    // Runs the recurrence from the start value at n = m up to n_max.
    let run = |start: f64| -> Vec<f64> {
        let mut v = Vec::with_capacity((n_max - m + 1) as usize);
        v.push(start);
        if n_max > m {
            v.push((2.0 * mf + 3.0).sqrt() * x * start);
        }
        for n in (m + 2)..=n_max {
            let nf = n as f64;
            let a = ((4.0 * nf * nf - 1.0) / (nf * nf - mf * mf)).sqrt();
            let b = (((nf - 1.0).powi(2) - mf * mf) * (2.0 * nf + 1.0)
                / ((nf * nf - mf * mf) * (2.0 * nf - 3.0)))
                .sqrt();
            let k = (n - m) as usize;
            let next = a * x * v[k - 1] - b * v[k - 2];
            v.push(next);
        }
        v
    };
    let p = run(c * s.powi(m as i32));
    let q = if m >= 1 {
        run(c * s.powi(m as i32 - 1))
    } else {
        vec![0.0; p.len()]
    };
    let mut tau = Vec::new();
    let mut pi = Vec::new();
    for n in n0..=n_max {
        let k = (n - m) as usize;
        let nf = n as f64;
        let prev = if k >= 1 { p[k - 1] } else { 0.0 };
        let coef = ((2.0 * nf + 1.0) * (nf * nf - mf * mf) / (2.0 * nf - 1.0)).sqrt();
        tau.push((nf * x * p[k] - coef * prev) / s);
        pi.push(mf * q[k]);
    }
    (tau, pi)
}

/// Stored energy outside a sphere of radius a of one outgoing multipole of
/// degree n, per radiated power, times ω: the two parts (Q_t, Q_c) of
///
/// ```text
/// Q_t = ½ ∫_{ka}^∞ (|p_n(x)|² − 1) dx
/// Q_c = ½ ∫_{ka}^∞ (|p_n'(x) − j p_n(x)|² + n(n+1)|p_n(x)|²/x² − 1) dx
/// ```
///
/// with p_n of [`hankel_polynomial`] at real x. Q_t belongs to the field
/// that is purely tangential (E of a TE multipole, H of a TM multipole),
/// Q_c to the other one. The radiation energy density (Collin & Rothschild,
/// IEEE TAP 12(1), 1964) is the "− 1" in each. For n = 1:
/// Q_t = 1/(2ka), Q_c = 1/(2ka) + 1/(2(ka)³), so 2·max = 1/(ka) + 1/(ka)³
/// (McLean, IEEE TAP 44(5), 1996). The integrand is a polynomial in 1/x
/// starting at 1/x²; with x = ka/t it is a polynomial of degree ≤ 2n in t,
/// integrated exactly by (n + 2)-point Gauss–Legendre on t ∈ (0, 1].
pub fn exterior_q(n: u32, ka: f64) -> (f64, f64) {
    assert!(ka > 0.0, "expected ka > 0, got {ka}");
    let (t, w) = gauss_legendre(n as usize + 2);
    let nn = (n * (n + 1)) as f64;
    let (mut qt, mut qc) = (0.0, 0.0);
    for (ti, wi) in t.iter().zip(&w) {
        let tt = 0.5 * (ti + 1.0);
        let x = ka / tt;
        let jac = 0.5 * wi * ka / (tt * tt);
        let (p, dp) = hankel_polynomial(n, C::new(x, 0.0));
        // |p|² − 1 written through q = p − 1 to keep the small difference.
        let q = p - 1.0;
        let tang = 2.0 * q.re + q.norm_sqr();
        let u = dp - C::i() * q; // p' − j p = −j + (p' − j q)
        let comp = u.norm_sqr() - 2.0 * u.im + nn * p.norm_sqr() / (x * x);
        qt += 0.5 * jac * tang;
        qc += 0.5 * jac * comp;
    }
    (qt, qc)
}
