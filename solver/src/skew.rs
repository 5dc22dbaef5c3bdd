//! The symmetric stand-in for the consistent off-diagonal coupling at curved
//! interfaces (see [`crate::coefficients::Coupling`]).
//!
//! # Why
//! With E = N D at the electric nodes (N the discrete inverse permittivity),
//! the consistent form of the anisotropic average applies each node's own
//! off-diagonal entry T to the mean of its four neighbours' D: N_c, with
//! (N_c)_lk = ¼T_l and (N_c)_kl = ¼T_k. It converges at second order but is
//! not symmetric, so a few grid-scale modes grow. The symmetric pair mean
//! N_s = N_c − S (S skew in the energy inner product W: WS = −(WS)ᵀ) is
//! stable and first order. Its eigenvalues differ from N_c's only at second
//! order in S, and for the modes of the band (λ far below the grid-scale
//! λ_k that S couples them to) that difference is
//!
//! ```text
//! λ_c − λ_s ≈ λ ‖P Ŝ u‖²,   Ŝ = N_s^{−½} S N_s^{−½},
//! ```
//!
//! P the projector onto the range of the curl-curl operator (the static,
//! gradient part of Ŝu is invisible to the curl). The symmetric, positive
//! semi-definite correction with the same first-order effect is
//!
//! ```text
//! Y = −S [N_s⁻¹ − N_s⁻¹ G (Gᵀ W N_s⁻¹ G)⁻¹ Gᵀ W N_s⁻¹] S,
//! ```
//!
//! G the discrete gradient of a potential on the integer nodes (the null
//! space of the kernel's curl). N_s + Y is symmetric and positive definite
//! in W, so the scheme keeps real frequencies. Measured on dense spectra of
//! an ε_r 38 sphere in a PEC can (0.125 mm, m = 0 and 1), its resonances
//! sit within 0.03–0.19 of the N_s–N_c gap from N_c's
//! (solver/tests/operator.rs); dropping P (the local −S N_s⁻¹ S) overshoots
//! by 20–45 % of the gap.
//!
//! # How
//! Y is computed once per run, column by column over the nodes S touches:
//! x = S e_c, then z = N_s⁻¹(x − Gφ) with Gᵀ W z = 0 (the saddle-point
//! system [N_s G; GᵀW 0][z; φ] = [x; 0], one sparse LU), then Y e_c = −S z.
//! The potentials live on the integer nodes within [`BAND`] cells of those
//! nodes (zero beyond: a subspace of the gradients, so Y only grows by it),
//! and Y is kept within one cell each way of each node (dense spectra,
//! 0.125 mm: the entries beyond move the resonances by under 3 % of the
//! N_s–N_c gap), then made exactly symmetric in W. The cut keeps the
//! symmetry but not the proof that N_s + Y is positive; that is checked
//! instead: real non-negative dense spectra and fields bounded over 10⁶
//! steps on an ε_r 38 sphere (solver/tests/operator.rs), and a run whose
//! energy grows stops with an error rather than a result. Should the
//! factorisation fail or give a non-finite entry, the correction is left
//! out (the pair mean alone: stable, first order) and the run says so
//! ([`crate::coefficients::SurfaceCorrection`], in the run report and a
//! warning of the command line). The factorisation runs with `Par::Seq`,
//! so the coefficients do not depend on the rayon pool.
//! Setup cost, ε_r 38 sphere: 0.015 s on 86 × 86 cells, 0.38 s on
//! 576 × 576 (1 488 coupled nodes, about ten taps each).
use crate::coefficients::SurfaceCorrection;
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::sparse::linalg::lu::{factorize_symbolic_lu, LuRef, NumericLu, SymbolicLu};
use faer::sparse::{SparseColMat, Triplet};
use faer::{Conj, Mat, Par};
use std::collections::HashMap;

/// Cells around the coupled nodes in which the gradient part is projected
/// out.
pub(crate) const BAND: usize = 4;

/// Half-width, in cells, of the kept part of Y around each node.
const REACH: f64 = 1.0;

/// An electric node: component (0 E_r, 1 E_φ, 2 E_z) and flat index.
pub(crate) type Node = (u8, usize);

/// What [`correction`] needs to know about the grid and its nodes.
pub(crate) struct Layout<'a> {
    pub nr: usize,
    pub nz: usize,
    pub m: u32,
    pub dr: f64,
    pub dz: f64,
    /// Whether a node is free (not held at zero).
    pub free: &'a dyn Fn(Node) -> bool,
    /// Diagonal entry of N at a free node (1/ε_r).
    pub diag: &'a dyn Fn(Node) -> f64,
    /// Volume weight of a node.
    pub weight: &'a dyn Fn(Node) -> f64,
}

