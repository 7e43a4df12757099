//! The `plumefield` command line: a thin shell over the case loader and the commands (DESIGN.md §5).
//! Errors print as one sentence on stderr; exit code 2 for bad input, 1 for solver or I/O failures.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Parser, Subcommand};
use plumefield::case::Case;
use plumefield::commands;
use plumefield::exit::{exit_code, one_line, InputError};

#[derive(Parser)]
#[command(
    name = "plumefield",
    version,
    about = "Steady fields of cell-secreted ligands in slow flow through a porous matrix"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Solve one case and write fields.h5, fields.xmf, cells.csv, summary.json and figures.
    Run {
        /// The case file (TOML).
        case: PathBuf,
        /// Output folder [default: out/<case file stem>].
        #[arg(short = 'o', long = "output")]
        output: Option<PathBuf>,
        /// Worker threads [default: one per core].
        #[arg(long)]
        threads: Option<usize>,
    },
    /// Cheap estimates without a solve: Péclet numbers, isolated-cell anisotropy, mean-field background,
    /// direction error along the chamber, memory and time forecast.
    Estimate {
        case: PathBuf,
        /// Print JSON instead of the table.
        #[arg(long)]
        json: bool,
    },
    /// Generate the layout alone; print volume fraction and nearest-neighbour statistics.
    Layout {
        case: PathBuf,
        /// Where to write the layout CSV.
        #[arg(short = 'o', long = "output", default_value = "cells.csv")]
        output: PathBuf,
    },
    /// Run the analytic verification suite.
    Verify {
        /// Only the fast checks.
        #[arg(long)]
        quick: bool,
    },
    /// Run every case of a sweep (not implemented yet).
    Sweep {
        sweep: PathBuf,
        #[arg(long)]
        jobs: Option<usize>,
        #[arg(long)]
        slurm: Option<PathBuf>,
        #[arg(long)]
        task: Option<usize>,
        #[arg(long)]
        plan: bool,
    },
    /// Gather the finished cases of a sweep into one table (not implemented yet).
    Collect { dir: PathBuf },
}

/// `out/<case file stem>`.
fn default_output(case: &Path) -> PathBuf {
    let stem = case.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "case".into());
    Path::new("out").join(stem)
}

fn run_command(command: Command) -> anyhow::Result<()> {
    match command {
        Command::Run { case, output, threads } => {
            if let Some(n) = threads {
                if n == 0 {
                    return Err(InputError("--threads must be at least 1".into()).into());
                }
                rayon::ThreadPoolBuilder::new()
                    .num_threads(n)
                    .build_global()
                    .map_err(|e| anyhow::anyhow!("cannot start {n} worker threads: {e}"))?;
            }
            let out_dir = output.unwrap_or_else(|| default_output(&case));
            let case = Case::load(&case)?;
            commands::run::execute(&case, &out_dir, threads)
        }
        Command::Layout { case, output } => commands::layout::execute(&case, &output),
        Command::Verify { quick } => commands::verify::execute(quick),
        Command::Estimate { case, json } => commands::estimate::execute(&case, json),
        Command::Sweep { .. } => commands::not_yet::execute("sweep"),
        Command::Collect { .. } => commands::not_yet::execute("collect"),
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run_command(cli.command) {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("error: {}", one_line(&error));
            ExitCode::from(exit_code(&error) as u8)
        }
    }
}
