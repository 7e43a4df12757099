//! The restart data of a transient run inside its output folder, both written atomically as
//! [`crate::io::binary_record`] files tagged with the SHA-256 of the case text:
//!
//! - `DIR/checkpoint.bin`: the solver's [`TransientState::encode`] vector (the whole state between two
//!   steps, including the number of output times already written);
//! - `DIR/transient_parts/output_<index>.bin`: one record per output time reached (time, balance, per-cell
//!   values, field), so the final `fields.h5` and `cells_timeseries.csv` hold every output time even when the
//!   run was killed and resumed in between.
//!
//! Both are removed once the final outputs are written.

use std::path::{Path, PathBuf};

use anyhow::Context;
use solver::post::decompose::CellSplit;
use solver::solve_transient::{StepBalance, TransientOutput, TransientState};

use super::cell_series::{sensed_values, split_values, splits_of, RECORD_VALUES};
use crate::exit::InputError;
use crate::io::binary_record::{read_record, write_record};

const CHECKPOINT_KIND: &str = "transient checkpoint";
const OUTPUT_KIND: &str = "transient output time";

pub fn checkpoint_path(dir: &Path) -> PathBuf {
    dir.join("checkpoint.bin")
}

pub fn parts_dir(dir: &Path) -> PathBuf {
    dir.join("transient_parts")
}

fn part_path(dir: &Path, index: usize) -> PathBuf {
    parts_dir(dir).join(format!("output_{index:06}.bin"))
}

/// Writes the checkpoint of `state` for the case with text hash `case_sha256`.
pub fn write_checkpoint(dir: &Path, case_sha256: &str, state: &TransientState) -> anyhow::Result<()> {
    let path = checkpoint_path(dir);
    write_record(&path, CHECKPOINT_KIND, case_sha256, &state.encode())
        .with_context(|| format!("cannot write the checkpoint {}", path.display()))
}

/// Reads the checkpoint of `dir`, refusing one written for another case text (exit code 2).
pub fn read_checkpoint(dir: &Path, case_sha256: &str) -> anyhow::Result<TransientState> {
    let path = checkpoint_path(dir);
    if !path.exists() {
        return Err(InputError(format!(
            "--resume: {} has no checkpoint.bin to resume from (start the run without --resume; write checkpoints with --checkpoint-every)",
            dir.display()
        ))
        .into());
    }
    let record = read_record(&path, CHECKPOINT_KIND).map_err(|e| InputError(format!("--resume: {e}")))?;
    if record.tag != case_sha256 {
        return Err(InputError(format!(
            "--resume: {} was written for a different case file (case SHA-256 {}…, this case {}…); resume with the original case, or run without --resume to start over",
            path.display(),
            record.tag.get(..12).unwrap_or(&record.tag),
            case_sha256.get(..12).unwrap_or(case_sha256)
        ))
        .into());
    }
    TransientState::decode(&record.values)
        .map_err(|e| InputError(format!("--resume: {}: {e}", path.display())).into())
}

/// What is kept of one output time.
#[derive(Clone, Debug, PartialEq)]
pub struct OutputPart {
    pub index: usize,
    pub time: f64,
    /// False for a final time off the output grid (early stop or an end time between output times).
    pub regular: bool,
    pub outlet_concentration: Option<f64>,
    pub balance: StepBalance,
    /// The record values (`cell_series::sensed_values`), value after value.
    pub sensed: Vec<f64>,
    /// The self/neighbour split of the split cells whose own field is intact at this time.
    pub splits: Vec<CellSplit>,
    pub concentration: Vec<f64>,
}

impl OutputPart {
    /// The record of `output`; its field only when `keep_field` (a run that writes no concentration snapshots
    /// keeps none).
    pub fn from_output(output: &TransientOutput, keep_field: bool) -> Self {
        OutputPart {
            index: output.index,
            time: output.time,
            regular: output.regular,
            outlet_concentration: output.outlet_concentration,
            balance: output.balance,
            sensed: sensed_values(output),
            splits: output.splits.to_vec(),
            concentration: if keep_field { output.concentration.to_vec() } else { Vec::new() },
        }
    }

