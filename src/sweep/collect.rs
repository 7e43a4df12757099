//! Gathering a sweep into one table: one row per case (done, failed or not done), with the swept parameters
//! (SI), summary metrics from `summary.json`, and per-cell aggregates (p10, median, p90) from `cells.csv`.
//! Written as `DIR/sweep.csv` and `DIR/sweep.h5`, both atomically.
//!
//! The table holds only what the physics determines — no wall times — so the same sweep gives the same
//! `sweep.csv` byte for byte, whether it ran locally or as a Slurm array. Wall times go to `DIR/timings.csv`.

use std::path::Path;

use anyhow::{Context, Result};
use hdf5::types::VarLenUnicode;
use rayon::prelude::*;

use super::aggregate::p10_median_p90;
use super::done_marker::{case_state, CaseState};
use super::plan_record::PlanRecord;
use crate::io::number_text::format_real;
use crate::io::{with_atomic_file, write_atomic};
use crate::outputs::columns::{aggregated_columns, AggregatedColumn};
use crate::outputs::RunSummary;

/// Values of one column.
#[derive(Clone, Debug, PartialEq)]
pub enum ColumnData {
    Real(Vec<f64>),
    Text(Vec<String>),
}

/// What a column is, for the figures.
#[derive(Clone, Debug, PartialEq)]
pub enum ColumnRole {
    /// `case_id`, `status`.
    Label,
    /// The values of sweep axis number `axis`.
    Parameter { axis: usize },
    /// A number per case from `summary.json`.
    Metric,
    /// A percentile over the cells of `quantity`; `stat` is `p10`, `median` or `p90`.
    Aggregate { quantity: String, stat: &'static str },
}

#[derive(Clone, Debug, PartialEq)]
pub struct SweepColumn {
    pub name: String,
    pub unit: String,
    pub description: String,
    pub role: ColumnRole,
    pub data: ColumnData,
}

/// The collected sweep: columns of equal length, one row per case in plan order.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepTable {
    pub columns: Vec<SweepColumn>,
    pub rows: usize,
}

impl SweepTable {
    pub fn column(&self, name: &str) -> Option<&SweepColumn> {
        self.columns.iter().find(|c| c.name == name)
    }
}

/// A number of a case's summary (`None`: the case has none, e.g. a null estimate).
type Metric = fn(&RunSummary) -> Option<f64>;

/// Numbers read from `summary.json`, named by their dotted key there: (key, unit, description, value).
const SUMMARY_METRICS: [(&str, &str, &str, Metric); 13] = [
    ("cells.count", "1", "number of cells", |s| Some(s.cells.count as f64)),
    ("cells.volume_fraction", "1", "fraction of the chamber inside cells", |s| Some(s.cells.volume_fraction)),
    ("flow.pressure_drop", "Pa", "pressure drop across the chamber", |s| Some(s.flow.pressure_drop)),
    ("flow.iterations", "1", "iterations of the flow solve", |s| Some(s.flow.iterations as f64)),
    ("transport.iterations", "1", "iterations of the transport solve", |s| {
        Some(s.transport.iterations as f64)
    }),
    ("mass_balance.secreted", "molecules/s", "ligand secreted by all cells", |s| {
        Some(s.mass_balance.secreted)
    }),
    ("mass_balance.outflow", "molecules/s", "ligand leaving through the chamber faces", |s| {
        Some(s.mass_balance.outflow)
    }),
    ("mass_balance.uptake", "molecules/s", "ligand bound by all cells", |s| Some(s.mass_balance.uptake)),
    ("mass_balance.decay", "molecules/s", "ligand decaying in the bulk", |s| Some(s.mass_balance.decay)),
    ("mass_balance.relative_error", "1", "relative closure error of the mass balance", |s| {
        Some(s.mass_balance.relative_error)
    }),
    (
        "estimates.measured_outlet_concentration",
        "molecules/m^3",
        "flux-weighted outlet concentration (solve)",
        |s| s.estimates.measured_outlet_concentration,
    ),
    (
        "estimates.meanfield_outlet_concentration",
        "molecules/m^3",
        "outlet concentration of the mean-field estimate",
        |s| s.estimates.meanfield_outlet_concentration,
    ),
    ("estimates.isolated_anisotropy", "1", "anisotropy of an isolated cell (low-Péclet estimate)", |s| {
        s.estimates.isolated_anisotropy
    }),
];

