//! A sweep as a Slurm job array: `DIR/slurm/array.sbatch` (one array task per case not yet done; each runs
//! `plumefield sweep SWEEP --task $SLURM_ARRAY_TASK_ID -o DIR`), `DIR/slurm/collect.sbatch` (runs
//! `plumefield collect DIR` once the array has ended, whatever its tasks' fate), and `DIR/slurm/submit.sh`
//! (submits both, the second depending on the first). Writing the scripts again after a partial failure lists
//! only the tasks still missing, so re-submitting never repeats finished work.
//!
//! Resources per task come from the largest forecast among the missing cases: `--mem` is 1.5 times the
//! forecast plus 200 MB, `--time` is 3 times the forecast on `--cpus-per-task` threads plus 5 min (headroom:
//! common practice, since a task that hits its limit is killed and must be re-run).

use std::path::{Path, PathBuf};

use super::forecast::Forecast;
use crate::io::write_atomic;

/// The folder under the sweep folder that holds the scripts and the logs.
pub const SLURM_DIR: &str = "slurm";

/// Choices for the array job.
#[derive(Clone, Debug, PartialEq)]
pub struct SlurmParams {
    /// `--cpus-per-task`: threads of each case.
    pub cpus_per_task: usize,
    /// At most this many tasks running at once (`--array=...%N`).
    pub max_running: Option<usize>,
    /// `--partition`, when not the cluster's default.
    pub partition: Option<String>,
}

/// The scripts for one submission.
#[derive(Clone, Debug, PartialEq)]
pub struct SlurmScripts {
    /// The task ids (case indices) of the array; empty when every case is done.
    pub tasks: Vec<usize>,
    pub array_script: PathBuf,
    pub collect_script: PathBuf,
    pub submit_script: PathBuf,
    /// `--mem` in megabytes and `--time` in seconds of each array task.
    pub mem_mb: u64,
    pub time_s: u64,
}

/// `0-5,7,9-11` (plus `%N`): the `--array` specification of `tasks` (sorted, distinct).
pub fn array_spec(tasks: &[usize], max_running: Option<usize>) -> String {
    let mut parts = Vec::new();
    let mut i = 0;
    while i < tasks.len() {
        let start = tasks[i];
        let mut end = start;
        while i + 1 < tasks.len() && tasks[i + 1] == end + 1 {
            i += 1;
            end = tasks[i];
        }
        parts.push(if end == start { start.to_string() } else { format!("{start}-{end}") });
        i += 1;
    }
    let mut spec = parts.join(",");
    if let Some(n) = max_running {
        spec.push_str(&format!("%{}", n.max(1)));
    }
    spec
}

/// Slurm's `[D-]HH:MM:SS`, rounded up to whole minutes.
pub fn slurm_time(seconds: f64) -> String {
    let minutes = (seconds / 60.0).ceil().max(1.0) as u64;
    let (days, rest) = (minutes / 1440, minutes % 1440);
    let hms = format!("{:02}:{:02}:00", rest / 60, rest % 60);
    if days > 0 {
        format!("{days}-{hms}")
    } else {
        hms
    }
}

/// `'text'` for a POSIX shell (single quotes, with `'` written as `'\''`).
pub fn shell_quote(text: &str) -> String {
    format!("'{}'", text.replace('\'', r"'\''"))
}

/// A path in an `#SBATCH` line: as it is, or single-quoted when it holds blanks or quotes.
fn directive_path(path: &Path) -> String {
    let text = path.display().to_string();
    if text.chars().any(|c| c.is_whitespace() || c == '\'' || c == '"') {
        shell_quote(&text)
    } else {
        text
    }
}

/// Memory (MB) and time (s) requested for a task whose largest forecast is `forecast`.
pub fn task_resources(forecast: &Forecast, cpus_per_task: usize) -> (u64, u64) {
    let mem_mb = (1.5 * forecast.memory_bytes_on(cpus_per_task) / 1e6 + 200.0).ceil() as u64;
    let time_s = (3.0 * forecast.seconds(cpus_per_task) + 300.0).ceil() as u64;
    (mem_mb, time_s)
}