    fn encode(&self) -> Vec<f64> {
        let b = &self.balance;
        let mut v = vec![
            self.index as f64,
            self.time,
            if self.regular { 1.0 } else { 0.0 },
            self.outlet_concentration.unwrap_or(f64::NAN),
            b.secreted,
            b.outflow,
            b.uptake,
            b.decay,
            b.accumulation,
            b.stored,
            b.relative_error,
            self.sensed.len() as f64,
        ];
        v.extend_from_slice(&self.sensed);
        v.push(self.concentration.len() as f64);
        v.extend_from_slice(&self.concentration);
        let splits = split_values(&self.splits);
        v.push(splits.len() as f64);
        v.extend(splits);
        v
    }

    fn decode(v: &[f64], cells: usize, field_len: usize) -> Option<Self> {
        let head = v.get(..12)?;
        let n_sensed = head[11] as usize;
        if n_sensed != RECORD_VALUES * cells {
            return None;
        }
        let sensed = v.get(12..12 + n_sensed)?.to_vec();
        let n_grid = *v.get(12 + n_sensed)? as usize;
        if n_grid != field_len {
            return None;
        }
        let at_splits = 13 + n_sensed + n_grid;
        let n_splits = *v.get(at_splits)? as usize;
        if v.len() - at_splits - 1 != n_splits {
            return None;
        }
        Some(OutputPart {
            index: head[0] as usize,
            time: head[1],
            regular: head[2] == 1.0,
            outlet_concentration: (!head[3].is_nan()).then_some(head[3]),
            balance: StepBalance {
                secreted: head[4],
                outflow: head[5],
                uptake: head[6],
                decay: head[7],
                accumulation: head[8],
                stored: head[9],
                relative_error: head[10],
            },
            sensed,
            splits: splits_of(&v[at_splits + 1..], cells)?,
            concentration: v[13 + n_sensed..at_splits].to_vec(),
        })
    }
}

/// Writes the record of one output time.
pub fn write_part(dir: &Path, case_sha256: &str, part: &OutputPart) -> anyhow::Result<()> {
    let path = part_path(dir, part.index);
    write_record(&path, OUTPUT_KIND, case_sha256, &part.encode())
        .with_context(|| format!("cannot write {}", path.display()))
}

/// Reads the record of output time `index`, checking that it belongs to this case and grid (`field_len`: the
/// grid's cell count, or 0 for a run that keeps no fields).
pub fn read_part(
    dir: &Path,
    case_sha256: &str,
    index: usize,
    cells: usize,
    field_len: usize,
) -> anyhow::Result<OutputPart> {
    let path = part_path(dir, index);
    let record = read_record(&path, OUTPUT_KIND).with_context(|| {
        format!("output time {index} of the run is missing; remove {} and run again", dir.display())
    })?;
    if record.tag != case_sha256 {
        return Err(anyhow::anyhow!("{} belongs to another case file", path.display()));
    }
    let part = OutputPart::decode(&record.values, cells, field_len)
        .ok_or_else(|| anyhow::anyhow!("{} does not fit this case's grid and cells", path.display()))?;
    if part.index != index {
        return Err(anyhow::anyhow!(
            "{} holds output time {} instead of {index}",
            path.display(),
            part.index
        ));
    }
    Ok(part)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn part_round_trip() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::create_dir_all(parts_dir(dir.path())).unwrap();
        let part = OutputPart {
            index: 3,
            time: 90.0,
            regular: true,
            outlet_concentration: None,
            balance: StepBalance { secreted: 1.0, relative_error: 1e-12, ..Default::default() },
            sensed: (0..RECORD_VALUES * 2).map(|i| i as f64 / 7.0).collect(),
            splits: splits_of(&[1.0; super::super::cell_series::SPLIT_VALUES], 2).unwrap(),
            concentration: vec![0.5; 5],
        };
        write_part(dir.path(), "abc", &part).unwrap();
        assert_eq!(read_part(dir.path(), "abc", 3, 2, 5).unwrap(), part);
        assert!(read_part(dir.path(), "abd", 3, 2, 5).is_err());
        assert!(read_part(dir.path(), "abc", 3, 3, 5).is_err());
        assert!(read_part(dir.path(), "abc", 4, 2, 5).is_err());
    }
}