impl Layout<'_> {
    /// Position of a node in cells: E_r (i+½, j), E_φ (i, j), E_z (i, j+½).
    fn position(&self, (c, k): Node) -> (f64, f64) {
        match c {
            0 => ((k / (self.nz + 1)) as f64 + 0.5, (k % (self.nz + 1)) as f64),
            1 => ((k / (self.nz + 1)) as f64, (k % (self.nz + 1)) as f64),
            _ => ((k / self.nz) as f64, (k % self.nz) as f64 + 0.5),
        }
    }

    /// The gradient of a unit potential at integer node (i, j), as
    /// (node, value) over the nodes that exist: e_r = ∂r φ, e_z = ∂z φ,
    /// e_φ = −(m/r) φ (the kernel's curl of this is zero).
    fn gradient(&self, i: usize, j: usize) -> Vec<(Node, f64)> {
        let (nr, nz, nj1) = (self.nr, self.nz, self.nz + 1);
        let mut g = Vec::with_capacity(5);
        if i < nr {
            g.push(((0, i * nj1 + j), -1.0 / self.dr));
        }
        if i >= 1 {
            g.push(((0, (i - 1) * nj1 + j), 1.0 / self.dr));
        }
        if j < nz {
            g.push(((2, i * nz + j), -1.0 / self.dz));
        }
        if j >= 1 {
            g.push(((2, i * nz + j - 1), 1.0 / self.dz));
        }
        if self.m >= 1 {
            let r = i as f64 * self.dr;
            g.push((
                (1, i * nj1 + j),
                if i == 0 { 0.0 } else { -(self.m as f64) / r },
            ));
        }
        g
    }
}

