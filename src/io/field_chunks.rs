//! The 3-D datasets of `fields.h5` written chunk by chunk: every chunk is gathered from the flat field,
//! converted to the stored precision, byte-shuffled and deflated on the rayon pool, and handed to HDF5 already
//! filtered (direct chunk write, HDF5 ≥ 1.10.3). HDF5 runs one call at a time, so its own filter pipeline would
//! compress on one core; here it only copies finished bytes.
//!
//! The stored chunks are exactly what HDF5's shuffle and deflate filters make (the filters are declared on
//! the dataset, so every reader decodes them as usual): shuffle puts byte `b` of element `e` at `b·n + e`
//! (HDF5 H5Zshuffle.c), deflate is a zlib stream (RFC 1950, as zlib's `compress2` writes it). Edge chunks are
//! stored whole, padded with zeros (HDF5 stores every chunk at full size).

use anyhow::{anyhow, Context};
use hdf5::{Dataset, Group, H5Type};
use rayon::prelude::*;

/// Precision of the stored 3-D fields (`[output] precision`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Precision {
    /// IEEE binary32: half the bytes; about 7 significant digits.
    Single,
    /// IEEE binary64, the solver's own values bit for bit.
    Double,
}

impl Precision {
    pub fn name(self) -> &'static str {
        match self {
            Precision::Single => "single",
            Precision::Double => "double",
        }
    }

    /// Bytes per stored value (XDMF `Precision`).
    pub fn bytes(self) -> usize {
        match self {
            Precision::Single => 4,
            Precision::Double => 8,
        }
    }
}

/// How the 3-D fields are stored: precision and deflate level (0 = no compression filter).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct FieldStorage {
    pub precision: Precision,
    /// 0..=9; 0 writes the chunks without filters.
    pub compression: u8,
}

impl Default for FieldStorage {
    /// Double precision, deflate level 1 with shuffle: see `bench/RECORDS.md` (output write speed).
    fn default() -> Self {
        FieldStorage { precision: Precision::Double, compression: DEFAULT_COMPRESSION }
    }
}

/// The default deflate level (`bench/RECORDS.md`, output write speed).
pub const DEFAULT_COMPRESSION: u8 = 1;
/// Largest chunk edge: 32³ doubles = 256 KiB per chunk (common practice for 3-D fields).
pub const CHUNK_EDGE: usize = 32;
/// Chunks compressed at once (bounds the memory of a batch awaiting its write: 64 × 256 KiB at most).
const BATCH_CHUNKS: usize = 64;

/// Writes `values` (flat `i + nx (j + ny k)`) as the chunked `(nz, ny, nx)` dataset `name` of `group`.
pub fn write_chunked_field(
    group: &Group,
    name: &str,
    shape: [usize; 3],
    values: &[f64],
    storage: FieldStorage,
) -> anyhow::Result<Dataset> {
    let [nx, ny, nz] = shape;
    if values.len() != nx * ny * nz {
        return Err(anyhow!("field {name}: {} values do not fit the grid {nx}×{ny}×{nz}", values.len()));
    }
    let chunk = [nz, ny, nx].map(|n| n.clamp(1, CHUNK_EDGE));
    let ds = match storage.precision {
        Precision::Single => create::<f32>(group, name, [nz, ny, nx], chunk, storage.compression)?,
        Precision::Double => create::<f64>(group, name, [nz, ny, nx], chunk, storage.compression)?,
    };
    if values.is_empty() {
        return Ok(ds);
    }
    let counts = [nz.div_ceil(chunk[0]), ny.div_ceil(chunk[1]), nx.div_ceil(chunk[2])];
    let origins: Vec<[usize; 3]> = (0..counts[0])
        .flat_map(|a| (0..counts[1]).flat_map(move |b| (0..counts[2]).map(move |c| [a, b, c])))
        .map(|[a, b, c]| [a * chunk[0], b * chunk[1], c * chunk[2]])
        .collect();
    // A batch of chunks is compressed on the current rayon pool, then written by this thread, which holds
    // HDF5's lock (a thread of its own could not take it); HDF5 then only copies finished bytes.
    for batch in origins.chunks(BATCH_CHUNKS) {
        let encoded: Vec<Vec<u8>> =
            batch.par_iter().map(|o| encode_chunk(values, [nz, ny, nx], chunk, *o, storage)).collect();
        for (origin, bytes) in batch.iter().zip(&encoded) {
            write_raw_chunk(&ds, *origin, bytes)
                .with_context(|| format!("cannot write dataset {}/{name}", group.name()))?;
        }
    }
    Ok(ds)
}

fn create<T: H5Type>(
    group: &Group,
    name: &str,
    shape: [usize; 3],
    chunk: [usize; 3],
    compression: u8,
) -> anyhow::Result<Dataset> {
    let builder = group.new_dataset::<T>().shape(shape).chunk(chunk).obj_track_times(false);
    let builder = if compression > 0 { builder.shuffle().deflate(compression) } else { builder };
    builder.create(name).with_context(|| format!("cannot create dataset {}/{name}", group.name()))
}

