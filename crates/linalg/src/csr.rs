//! Compressed sparse row storage: a pattern shared by every matrix assembled on it, and values.

use std::sync::Arc;

/// Sparsity pattern in CSR form: column indices sorted and unique within each row.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CsrPattern {
    pub n_rows: usize,
    pub n_cols: usize,
    /// `n_rows + 1` offsets into `col_idx`.
    pub row_ptr: Vec<usize>,
    pub col_idx: Vec<usize>,
}

impl CsrPattern {
    /// Build a pattern from per-row column lists (each is sorted and de-duplicated here).
    pub fn from_rows(n_cols: usize, rows: Vec<Vec<usize>>) -> Self {
        let mut row_ptr = Vec::with_capacity(rows.len() + 1);
        row_ptr.push(0);
        let mut col_idx = Vec::new();
        for mut r in rows {
            r.sort_unstable();
            r.dedup();
            debug_assert!(r.last().is_none_or(|&c| c < n_cols));
            col_idx.extend_from_slice(&r);
            row_ptr.push(col_idx.len());
        }
        CsrPattern {
            n_rows: row_ptr.len() - 1,
            n_cols,
            row_ptr,
            col_idx,
        }
    }

    pub fn nnz(&self) -> usize {
        self.col_idx.len()
    }

    /// Column indices of row `i`.
    #[inline]
    pub fn row(&self, i: usize) -> &[usize] {
        &self.col_idx[self.row_ptr[i]..self.row_ptr[i + 1]]
    }

    /// Position of entry `(i, j)` in the value array, if it is in the pattern.
    pub fn find(&self, i: usize, j: usize) -> Option<usize> {
        let start = self.row_ptr[i];
        self.row(i).binary_search(&j).ok().map(|k| start + k)
    }

    /// True when the pattern is structurally symmetric.
    pub fn is_structurally_symmetric(&self) -> bool {
        self.n_rows == self.n_cols
            && (0..self.n_rows).all(|i| self.row(i).iter().all(|&j| self.find(j, i).is_some()))
    }
}

/// A square or rectangular sparse matrix on a shared pattern.
#[derive(Clone, Debug, PartialEq)]
pub struct CsrMatrix {
    pub pattern: Arc<CsrPattern>,
    pub values: Vec<f64>,
}

impl CsrMatrix {
    /// A zero matrix on `pattern`.
    pub fn zeros(pattern: Arc<CsrPattern>) -> Self {
        let nnz = pattern.nnz();
        CsrMatrix {
            pattern,
            values: vec![0.0; nnz],
        }
    }

    pub fn n_rows(&self) -> usize {
        self.pattern.n_rows
    }

    /// Entry `(i, j)`, zero when outside the pattern.
    pub fn get(&self, i: usize, j: usize) -> f64 {
        self.pattern.find(i, j).map_or(0.0, |k| self.values[k])
    }

    /// `y = A x`.
    pub fn mul_vec_into(&self, x: &[f64], y: &mut [f64]) {
        assert_eq!(x.len(), self.pattern.n_cols);
        assert_eq!(y.len(), self.pattern.n_rows);
        let p = &self.pattern;
        for (i, yi) in y.iter_mut().enumerate() {
            let mut s = 0.0;
            for k in p.row_ptr[i]..p.row_ptr[i + 1] {
                s += self.values[k] * x[p.col_idx[k]];
            }
            *yi = s;
        }
    }

    /// `A x` as a new vector.
    pub fn mul_vec(&self, x: &[f64]) -> Vec<f64> {
        let mut y = vec![0.0; self.pattern.n_rows];
        self.mul_vec_into(x, &mut y);
        y
    }

    /// Diagonal entries (zero where the diagonal is not in the pattern).
    pub fn diagonal(&self) -> Vec<f64> {
        (0..self.pattern.n_rows).map(|i| self.get(i, i)).collect()
    }

    /// Largest `|a_ij - a_ji|` relative to the largest `|a_ij|`; zero for a symmetric matrix.
    pub fn asymmetry(&self) -> f64 {
        let p = &self.pattern;
        let mut max_abs: f64 = 0.0;
        let mut max_diff: f64 = 0.0;
        for i in 0..p.n_rows {
            for k in p.row_ptr[i]..p.row_ptr[i + 1] {
                let j = p.col_idx[k];
                max_abs = max_abs.max(self.values[k].abs());
                max_diff = max_diff.max((self.values[k] - self.get(j, i)).abs());
            }
        }
        if max_abs == 0.0 {
            0.0
        } else {
            max_diff / max_abs
        }
    }

    /// Copy into an `sprs` matrix (interchange with other sparse tools).
    pub fn to_sprs(&self) -> sprs::CsMat<f64> {
        let p = &self.pattern;
        sprs::CsMat::new(
            (p.n_rows, p.n_cols),
            p.row_ptr.clone(),
            p.col_idx.clone(),
            self.values.clone(),
        )
    }
}