/// Where the time of one finished case went (a row of `timings.csv`; see `numkit::meter`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CaseTiming {
    /// Wall time, seconds.
    pub elapsed_s: f64,
    /// Worker threads of the case.
    pub threads: usize,
    /// CPU time and run-queue wait of those threads, seconds, when recorded.
    pub cpu_s: Option<f64>,
    pub runqueue_s: Option<f64>,
}

/// What one finished case contributes.
struct CaseData {
    summary: RunSummary,
    /// Per-cell columns by name.
    cells: Vec<(String, Vec<f64>)>,
    timing: CaseTiming,
}

/// Read the finished cases of the sweep in `dir` into a table.
pub fn collect(dir: &Path) -> Result<(SweepTable, PlanRecord, Vec<Option<CaseTiming>>)> {
    let plan = PlanRecord::read(dir).map_err(|m| anyhow::Error::new(crate::exit::InputError(m)))?;
    collect_cases(dir, plan)
}

/// Read the finished cases of `plan` (all of a sweep's, or some) from the sweep folder `dir` into a table.
pub fn collect_cases(
    dir: &Path,
    plan: PlanRecord,
) -> Result<(SweepTable, PlanRecord, Vec<Option<CaseTiming>>)> {
    let rows = plan.cases.len();
    // Cases are read on all cores (a local sweep waits for `collect` after its last case); the first error
    // in plan order is reported.
    let read: Vec<Result<(String, Option<CaseData>)>> = plan
        .cases
        .par_iter()
        .map(|case| {
            let case_dir = dir.join("cases").join(&case.id);
            Ok(match case_state(&case_dir, &case.sha256) {
                CaseState::Done(marker) => {
                    let timing = CaseTiming {
                        elapsed_s: marker.elapsed_s,
                        threads: marker.threads,
                        cpu_s: marker.cpu_s,
                        runqueue_s: marker.runqueue_s,
                    };
                    let read = read_case(&case_dir, timing)
                        .with_context(|| format!("cannot read the outputs of {}", case.id))?;
                    ("done".to_string(), Some(read))
                }
                CaseState::Failed(_) => ("failed".to_string(), None),
                CaseState::NotDone { .. } => ("not_done".to_string(), None),
            })
        })
        .collect();
    let mut status = Vec::with_capacity(rows);
    let mut data: Vec<Option<CaseData>> = Vec::with_capacity(rows);
    for case in read {
        let (s, d) = case?;
        status.push(s);
        data.push(d);
    }

    let mut columns = vec![
        SweepColumn {
            name: "case_id".into(),
            unit: String::new(),
            description: "case folder under cases/".into(),
            role: ColumnRole::Label,
            data: ColumnData::Text(plan.cases.iter().map(|c| c.id.clone()).collect()),
        },
        SweepColumn {
            name: "status".into(),
            unit: String::new(),
            description: "done | failed (see cases/<id>/failed.json) | not_done".into(),
            role: ColumnRole::Label,
            data: ColumnData::Text(status),
        },
        SweepColumn {
            name: "warnings".into(),
            unit: String::new(),
            description: "the case's warnings from summary.json (validation and solve), joined with \"; \""
                .into(),
            role: ColumnRole::Label,
            data: ColumnData::Text(
                data.iter()
                    .map(|d| d.as_ref().map(|d| d.summary.warnings.join("; ")).unwrap_or_default())
                    .collect(),
            ),
        },
    ];
    for (a, axis) in plan.axes.iter().enumerate() {
        let texts: Vec<&str> = plan.cases.iter().map(|c| c.values[a].text.as_str()).collect();
        if let Some(table_columns) = super::table_axis::table_axis_columns(&axis.key, a, &texts) {
            columns.extend(table_columns);
            continue;
        }
        let numeric = plan.cases.iter().all(|c| c.values[a].si.is_some());
        let data = if numeric && axis.unit.is_some() {
            ColumnData::Real(plan.cases.iter().map(|c| c.values[a].si.unwrap_or(f64::NAN)).collect())
        } else {
            ColumnData::Text(
                plan.cases.iter().map(|c| c.values[a].text.trim_matches('"').to_string()).collect(),
            )
        };
        columns.push(SweepColumn {
            name: axis.key.clone(),
            unit: axis.unit.clone().unwrap_or_default(),
            description: format!("swept case key {} (SI)", axis.key),
            role: ColumnRole::Parameter { axis: a },
            data,
        });
    }
    for (path, unit, description, metric) in SUMMARY_METRICS {
        let values =
            data.iter().map(|d| d.as_ref().and_then(|d| metric(&d.summary)).unwrap_or(f64::NAN)).collect();
        columns.push(SweepColumn {
            name: path.into(),
            unit: unit.into(),
            description: description.into(),
            role: ColumnRole::Metric,
            data: ColumnData::Real(values),
        });
    }
    for AggregatedColumn { name: quantity, unit, words: description } in aggregated_columns() {
        let present = data.iter().flatten().any(|d| d.cells.iter().any(|(name, _)| name == quantity));
        if !present {
            continue;
        }
        let stats: Vec<[f64; 3]> = data
            .iter()
            .map(|d| {
                d.as_ref()
                    .and_then(|d| d.cells.iter().find(|(name, _)| name == quantity))
                    .map_or([f64::NAN; 3], |(_, values)| p10_median_p90(values))
            })
            .collect();
        for (k, stat) in ["p10", "median", "p90"].into_iter().enumerate() {
            columns.push(SweepColumn {
                name: format!("{quantity}_{stat}"),
                unit: unit.into(),
                description: format!("{stat} over the cells of the case: {description}"),
                role: ColumnRole::Aggregate { quantity: quantity.into(), stat },
                data: ColumnData::Real(stats.iter().map(|s| s[k]).collect()),
            });
        }
    }
    let sensing: Vec<Option<serde_json::Value>> = data
        .iter()
        .map(|d| {
            d.as_ref().and_then(|d| d.summary.sensing.as_ref()).and_then(|s| serde_json::to_value(s).ok())
        })
        .collect();
    columns.extend(super::sensing_columns::sensing_columns(&sensing));
    let timings = data.iter().map(|d| d.as_ref().map(|d| d.timing)).collect();
    Ok((SweepTable { columns, rows }, plan, timings))
}

