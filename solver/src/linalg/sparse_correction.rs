//! The cut-cell correction product `y += C x`: the sparse rows that cut cells add to the face-coupled operator
//! (wider interpolation of their fluxes), shared by the steady solver and the transient step solver.
//!
//! Only the nonzero rows are stored, packed: row `k` is grid cell `rows[k]` with entries
//! `start[k]..start[k+1]`. Rows ascend, so a block of grid cells owns a contiguous run of them and blocks are
//! summed in parallel, each row's entries in storage order — the same sum at any thread count. Row and column
//! indices are 32-bit (a grid holds fewer than 2³² cells): the product streams 12 bytes per entry, not 16.

use super::apply_operator::apply_face_coupled;
use super::operator::{AdvectionScheme, FaceCoupledOperator};
use rayon::prelude::*;
use sprs::CsMat;

/// `y = (A + C) x`: the face-coupled operator under `scheme` plus the correction — the product of every
/// transport solve, steady or one time step.
pub fn apply_corrected(
    operator: &FaceCoupledOperator,
    scheme: AdvectionScheme,
    correction: &SparseCorrection,
    x: &[f64],
    y: &mut [f64],
) {
    apply_face_coupled(operator, scheme, x, y);
    correction.add_product(x, y);
}

/// Grid cells per parallel task of the product.
const CORRECTION_CHUNK: usize = 1 << 15;

/// The nonzero rows of a square sparse correction, packed for the product.
#[derive(Clone, Debug)]
pub struct SparseCorrection {
    rows: Vec<u32>,
    start: Vec<usize>,
    columns: Vec<u32>,
    values: Vec<f64>,
}

impl Default for SparseCorrection {
    fn default() -> Self {
        SparseCorrection { rows: Vec::new(), start: vec![0], columns: Vec::new(), values: Vec::new() }
    }
}

impl SparseCorrection {
    /// Packs the nonzero rows of `c` (CSR or CSC).
    pub fn pack(c: &CsMat<f64>) -> Self {
        let mut packed = SparseCorrection::default();
        let converted;
        let csr = if c.is_csr() {
            c.view()
        } else {
            converted = c.to_csr();
            converted.view()
        };
        let index = |i: usize| u32::try_from(i).expect("sparse correction: more than 2^32 rows");
        for (row, entries) in csr.outer_iterator().enumerate() {
            if entries.nnz() == 0 {
                continue;
            }
            for (col, &a) in entries.iter() {
                packed.columns.push(index(col));
                packed.values.push(a);
            }
            packed.rows.push(index(row));
            packed.start.push(packed.columns.len());
        }
        packed
    }

    /// The correction as the CSR matrix of `n` rows it was packed from (entries in the same order).
    pub fn to_csr(&self, n: usize) -> CsMat<f64> {
        let mut indptr = Vec::with_capacity(n + 1);
        indptr.push(0);
        for (k, &row) in self.rows.iter().enumerate() {
            indptr.resize(row as usize + 1, self.start[k]);
            indptr.push(self.start[k + 1]);
        }
        indptr.resize(n + 1, self.columns.len());
        let indices = self.columns.iter().map(|&c| c as usize).collect();
        CsMat::new((n, n), indptr, indices, self.values.clone())
    }

    /// Rows that hold entries.
    pub fn row_count(&self) -> usize {
        self.rows.len()
    }

    /// Bytes held by the packed rows.
    pub fn memory_bytes(&self) -> usize {
        4 * (self.rows.len() + self.columns.len()) + 8 * (self.start.len() + self.values.len())
    }

    /// `y += C x`.
    pub fn add_product(&self, x: &[f64], y: &mut [f64]) {
        if self.rows.is_empty() {
            return;
        }
        y.par_chunks_mut(CORRECTION_CHUNK).enumerate().for_each(|(block, y_block)| {
            let first = block * CORRECTION_CHUNK;
            let last = first + y_block.len();
            let k0 = self.rows.partition_point(|&r| (r as usize) < first);
            let k1 = self.rows.partition_point(|&r| (r as usize) < last);
            self.add_rows(k0..k1, first, x, y_block);
        });
    }

    /// The packed rows of each block of `width` consecutive grid cells out of `cells`: block b owns rows
    /// `starts[b]..starts[b + 1]` (for a product fused into a block-by-block kernel).
    pub(crate) fn block_starts(&self, width: usize, cells: usize) -> Vec<u32> {
        let blocks = cells.div_ceil(width.max(1));
        let index = |k: usize| u32::try_from(k).expect("sparse correction: more than 2^32 rows");
        (0..=blocks).map(|b| index(self.rows.partition_point(|&r| (r as usize) < b * width))).collect()
    }

    /// `y_block += C x` on the packed rows `rows`, whose grid cells lie in the block starting at grid cell
    /// `first`; each row's entries are summed in storage order.
    #[inline]
    pub(crate) fn add_rows(
        &self,
        rows: std::ops::Range<usize>,
        first: usize,
        x: &[f64],
        y_block: &mut [f64],
    ) {
        for k in rows {
            let (a, b) = (self.start[k], self.start[k + 1]);
            let sum: f64 =
                self.columns[a..b].iter().zip(&self.values[a..b]).map(|(&col, &v)| v * x[col as usize]).sum();
            y_block[self.rows[k] as usize - first] += sum;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sprs::TriMat;

    /// The packed, block-parallel product equals the product summed entry by entry, rows spread over several
    /// blocks, from CSR and CSC storage.
    #[test]
    fn packed_correction_matches_the_sparse_product() {
        let n = 3 * CORRECTION_CHUNK + 123;
        let x: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).cos()).collect();
        let mut triplets = TriMat::new((n, n));
        let mut expected = vec![0.0; n];
        for k in 0..5000usize {
            let row = (k * 7919) % n;
            for j in 0..(1 + k % 9) {
                let col = (row + j * 4099 + k) % n;
                let value = ((k + j) as f64).sin();
                triplets.add_triplet(row, col, value);
                expected[row] += value * x[col];
            }
        }
        let csc: CsMat<f64> = triplets.to_csc();
        for matrix in [csc.to_csr(), csc] {
            let packed = SparseCorrection::pack(&matrix);
            assert!(packed.rows.windows(2).all(|w| w[0] < w[1]));
            assert_eq!(packed.to_csr(n), matrix.to_csr(), "unpacked");
            let mut y = vec![1.0; n];
            packed.add_product(&x, &mut y);
            for (p, (got, want)) in y.iter().zip(&expected).enumerate() {
                assert!(
                    (got - 1.0 - want).abs() <= 1e-12 * (1.0 + want.abs()),
                    "row {p}: {got} vs 1 + {want}"
                );
            }
        }
    }
}
