//! Thin wrappers over faer's dense kernels, on row-major `&[f64]` storage.
//!
//! Everything here is crate-internal. Matrices are square `p × p` and stored
//! row-major unless a comment says otherwise; faer sees them as zero-copy
//! views (a row-major slice is a transposed column-major view).

use faer::linalg::matmul::matmul;
use faer::{Accum, MatMut, MatRef, Par, Side};

/// Views a row-major `rows × cols` slice as a faer matrix.
pub(crate) fn view(a: &[f64], rows: usize, cols: usize) -> MatRef<'_, f64> {
    MatRef::from_row_major_slice(a, rows, cols)
}

/// Mutable view of a row-major `rows × cols` slice.
pub(crate) fn view_mut(a: &mut [f64], rows: usize, cols: usize) -> MatMut<'_, f64> {
    MatMut::from_row_major_slice_mut(a, rows, cols)
}

/// Lower Cholesky factor `L` (row-major, zeros above the diagonal) of the
/// symmetric matrix `a`, or the index of the first non-positive pivot.
pub(crate) fn cholesky_lower(a: &[f64], p: usize) -> std::result::Result<Vec<f64>, usize> {
    debug_assert_eq!(a.len(), p * p);
    match view(a, p, p).llt(Side::Lower) {
        Ok(llt) => {
            let l = llt.L();
            let mut out = vec![0.0; p * p];
            for i in 0..p {
                for j in 0..=i {
                    out[i * p + j] = l[(i, j)];
                }
            }
            Ok(out)
        }
        Err(faer::linalg::cholesky::llt::factor::LltError::NonPositivePivot { index }) => {
            Err(index)
        }
    }
}

/// Inverse of a lower triangular matrix (row-major in, row-major out,
/// zeros above the diagonal).
pub(crate) fn invert_lower(l: &[f64], p: usize) -> Vec<f64> {
    let mut out = vec![0.0; p * p];
    faer::linalg::triangular_inverse::invert_lower_triangular(
        view_mut(&mut out, p, p),
        view(l, p, p),
        Par::Seq,
    );
    for i in 0..p {
        for j in (i + 1)..p {
            out[i * p + j] = 0.0;
        }
    }
    out
}

/// Eigen-decomposition of a symmetric matrix: eigenvalues in ascending
/// order and the eigenvectors as the columns of a row-major `p × p` matrix.
pub(crate) fn symmetric_eigen(a: &[f64], p: usize) -> Option<(Vec<f64>, Vec<f64>)> {
    let evd = view(a, p, p).self_adjoint_eigen(Side::Lower).ok()?;
    let s = evd.S().column_vector();
    let u = evd.U();
    let values = (0..p).map(|i| s[i]).collect();
    let mut vectors = vec![0.0; p * p];
    for i in 0..p {
        for j in 0..p {
            vectors[i * p + j] = u[(i, j)];
        }
    }
    Some((values, vectors))
}

/// Eigenvalues of a symmetric matrix in ascending order.
pub(crate) fn symmetric_eigenvalues(a: &[f64], p: usize) -> Option<Vec<f64>> {
    view(a, p, p).self_adjoint_eigenvalues(Side::Lower).ok()
}

/// `dst += blockᵀ · block`, lower triangle only (the upper part of `dst` is
/// left untouched), through faer's triangular product.
pub(crate) fn gram_lower_add(dst: &mut [f64], block: &[f64], rows: usize, p: usize) {
    use faer::linalg::matmul::triangular::{matmul as tri_matmul, BlockStructure};
    let c = view(block, rows, p);
    tri_matmul(
        view_mut(dst, p, p),
        BlockStructure::TriangularLower,
        Accum::Add,
        c.transpose(),
        BlockStructure::Rectangular,
        c,
        BlockStructure::Rectangular,
        1.0,
        Par::Seq,
    );
}

/// `dst = a · b` for row-major matrices `a` (`m × k`) and `b` (`k × n`).
pub(crate) fn product(dst: &mut [f64], a: &[f64], b: &[f64], m: usize, k: usize, n: usize) {
    matmul(
        view_mut(dst, m, n),
        Accum::Replace,
        view(a, m, k),
        view(b, k, n),
        1.0,
        Par::Seq,
    );
}

/// `dst = a · bᵀ` for row-major matrices `a` (`m × k`) and `b` (`n × k`).
pub(crate) fn product_transposed(
    dst: &mut [f64],
    a: &[f64],
    b: &[f64],
    m: usize,
    k: usize,
    n: usize,
) {
    matmul(
        view_mut(dst, m, n),
        Accum::Replace,
        view(a, m, k),
        view(b, n, k).transpose(),
        1.0,
        Par::Seq,
    );
}

/// `dst = aᵀ · b` for row-major matrices `a` (`k × m`) and `b` (`k × n`).
pub(crate) fn transposed_product(
    dst: &mut [f64],
    a: &[f64],
    b: &[f64],
    k: usize,
    m: usize,
    n: usize,
) {
    matmul(
        view_mut(dst, m, n),
        Accum::Replace,
        view(a, k, m).transpose(),
        view(b, k, n),
        1.0,
        Par::Seq,
    );
}
