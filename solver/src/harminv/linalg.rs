//! Thin wrappers around the dense complex factorisations the estimators need
//! (thin SVD, non-Hermitian eigendecomposition, truncated-SVD solve).
//!
//! They exist so that every factorisation runs with `Par::Seq`: the results
//! are then bitwise identical whatever the size of the rayon pool (parallelism
//! comes only from running independent sub-windows concurrently). They also
//! turn faer's error types, which do not implement `std::error::Error`, into
//! [`HarminvError::LinearAlgebra`].

use super::HarminvError;
use faer::diag::Diag;
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::evd::{self, ComputeEigenvectors};
use faer::linalg::svd::{self, ComputeSvdVectors};
use faer::{Mat, MatRef, Par};
use num_complex::Complex64;

/// Thin singular value decomposition `A = U diag(s) Vᴴ`, singular values in
/// non-increasing order.
pub(crate) struct ThinSvd {
    /// Left singular vectors, `m × min(m, n)`.
    pub u: Mat<Complex64>,
    /// Singular values, non-increasing.
    pub s: Vec<f64>,
    /// Right singular vectors, `n × min(m, n)`.
    pub v: Mat<Complex64>,
}

/// Thin SVD of `a`, computed sequentially.
pub(crate) fn thin_svd(
    a: MatRef<'_, Complex64>,
    stage: &'static str,
) -> Result<ThinSvd, HarminvError> {
    let (m, n) = a.shape();
    let k = m.min(n);
    let mut u = Mat::<Complex64>::zeros(m, k);
    let mut v = Mat::<Complex64>::zeros(n, k);
    let mut s = Diag::<Complex64>::zeros(k);
    if k == 0 {
        return Ok(ThinSvd {
            u,
            s: Vec::new(),
            v,
        });
    }
    let par = Par::Seq;
    let req = svd::svd_scratch::<Complex64>(
        m,
        n,
        ComputeSvdVectors::Thin,
        ComputeSvdVectors::Thin,
        par,
        Default::default(),
    );
    let mut buf = MemBuffer::new(req);
    svd::svd(
        a,
        s.as_mut(),
        Some(u.as_mut()),
        Some(v.as_mut()),
        par,
        MemStack::new(&mut buf),
        Default::default(),
    )
    .map_err(|e| HarminvError::LinearAlgebra {
        stage,
        detail: format!("singular value decomposition did not converge ({e:?})"),
        rows: m,
        cols: n,
    })?;
    let s = s.column_vector().iter().map(|x| x.re).collect();
    Ok(ThinSvd { u, s, v })
}

/// Eigenvalues and right eigenvectors (as columns) of a square matrix,
/// computed sequentially.
pub(crate) fn eigen(
    a: MatRef<'_, Complex64>,
    stage: &'static str,
) -> Result<(Vec<Complex64>, Mat<Complex64>), HarminvError> {
    let n = a.nrows();
    let mut vecs = Mat::<Complex64>::zeros(n, n);
    let mut vals = Diag::<Complex64>::zeros(n);
    if n == 0 {
        return Ok((Vec::new(), vecs));
    }
    let par = Par::Seq;
    let req = evd::evd_scratch::<Complex64>(
        n,
        ComputeEigenvectors::No,
        ComputeEigenvectors::Yes,
        par,
        Default::default(),
    );
    let mut buf = MemBuffer::new(req);
    evd::evd_cplx(
        a,
        vals.as_mut(),
        None,
        Some(vecs.as_mut()),
        par,
        MemStack::new(&mut buf),
        Default::default(),
    )
    .map_err(|e| HarminvError::LinearAlgebra {
        stage,
        detail: format!("eigenvalue iteration did not converge ({e:?})"),
        rows: n,
        cols: n,
    })?;
    Ok((vals.column_vector().iter().copied().collect(), vecs))
}

/// Minimum-norm solution of `A x = b` with the singular values below
/// `rcond · s_max` discarded: `x = Σ_{s_i > rcond s_0} v_i (u_iᴴ b) / s_i`.
pub(crate) fn solve_truncated(
    a: MatRef<'_, Complex64>,
    b: &[Complex64],
    rcond: f64,
) -> Result<Vec<Complex64>, HarminvError> {
    let svd = thin_svd(a, "least-squares amplitude fit")?;
    let n = a.ncols();
    let mut x = vec![Complex64::new(0.0, 0.0); n];
    let s0 = svd.s.first().copied().unwrap_or(0.0);
    for (i, &si) in svd.s.iter().enumerate() {
        if si.is_nan() || si <= rcond * s0 {
            break;
        }
        let mut proj = Complex64::new(0.0, 0.0);
        for (r, br) in b.iter().enumerate() {
            proj += svd.u[(r, i)].conj() * br;
        }
        let coef = proj / si;
        for (j, xj) in x.iter_mut().enumerate() {
            *xj += svd.v[(j, i)] * coef;
        }
    }
    Ok(x)
}
