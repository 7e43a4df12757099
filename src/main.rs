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
        /// Transient runs: write DIR/checkpoint.bin every N accepted steps (a whole number) or every interval
        /// of simulated time (a time with a unit, e.g. "30 min").
        #[arg(long, value_name = "N or TIME")]
        checkpoint_every: Option<String>,
        /// Transient runs: continue from the checkpoint a killed run left (same case file) instead of starting
        /// over.
        #[arg(long)]
        resume: bool,
        /// Memory the run may use, e.g. "16G" or "500 MB" [default: the Slurm job's allocation or this
        /// machine's available memory]. A case forecast to need more is refused before it starts.
        #[arg(long, value_name = "SIZE", value_parser = memory_size)]
        max_memory: Option<f64>,
    },
    /// Cheap estimates without a solve: Péclet numbers, isolated-cell anisotropy, mean-field background,
    /// direction error along the chamber, memory and time forecast.
    Estimate {
        case: PathBuf,
        /// Print JSON instead of the table.
        #[arg(long)]
        json: bool,
        /// Memory of the machine the case will run on, e.g. "192G" [default: this machine's]; a warning
        /// says when the forecast exceeds it.
        #[arg(long, value_name = "SIZE", value_parser = memory_size)]
        node_memory: Option<f64>,
    },
    /// Redraw the figures of a run from its output folder into DIR/figures.
    Plot { dir: PathBuf },
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
    /// Run every case of a sweep not yet done (resumable), then collect; or list it (--plan), run one case
    /// (--task), or write a Slurm job array (--slurm DIR).
    Sweep {
        /// The sweep file (TOML).
        sweep: PathBuf,
        /// Sweep folder [default: the sweep file's `output`, else out/<sweep file stem>].
        #[arg(short = 'o', long = "output")]
        output: Option<PathBuf>,
        /// Cases run at once [default: one per core, fewer if memory is short].
        #[arg(long)]
        jobs: Option<usize>,
        /// Threads: in all for a local run; per case with --task and --slurm [default: cores; 1 per task].
        #[arg(long)]
        threads: Option<usize>,
        /// Write a Slurm array script for the sweep folder DIR instead of running.
        #[arg(long, value_name = "DIR")]
        slurm: Option<PathBuf>,
        /// With --slurm: submit the array and the dependent collect job with sbatch.
        #[arg(long, requires = "slurm")]
        submit: bool,
        /// With --slurm --submit, for a sweep with a [find] table: the job after each round decides and submits
        /// the next round itself (only where compute nodes may submit jobs; else rerun --slurm DIR --submit
        /// once per round).
        #[arg(long, requires = "submit")]
        auto_rounds: bool,
        /// With --slurm: at most N array tasks running at once.
        #[arg(long, value_name = "N", requires = "slurm")]
        max_running: Option<usize>,
        /// With --slurm: the partition to submit to.
        #[arg(long, requires = "slurm")]
        partition: Option<String>,
        /// With --slurm: the account to charge.
        #[arg(long, requires = "slurm")]
        account: Option<String>,
        /// With --slurm: the quality of service.
        #[arg(long, requires = "slurm")]
        qos: Option<String>,
        /// With --slurm: a file of shell lines each task runs first (e.g. module loads).
        #[arg(long, value_name = "FILE", requires = "slurm")]
        setup: Option<PathBuf>,
        /// Memory of one compute node, e.g. "192G" [default: this machine's]: --plan and --slurm warn about
        /// cases forecast to need more.
        #[arg(long, value_name = "SIZE", value_parser = memory_size)]
        node_memory: Option<f64>,
        /// Run case N only (what each Slurm array task does).
        #[arg(long, value_name = "N", conflicts_with = "slurm")]
        task: Option<usize>,
        /// List the cases with ids and a memory/time forecast; run nothing.
        #[arg(long)]
        plan: bool,
    },
    /// Gather the cases of a sweep folder into DIR/sweep.csv and DIR/sweep.h5, with figures.
    Collect { dir: PathBuf },
}

/// A `--max-memory`/`--node-memory` value.
fn memory_size(text: &str) -> Result<f64, String> {
    commands::memory_budget::parse_memory_size(text)
}

/// `out/<case file stem>`.
fn default_output(case: &Path) -> PathBuf {
    let stem = case.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "case".into());
    Path::new("out").join(stem)
}

fn run_command(command: Command) -> anyhow::Result<()> {
    match command {
        Command::Run { case, output, threads, checkpoint_every, resume, max_memory } => {
            let checkpoint_every =
                checkpoint_every.as_deref().map(commands::run::CheckpointEvery::parse).transpose()?;
            if let Some(n) = threads {
                commands::check_thread_count("--threads", n)?;
                rayon::ThreadPoolBuilder::new()
                    .num_threads(n)
                    .build_global()
                    .map_err(|e| anyhow::anyhow!("cannot start {n} worker threads: {e}"))?;
            }
            let out_dir = output.unwrap_or_else(|| default_output(&case));
            let case = Case::load(&case)?;
            let budget = commands::memory_budget::run_budget(max_memory);
            if let Some(budget) = budget {
                let threads = threads.unwrap_or_else(rayon::current_num_threads);
                if let Some(refusal) = commands::memory_budget::over_budget(&case, threads, &budget) {
                    return Err(InputError(format!("{refusal} (or give --max-memory)")).into());
                }
            }
            let options = commands::run::TransientOptions { checkpoint_every, resume, quiet: false };
            commands::run::execute_with(&case, &out_dir, threads, &options)
        }
        Command::Layout { case, output } => commands::layout::execute(&case, &output),
        Command::Verify { quick } => commands::verify::execute(quick),
        Command::Estimate { case, json, node_memory } => {
            commands::estimate::execute(&case, json, node_memory)
        }
        Command::Plot { dir } => commands::plot::execute(&dir),
        Command::Sweep {
            sweep,
            output,
            jobs,
            threads,
            slurm,
            submit,
            auto_rounds,
            max_running,
            partition,
            account,
            qos,
            setup,
            node_memory,
            task,
            plan,
        } => commands::sweep::execute(&commands::sweep::SweepOptions {
            sweep,
            output,
            jobs,
            threads,
            slurm,
            submit,
            auto_rounds,
            max_running,
            partition,
            account,
            qos,
            setup,
            node_memory,
            task,
            plan,
        }),
        Command::Collect { dir } => commands::collect::execute(&dir),
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run_command(cli.command) {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("error: {}", one_line(&error));
            // A sweep with failed cases says how many in its exit code (100 + the number failed).
            if let Some(failed) = error.downcast_ref::<commands::sweep::CasesFailed>() {
                return ExitCode::from(failed.exit_code());
            }
            ExitCode::from(exit_code(&error) as u8)
        }
    }
}