/// Write the scripts for the cases `tasks` of the sweep `sweep_file` (absolute) into `dir/slurm/`.
/// `exe` is the plumefield executable the tasks run; `largest` the largest forecast among `tasks`.
pub fn write_scripts(
    dir: &Path,
    sweep_file: &Path,
    exe: &Path,
    tasks: &[usize],
    largest: &Forecast,
    params: &SlurmParams,
    job_name: &str,
) -> std::io::Result<SlurmScripts> {
    let slurm_dir = dir.join(SLURM_DIR);
    std::fs::create_dir_all(slurm_dir.join("logs"))?;
    let q = |p: &Path| shell_quote(&p.display().to_string());
    let logs = slurm_dir.join("logs");
    let (mem_mb, time_s) = task_resources(largest, params.cpus_per_task);
    let partition =
        params.partition.as_ref().map(|p| format!("#SBATCH --partition={p}\n")).unwrap_or_default();

    let array_script = slurm_dir.join("array.sbatch");
    let array = format!(
        "#!/bin/bash\n\
         # Written by `plumefield sweep --slurm`: one task per case not yet done ({count} of them).\n\
         # Re-running `plumefield sweep {sweep} --slurm {dir}` rewrites it with the tasks still missing.\n\
         #SBATCH --job-name={job_name}\n\
         #SBATCH --array={spec}\n\
         #SBATCH --ntasks=1\n\
         #SBATCH --cpus-per-task={cpus}\n\
         #SBATCH --mem={mem_mb}M\n\
         #SBATCH --time={time}\n\
         #SBATCH --output={log}\n\
         #SBATCH --chdir={dir_d}\n\
         {partition}\
         set -eu\n\
         exec {exe} sweep {sweep_q} --task \"$SLURM_ARRAY_TASK_ID\" -o {dir_q} --threads \"${{SLURM_CPUS_PER_TASK:-{cpus}}}\"\n",
        count = tasks.len(),
        sweep = sweep_file.display(),
        dir = dir.display(),
        spec = array_spec(tasks, params.max_running),
        cpus = params.cpus_per_task,
        time = slurm_time(time_s as f64),
        log = directive_path(&logs.join("task-%A_%a.log")),
        dir_d = directive_path(dir),
        dir_q = q(dir),
        exe = q(exe),
        sweep_q = q(sweep_file),
    );
    write_atomic(&array_script, array.as_bytes())?;

    let collect_script = slurm_dir.join("collect.sbatch");
    let collect = format!(
        "#!/bin/bash\n\
         # Written by `plumefield sweep --slurm`: gathers the finished cases once the array has ended.\n\
         #SBATCH --job-name={job_name}-collect\n\
         #SBATCH --ntasks=1\n\
         #SBATCH --cpus-per-task=1\n\
         #SBATCH --mem=1000M\n\
         #SBATCH --time=00:30:00\n\
         #SBATCH --output={log}\n\
         #SBATCH --chdir={dir_d}\n\
         {partition}\
         set -eu\n\
         exec {exe} collect {dir_q}\n",
        log = directive_path(&logs.join("collect-%j.log")),
        dir_d = directive_path(dir),
        dir_q = q(dir),
        exe = q(exe),
    );
    write_atomic(&collect_script, collect.as_bytes())?;

    let submit_script = slurm_dir.join("submit.sh");
    let submit = format!(
        "#!/bin/sh\n\
         # Submits the array, then the collect job to run after it (whether or not every task succeeded).\n\
         set -eu\n\
         array=$(sbatch --parsable {array})\n\
         array=${{array%%;*}}\n\
         collect=$(sbatch --parsable --dependency=afterany:\"$array\" {collect})\n\
         echo \"submitted array job $array and collect job ${{collect%%;*}}\"\n",
        array = q(&array_script),
        collect = q(&collect_script),
    );
    write_atomic(&submit_script, submit.as_bytes())?;
    set_executable(&submit_script)?;

    Ok(SlurmScripts { tasks: tasks.to_vec(), array_script, collect_script, submit_script, mem_mb, time_s })
}