/// The stored bytes of the chunk at `origin` (element offsets z, y, x): gathered, converted, filtered.
fn encode_chunk(
    values: &[f64],
    shape: [usize; 3],
    chunk: [usize; 3],
    origin: [usize; 3],
    storage: FieldStorage,
) -> Vec<u8> {
    let [nz, ny, nx] = shape;
    let size = storage.precision.bytes();
    let mut raw = vec![0u8; chunk.iter().product::<usize>() * size];
    let (kz, ky, kx) =
        (chunk[0].min(nz - origin[0]), chunk[1].min(ny - origin[1]), chunk[2].min(nx - origin[2]));
    for dk in 0..kz {
        for dj in 0..ky {
            let from = origin[2] + nx * (origin[1] + dj + ny * (origin[0] + dk));
            let row = &values[from..from + kx];
            let to = (dk * chunk[1] + dj) * chunk[2] * size;
            let out = &mut raw[to..to + kx * size];
            match storage.precision {
                Precision::Double => {
                    for (o, v) in out.chunks_exact_mut(8).zip(row) {
                        o.copy_from_slice(&v.to_le_bytes());
                    }
                }
                Precision::Single => {
                    for (o, v) in out.chunks_exact_mut(4).zip(row) {
                        o.copy_from_slice(&(*v as f32).to_le_bytes());
                    }
                }
            }
        }
    }
    if storage.compression == 0 {
        return raw;
    }
    let shuffled = shuffle(&raw, size);
    drop(raw);
    deflate(&shuffled, storage.compression)
}

/// HDF5's shuffle filter: byte `b` of element `e` goes to `b·n + e` (n elements of `size` bytes).
fn shuffle(bytes: &[u8], size: usize) -> Vec<u8> {
    let n = bytes.len() / size;
    let mut out = vec![0u8; bytes.len()];
    for (e, element) in bytes.chunks_exact(size).enumerate() {
        for (b, byte) in element.iter().enumerate() {
            out[b * n + e] = *byte;
        }
    }
    out
}

/// A zlib stream (RFC 1950) of `bytes` at `level`, what HDF5's deflate filter stores.
fn deflate(bytes: &[u8], level: u8) -> Vec<u8> {
    use std::io::Write as _;
    let mut encoder = flate2::write::ZlibEncoder::new(
        Vec::with_capacity(bytes.len() / 2),
        flate2::Compression::new(level.into()),
    );
    // Writing into a Vec cannot fail.
    let _ = encoder.write_all(bytes);
    encoder.finish().unwrap_or_default()
}

/// One chunk's stored bytes, filters already applied (filter mask 0).
fn write_raw_chunk(ds: &Dataset, origin: [usize; 3], bytes: &[u8]) -> anyhow::Result<()> {
    let offset = origin.map(|o| o as hdf5_sys::h5::hsize_t);
    let status = hdf5::sync::sync(|| {
        // SAFETY: `ds` is an open dataset of rank 3; `offset` holds three elements; `bytes` outlives the call,
        // which copies `bytes.len()` bytes from it.
        unsafe {
            hdf5_sys::h5d::H5Dwrite_chunk(
                ds.id(),
                hdf5_sys::h5p::H5P_DEFAULT,
                0,
                offset.as_ptr(),
                bytes.len(),
                bytes.as_ptr().cast(),
            )
        }
    });
    if status < 0 {
        return Err(anyhow!("HDF5 refused the chunk at {origin:?}"));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use hdf5::filters::Filter;
    use ndarray::Ix3;

    #[test]
    fn shuffle_matches_hdf5s_byte_order() {
        let bytes = [1u8, 2, 3, 4, 5, 6, 7, 8];
        assert_eq!(shuffle(&bytes, 4), vec![1, 5, 2, 6, 3, 7, 4, 8]);
        assert_eq!(shuffle(&bytes, 8), bytes.to_vec());
    }

    /// Odd sizes (edge chunks), every precision and level: HDF5 reads back what was written.
    #[test]
    fn direct_chunks_read_back_through_hdf5s_filters() {
        let dir = tempfile::tempdir().unwrap();
        let shape = [37, 33, 5];
        let n: usize = shape.iter().product();
        let values: Vec<f64> = (0..n).map(|m| (m as f64 * 0.37).sin() * 1e15 + m as f64 / 3.0).collect();
        for (index, storage) in [
            FieldStorage { precision: Precision::Double, compression: 0 },
            FieldStorage { precision: Precision::Double, compression: 1 },
            FieldStorage { precision: Precision::Single, compression: 6 },
            FieldStorage { precision: Precision::Single, compression: 0 },
        ]
        .into_iter()
        .enumerate()
        {
            let path = dir.path().join(format!("f{index}.h5"));
            let file = hdf5::File::create(&path).unwrap();
            let ds = write_chunked_field(&file, "c", shape, &values, storage).unwrap();
            drop(ds);
            file.close().unwrap();
            let file = hdf5::File::open(&path).unwrap();
            let ds = file.dataset("c").unwrap();
            assert_eq!(ds.shape(), vec![5, 33, 37]);
            assert_eq!(ds.chunk(), Some(vec![5, 32, 32]));
            let expected_filters = if storage.compression > 0 {
                vec![Filter::Shuffle, Filter::Deflate(storage.compression)]
            } else {
                vec![]
            };
            assert_eq!(ds.filters(), expected_filters, "{storage:?}");
            assert_eq!(ds.dtype().unwrap().size(), storage.precision.bytes());
            let read = ds.read::<f64, Ix3>().unwrap();
            for (m, v) in values.iter().enumerate() {
                let (i, j, k) = (m % 37, (m / 37) % 33, m / (37 * 33));
                let expected = match storage.precision {
                    Precision::Double => *v,
                    Precision::Single => f64::from(*v as f32),
                };
                assert_eq!(read[[k, j, i]].to_bits(), expected.to_bits(), "{storage:?} at {m}");
            }
        }
    }
}