/// The warnings a finished case recorded in its `summary.json` (the case's own and the solve's); none when
/// the summary cannot be read (the case is then reported by `collect`).
pub fn finished_case_warnings(case_dir: &Path) -> Vec<String> {
    RunSummary::read(&case_dir.join("summary.json")).map(|s| s.warnings).unwrap_or_default()
}

fn read_case(case_dir: &Path, timing: CaseTiming) -> Result<CaseData> {
    let summary = RunSummary::read(&case_dir.join("summary.json"))?;
    let cells_path = case_dir.join("cells.csv");
    let mut reader = csv::Reader::from_path(&cells_path)
        .with_context(|| format!("cannot read {}", cells_path.display()))?;
    let headers: Vec<String> = reader.headers()?.iter().map(str::to_string).collect();
    let aggregated = aggregated_columns();
    let wanted: Vec<(usize, &str)> = headers
        .iter()
        .enumerate()
        .filter_map(|(i, h)| aggregated.iter().find(|q| q.name == h).map(|q| (i, q.name)))
        .collect();
    let mut cells: Vec<(String, Vec<f64>)> =
        wanted.iter().map(|(_, q)| (q.to_string(), Vec::new())).collect();
    for record in reader.records() {
        let record = record.with_context(|| format!("{} has a bad row", cells_path.display()))?;
        for (slot, (i, q)) in wanted.iter().enumerate() {
            let text = record.get(*i).unwrap_or("");
            let value: f64 = text
                .parse()
                .with_context(|| format!("{}: {q} = {text:?} is not a number", cells_path.display()))?;
            cells[slot].1.push(value);
        }
    }
    Ok(CaseData { summary, cells, timing })
}

/// `sweep.csv`: a header of column names, then one row per case; reals as the shortest round-trip decimal.
pub fn csv_text(table: &SweepTable) -> Result<Vec<u8>> {
    let mut writer =
        csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    writer.write_record(table.columns.iter().map(|c| c.name.as_str()))?;
    for row in 0..table.rows {
        writer.write_record(table.columns.iter().map(|c| match &c.data {
            ColumnData::Real(v) => format_real(v[row]),
            ColumnData::Text(v) => v[row].clone(),
        }))?;
    }
    writer.into_inner().map_err(|e| anyhow::anyhow!("cannot assemble sweep.csv: {e}"))
}