#[cfg(unix)]
fn set_executable(path: &Path) -> std::io::Result<()> {
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(path, std::fs::Permissions::from_mode(0o755))
}

#[cfg(not(unix))]
fn set_executable(_path: &Path) -> std::io::Result<()> {
    Ok(())
}

/// Job ids of a submission.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Submitted {
    pub array_job: String,
    pub collect_job: String,
}

/// Why a submission failed.
#[derive(Debug, thiserror::Error)]
pub enum SubmitError {
    #[error("cannot run sbatch (is Slurm installed and SLURM_CONF set?): {0}")]
    Spawn(std::io::Error),
    #[error("sbatch refused {script}: {stderr}")]
    Refused { script: String, stderr: String },
}

/// Submit the array, then the collect job with `--dependency=afterany:<array>`.
pub fn submit(scripts: &SlurmScripts) -> Result<Submitted, SubmitError> {
    let array_job = sbatch(&[], &scripts.array_script)?;
    let collect_job = sbatch(&[format!("--dependency=afterany:{array_job}")], &scripts.collect_script)?;
    Ok(Submitted { array_job, collect_job })
}

fn sbatch(extra: &[String], script: &Path) -> Result<String, SubmitError> {
    let output = std::process::Command::new("sbatch")
        .arg("--parsable")
        .args(extra)
        .arg(script)
        .output()
        .map_err(SubmitError::Spawn)?;
    let stdout = String::from_utf8_lossy(&output.stdout);
    let id = stdout.trim().split(';').next().unwrap_or("").to_string();
    if !output.status.success() || id.is_empty() {
        return Err(SubmitError::Refused {
            script: script.display().to_string(),
            stderr: String::from_utf8_lossy(&output.stderr).trim().replace('\n', " "),
        });
    }
    Ok(id)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn array_specs_compress_runs() {
        assert_eq!(array_spec(&[0, 1, 2, 3, 4, 5], None), "0-5");
        assert_eq!(array_spec(&[0, 1, 2, 5, 7, 8], Some(4)), "0-2,5,7-8%4");
        assert_eq!(array_spec(&[3], None), "3");
    }

    #[test]
    fn times_round_up_to_minutes() {
        assert_eq!(slurm_time(1.0), "00:01:00");
        assert_eq!(slurm_time(3601.0), "01:01:00");
        assert_eq!(slurm_time(2.0 * 86400.0 + 90.0), "2-00:02:00");
    }

    #[test]
    fn scripts_carry_resources_tasks_and_quoted_paths() {
        let dir = tempfile::tempdir().unwrap();
        let sweep_dir = dir.path().join("it's here");
        let forecast = Forecast::for_grid_cells(1_000_000);
        let params = SlurmParams { cpus_per_task: 2, max_running: Some(3), partition: None };
        let s = write_scripts(
            &sweep_dir,
            Path::new("/s/sweep.toml"),
            Path::new("/bin/pf"),
            &[0, 1, 4],
            &forecast,
            &params,
            "pf",
        )
        .unwrap();
        let text = std::fs::read_to_string(&s.array_script).unwrap();
        assert!(text.contains("#SBATCH --array=0-1,4%3\n"), "{text}");
        assert!(text.contains("#SBATCH --cpus-per-task=2\n"));
        // 1.5 × (574 + 87) MB + 200 MB on 2 threads; 3 × 5.93 s / 1.7 + 300 s → 6 min.
        assert!(text.contains("#SBATCH --mem=1192M\n"), "{text}");
        assert!(text.contains("#SBATCH --time=00:06:00\n"), "{text}");
        assert!(text.contains("task-%A_%a.log"));
        assert!(text.contains("--task \"$SLURM_ARRAY_TASK_ID\" -o '"));
        assert!(text.contains(r"it'\''s here"), "{text}");
        let submit = std::fs::read_to_string(&s.submit_script).unwrap();
        assert!(submit.contains("--dependency=afterany:"));
    }
}