/// The correction Y of the module docs for the symmetric coupling `pairs`
/// ((E_r node, E_z node, M_lk, M_kl) of N_s, unscaled) and the nodes'
/// off-diagonal entries `t` (T of the consistent form): every kept entry
/// (row node, column node, value); or why it could not be computed.
pub(crate) fn correction(
    lay: &Layout,
    pairs: &[(usize, usize, f64, f64)],
    t: &dyn Fn(Node) -> f64,
) -> Result<Vec<(Node, Node, f64)>, SurfaceCorrection> {
    // S = N_c − N_s, by row.
    let mut s: HashMap<Node, Vec<(Node, f64)>> = HashMap::new();
    for &(l, k, mlk, mkl) in pairs {
        let (a, b) = ((0u8, l), (2u8, k));
        let sab = 0.25 * t(a) - mlk;
        let sba = 0.25 * t(b) - mkl;
        if sab != 0.0 {
            s.entry(a).or_default().push((b, sab));
        }
        if sba != 0.0 {
            s.entry(b).or_default().push((a, sba));
        }
    }
    if s.is_empty() {
        return Ok(Vec::new());
    }
    // The columns of S (nodes it reads) and the rows (nodes it writes).
    let mut support: Vec<Node> = s.keys().copied().collect();
    for row in s.values() {
        support.extend(row.iter().map(|x| x.0));
    }
    support.sort_unstable();
    support.dedup();
    // S by column.
    let mut s_col: HashMap<Node, Vec<(Node, f64)>> = HashMap::new();
    for (&a, row) in &s {
        for &(b, v) in row {
            s_col.entry(b).or_default().push((a, v));
        }
    }
    // Band of potentials: integer nodes within BAND cells of the support
    // whose every existing incident node is free.
    let (nr, nz) = (lay.nr, lay.nz);
    let mut in_band = vec![false; (nr + 1) * (nz + 1)];
    for &n in &support {
        let (x, y) = lay.position(n);
        let (i0, i1) = (
            (x - BAND as f64).ceil().max(0.0) as usize,
            (x + BAND as f64).floor() as usize,
        );
        let (j0, j1) = (
            (y - BAND as f64).ceil().max(0.0) as usize,
            (y + BAND as f64).floor() as usize,
        );
        for i in i0..=i1.min(nr) {
            for j in j0..=j1.min(nz) {
                in_band[i * (nz + 1) + j] = true;
            }
        }
    }
    // Each allowed potential's gradient, as (node, value).
    let mut band: Vec<Vec<(Node, f64)>> = Vec::new();
    for i in 0..=nr {
        for j in 0..=nz {
            if !in_band[i * (nz + 1) + j] {
                continue;
            }
            let g = lay.gradient(i, j);
            if g.iter().all(|&(n, v)| v == 0.0 || (lay.free)(n)) {
                band.push(g.into_iter().filter(|&(_, v)| v != 0.0).collect());
            }
        }
    }
    // Unknowns: the E nodes the band's gradients and S touch, then φ.
    let mut e_nodes: Vec<Node> = support.clone();
    for g in &band {
        e_nodes.extend(g.iter().map(|x| x.0));
    }
    e_nodes.sort_unstable();
    e_nodes.dedup();
    let pos: HashMap<Node, usize> = e_nodes.iter().enumerate().map(|(p, &n)| (n, p)).collect();
    let ne = e_nodes.len();
    let n = ne + band.len();
    let mut trip: Vec<Triplet<usize, usize, f64>> = Vec::new();
    for (p, &node) in e_nodes.iter().enumerate() {
        trip.push(Triplet::new(p, p, (lay.diag)(node)));
    }
    for &(l, k, mlk, mkl) in pairs {
        let (a, b) = (pos[&(0, l)], pos[&(2, k)]);
        trip.push(Triplet::new(a, b, mlk));
        trip.push(Triplet::new(b, a, mkl));
    }
    for (q, g) in band.iter().enumerate() {
        for &(node, v) in g {
            let p = pos[&node];
            trip.push(Triplet::new(p, ne + q, v));
            trip.push(Triplet::new(ne + q, p, v * (lay.weight)(node)));
        }
    }
    let Some(lu) = SparseColMat::<usize, f64>::try_new_from_triplets(n, n, &trip)
        .ok()
        .and_then(|a| SeqLu::new(&a))
    else {
        return Err(SurfaceCorrection::Singular);
    };
    // Columns in blocks: z = N_s⁻¹(x − Gφ), then Y e_c = −S z.
    let cols: Vec<Node> = support
        .iter()
        .copied()
        .filter(|c| s_col.contains_key(c))
        .collect();
    let mut y: HashMap<(Node, Node), f64> = HashMap::new();
    const BLOCK: usize = 64;
    for chunk in cols.chunks(BLOCK) {
        let mut rhs = Mat::<f64>::zeros(n, chunk.len());
        for (q, c) in chunk.iter().enumerate() {
            for &(a, v) in &s_col[c] {
                rhs[(pos[&a], q)] += v;
            }
        }
        let z = lu.solve(rhs);
        for (q, &c) in chunk.iter().enumerate() {
            let pc = lay.position(c);
            for (&a, row) in &s {
                let pa = lay.position(a);
                if (pa.0 - pc.0).abs() > REACH + 1e-9 || (pa.1 - pc.1).abs() > REACH + 1e-9 {
                    continue;
                }
                let v: f64 = row.iter().map(|&(b, sv)| sv * z[(pos[&b], q)]).sum();
                if v != 0.0 {
                    y.insert((a, c), -v);
                }
            }
        }
    }
    // Exactly symmetric in W: w_a Y_ac = w_c Y_ca.
    let mut out = Vec::with_capacity(y.len());
    for (&(a, c), &v) in &y {
        let back = y.get(&(c, a)).copied().unwrap_or(0.0);
        let (wa, wc) = ((lay.weight)(a), (lay.weight)(c));
        let sym = 0.5 * (v + back * wc / wa);
        out.push((a, c, sym));
    }
    if out.iter().any(|x| !x.2.is_finite()) {
        return Err(SurfaceCorrection::NonFinite);
    }
    out.sort_by_key(|x| (x.0, x.1));
    Ok(out)
}

/// A sparse LU factorisation that runs with `Par::Seq` throughout, so that
/// the coefficients are the same bits whatever rayon pool the run is in.
struct SeqLu {
    symbolic: SymbolicLu<usize>,
    numeric: NumericLu<usize, f64>,
}

impl SeqLu {
    /// The factorisation of `a`, or `None` if it is singular.
    fn new(a: &SparseColMat<usize, f64>) -> Option<SeqLu> {
        let symbolic = factorize_symbolic_lu(a.symbolic(), Default::default()).ok()?;
        let mut numeric = NumericLu::new();
        let par = Par::Seq;
        let mut buf =
            MemBuffer::new(symbolic.factorize_numeric_lu_scratch::<f64>(par, Default::default()));
        symbolic
            .factorize_numeric_lu::<f64>(
                &mut numeric,
                a.as_ref(),
                par,
                MemStack::new(&mut buf),
                Default::default(),
            )
            .ok()?;
        Some(SeqLu { symbolic, numeric })
    }

    fn solve(&self, mut rhs: Mat<f64>) -> Mat<f64> {
        let par = Par::Seq;
        let mut buf = MemBuffer::new(
            self.symbolic
                .solve_in_place_scratch::<f64>(rhs.ncols(), par),
        );
        LuRef::<'_, usize, f64>::new_unchecked(&self.symbolic, &self.numeric)
            .solve_in_place_with_conj(Conj::No, rhs.as_mut(), par, MemStack::new(&mut buf));
        rhs
    }
}