/// Write `sweep.csv` atomically.
pub fn write_csv(path: &Path, table: &SweepTable) -> Result<()> {
    write_atomic(path, &csv_text(table)?).with_context(|| format!("cannot write {}", path.display()))
}

/// Write `timings.csv` atomically: case id, wall time, threads, CPU time and run-queue wait of the case
/// (seconds; empty when not done or not recorded).
pub fn write_timings(path: &Path, plan: &PlanRecord, timings: &[Option<CaseTiming>]) -> Result<()> {
    let mut text = String::from("case_id,elapsed_s,threads,cpu_s,runqueue_s\n");
    let real = |x: Option<f64>| x.map(format_real).unwrap_or_default();
    for (case, t) in plan.cases.iter().zip(timings) {
        text.push_str(&format!(
            "{},{},{},{},{}\n",
            case.id,
            real(t.map(|t| t.elapsed_s)),
            t.map(|t| t.threads.to_string()).unwrap_or_default(),
            real(t.and_then(|t| t.cpu_s)),
            real(t.and_then(|t| t.runqueue_s))
        ));
    }
    write_atomic(path, text.as_bytes()).with_context(|| format!("cannot write {}", path.display()))
}

/// Write `sweep.h5` atomically: one 1-D dataset per column (named as in the CSV), each with `units` and
/// `description` attributes; the file's `columns` attribute gives their order.
pub fn write_h5(path: &Path, table: &SweepTable, plan: &PlanRecord) -> Result<()> {
    let text = |s: &str| {
        s.parse::<VarLenUnicode>().map_err(|e| anyhow::anyhow!("text {s:?} cannot be stored in HDF5: {e}"))
    };
    with_atomic_file(path, |temp| {
        let file = hdf5::File::with_options()
            .with_fcpl(|p| p.obj_track_times(false))
            .create(temp)
            .with_context(|| format!("cannot create HDF5 file {}", temp.display()))?;
        let names = table.columns.iter().map(|c| text(&c.name)).collect::<Result<Vec<_>>>()?;
        file.new_attr_builder().with_data(&names[..]).create("columns")?;
        let sweep_file = plan.sweep_file.display().to_string();
        file.new_attr::<VarLenUnicode>().shape(()).create("sweep_file")?.write_scalar(&text(&sweep_file)?)?;
        for column in &table.columns {
            let builder = file.new_dataset_builder().obj_track_times(false);
            let ds = match &column.data {
                ColumnData::Real(v) => builder.with_data(&v[..]).create(column.name.as_str()),
                ColumnData::Text(v) => {
                    let v = v.iter().map(|s| text(s)).collect::<Result<Vec<_>>>()?;
                    builder.with_data(&v[..]).create(column.name.as_str())
                }
            }
            .with_context(|| format!("cannot write dataset {}", column.name))?;
            for (name, value) in
                [("units", column.unit.as_str()), ("description", column.description.as_str())]
            {
                ds.new_attr::<VarLenUnicode>().shape(()).create(name)?.write_scalar(&text(value)?)?;
            }
        }
        file.close().context("cannot close the HDF5 file")?;
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_rows() {
        let table = SweepTable {
            rows: 2,
            columns: vec![
                SweepColumn {
                    name: "case_id".into(),
                    unit: String::new(),
                    description: String::new(),
                    role: ColumnRole::Label,
                    data: ColumnData::Text(vec!["case-0000".into(), "case, 1".into()]),
                },
                SweepColumn {
                    name: "flow.mean_velocity".into(),
                    unit: "m s^-1".into(),
                    description: String::new(),
                    role: ColumnRole::Parameter { axis: 0 },
                    data: ColumnData::Real(vec![1e-6, f64::NAN]),
                },
            ],
        };
        let text = String::from_utf8(csv_text(&table).unwrap()).unwrap();
        assert_eq!(text, "case_id,flow.mean_velocity\ncase-0000,1e-6\n\"case, 1\",nan\n");
    }
}
