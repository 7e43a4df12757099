//! A sweep as a Slurm job array: `DIR/slurm/array.sbatch` (one array task per case not yet done; each runs
//! `plumefield sweep SWEEP --task $SLURM_ARRAY_TASK_ID -o DIR`), `DIR/slurm/collect.sbatch` (runs
//! `plumefield collect DIR` once the array has ended, whatever its tasks' fate), and `DIR/slurm/submit.sh`
//! (submits both, the second depending on the first). Writing the scripts again after a partial failure lists
//! only the tasks still missing, so re-submitting never repeats finished work.
//!
//! A cluster accepts array task ids only below its `MaxArraySize` (`scontrol show config`; Slurm's default
//! 1001). Larger sweeps are split into several array jobs `array-1.sbatch`, `array-2.sbatch`, … whose task ids
//! count from an offset (task `i` of the job with offset `o` runs case `o + i`); the collect job depends on
//! all of them, and with `--max-running` each array job waits for the previous one so that the limit holds
//! for the whole sweep.
//!
//! Resources per task come from the largest forecast among the missing cases: `--mem` is 1.5 times the
//! forecast plus 200 MB, `--time` is 3 times the forecast on `--cpus-per-task` threads plus 5 min (headroom:
//! common practice, since a task that hits its limit is killed and must be re-run).

use std::path::{Path, PathBuf};

use crate::forecast::Forecast;
use crate::io::write_atomic;

/// The folder under the sweep folder that holds the scripts and the logs.
pub const SLURM_DIR: &str = "slurm";

/// Slurm's default `MaxArraySize`: array task ids 0 to 1000.
pub const DEFAULT_MAX_ARRAY_SIZE: usize = 1001;

/// One array job of a sweep: array task id `i` in `ids` runs case `offset + i`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ArrayChunk {
    pub offset: usize,
    pub ids: Vec<usize>,
}

impl ArrayChunk {
    /// The case indices this array job runs.
    pub fn cases(&self) -> impl Iterator<Item = usize> + '_ {
        self.ids.iter().map(move |i| self.offset + i)
    }
}

/// Split the case indices `tasks` (sorted, distinct) into as few array jobs as keep every task id below
/// `max_array_size`: each job starts at its first case, and takes the following cases while they lie less
/// than `max_array_size` after it.
pub fn chunk_tasks(tasks: &[usize], max_array_size: usize) -> Vec<ArrayChunk> {
    let max = max_array_size.max(1);
    let mut chunks: Vec<ArrayChunk> = Vec::new();
    for &task in tasks {
        match chunks.last_mut() {
            Some(chunk) if task - chunk.offset < max => chunk.ids.push(task - chunk.offset),
            _ => chunks.push(ArrayChunk { offset: task, ids: vec![0] }),
        }
    }
    chunks
}

/// The cluster's `MaxArraySize` from `scontrol show config`, with where it came from; Slurm's default when
/// `scontrol` cannot be asked (scripts written away from the cluster). `Err` when arrays are disabled (0).
pub fn max_array_size() -> Result<(usize, String), String> {
    let output = std::process::Command::new("scontrol").args(["show", "config"]).output();
    let text = match output {
        Ok(out) if out.status.success() => String::from_utf8_lossy(&out.stdout).into_owned(),
        _ => return Ok((DEFAULT_MAX_ARRAY_SIZE, "Slurm's default; scontrol could not be asked".into())),
    };
    match parse_max_array_size(&text) {
        Some(0) => Err("this cluster disables job arrays (MaxArraySize = 0 in scontrol show config)".into()),
        Some(n) => Ok((n, "scontrol show config".into())),
        None => Ok((DEFAULT_MAX_ARRAY_SIZE, "Slurm's default; not in scontrol show config".into())),
    }
}

/// The value of the `MaxArraySize = N` line of `scontrol show config`.
fn parse_max_array_size(config: &str) -> Option<usize> {
    config.lines().find_map(|line| {
        let (key, value) = line.split_once('=')?;
        (key.trim() == "MaxArraySize").then(|| value.trim().parse().ok())?
    })
}

/// Choices for the array job.
#[derive(Clone, Debug, PartialEq)]
pub struct SlurmParams {
    /// `--cpus-per-task`: threads of each case.
    pub cpus_per_task: usize,
    /// At most this many tasks running at once (`--array=...%N`).
    pub max_running: Option<usize>,
    /// `--partition`, when not the cluster's default.
    pub partition: Option<String>,
    /// The cluster's `MaxArraySize` (see [`max_array_size`]).
    pub max_array_size: usize,
    /// `--account` and `--qos`, when given.
    pub account: Option<String>,
    pub qos: Option<String>,
    /// Shell lines every task (and the collect job) runs first, e.g. module loads.
    pub setup: Option<String>,
}

/// The options of `sweep --slurm`, kept in `DIR/slurm/options.json` so that writing the scripts again (to
/// submit the tasks still missing) repeats them; an option given again on the command line replaces its
/// remembered value.
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SlurmOptions {
    pub threads: Option<usize>,
    pub max_running: Option<usize>,
    pub partition: Option<String>,
    pub account: Option<String>,
    pub qos: Option<String>,
    /// The text of `--setup FILE` (the file itself may be gone by the next writing).
    pub setup: Option<String>,
}

/// The file of [`SlurmOptions`] under the sweep folder.
pub const OPTIONS_FILE: &str = "options.json";

impl SlurmOptions {
    /// The options remembered for sweep folder `dir` (none when the file is absent or unreadable).
    pub fn remembered(dir: &Path) -> SlurmOptions {
        std::fs::read(dir.join(SLURM_DIR).join(OPTIONS_FILE))
            .ok()
            .and_then(|text| serde_json::from_slice(&text).ok())
            .unwrap_or_default()
    }

    /// `self` where given, else `earlier`.
    pub fn or(self, earlier: SlurmOptions) -> SlurmOptions {
        SlurmOptions {
            threads: self.threads.or(earlier.threads),
            max_running: self.max_running.or(earlier.max_running),
            partition: self.partition.or(earlier.partition),
            account: self.account.or(earlier.account),
            qos: self.qos.or(earlier.qos),
            setup: self.setup.or(earlier.setup),
        }
    }

    /// Keeps the options for the next writing.
    pub fn remember(&self, dir: &Path) -> std::io::Result<()> {
        std::fs::create_dir_all(dir.join(SLURM_DIR))?;
        let text = serde_json::to_vec_pretty(self).map_err(std::io::Error::other)?;
        write_atomic(&dir.join(SLURM_DIR).join(OPTIONS_FILE), &text)
    }
}

/// `target` relative to the folder `base` (both absolute), with `..` where needed.
pub fn relative_to(base: &Path, target: &Path) -> PathBuf {
    let base: Vec<_> = base.components().collect();
    let target: Vec<_> = target.components().collect();
    let common = base.iter().zip(&target).take_while(|(a, b)| a == b).count();
    let mut relative = PathBuf::new();
    for _ in common..base.len() {
        relative.push("..");
    }
    for part in &target[common..] {
        relative.push(part.as_os_str());
    }
    relative
}

/// The scripts for one submission.
#[derive(Clone, Debug, PartialEq)]
pub struct SlurmScripts {
    /// The array jobs (case indices by offset and task id); empty when every case is done.
    pub chunks: Vec<ArrayChunk>,
    /// One script per array job, in submission order.
    pub array_scripts: Vec<PathBuf>,
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

/// Write the scripts for the cases `tasks` (sorted, distinct) of the sweep `sweep_file` (absolute) into
/// `dir/slurm/`. `exe` is the plumefield executable the tasks run; `largest` the largest forecast among `tasks`.
pub fn write_scripts(
    dir: &Path,
    sweep_file: &Path,
    exe: &Path,
    tasks: &[usize],
    largest: &Forecast,
    params: &SlurmParams,
    job_name: &str,
) -> std::io::Result<SlurmScripts> {
    write_scripts_then(dir, sweep_file, exe, tasks, largest, params, job_name, "collect .")
}

/// [`write_scripts`] with the job after the array running `plumefield <after>` (in the sweep folder;
/// `{sweep}` stands for the sweep file) instead of `plumefield collect .`.
#[allow(clippy::too_many_arguments)]
pub fn write_scripts_then(
    dir: &Path,
    sweep_file: &Path,
    exe: &Path,
    tasks: &[usize],
    largest: &Forecast,
    params: &SlurmParams,
    job_name: &str,
    after: &str,
) -> std::io::Result<SlurmScripts> {
    let slurm_dir = dir.join(SLURM_DIR);
    std::fs::create_dir_all(slurm_dir.join("logs"))?;
    let q = |p: &Path| shell_quote(&p.display().to_string());
    // Paths relative to the sweep folder, where the jobs start (submit.sh submits from there): the folder
    // may move, or be seen under another path on the compute nodes. The executable can be replaced with
    // $PLUMEFIELD.
    let logs = Path::new(SLURM_DIR).join("logs");
    let sweep_relative = relative_to(dir, sweep_file);
    let exe_text =
        format!("\"${{PLUMEFIELD:-{}}}\"", exe.display().to_string().replace(['"', '$', '`', '\\'], "_"));
    let (mem_mb, time_s) = task_resources(largest, params.cpus_per_task);
    let mut partition = String::new();
    for (option, value) in
        [("partition", &params.partition), ("account", &params.account), ("qos", &params.qos)]
    {
        if let Some(value) = value {
            partition.push_str(&format!("#SBATCH --{option}={value}\n"));
        }
    }
    let setup = params
        .setup
        .as_ref()
        .map(|text| format!("# Set-up (--setup):\n{}\n", text.trim_end()))
        .unwrap_or_default();

    // Array scripts of an earlier writing (perhaps split differently) would mislead: remove them.
    for entry in std::fs::read_dir(&slurm_dir)? {
        let name = entry?.file_name().to_string_lossy().into_owned();
        if name.starts_with("array") && name.ends_with(".sbatch") {
            std::fs::remove_file(slurm_dir.join(&name))?;
        }
    }
    let chunks = chunk_tasks(tasks, params.max_array_size);
    let mut array_scripts = Vec::new();
    for (k, chunk) in chunks.iter().enumerate() {
        let (script, part, task) = if chunks.len() == 1 && chunk.offset == 0 {
            (slurm_dir.join("array.sbatch"), String::new(), "\"$SLURM_ARRAY_TASK_ID\"".to_string())
        } else {
            (
                slurm_dir.join(if chunks.len() == 1 {
                    "array.sbatch".to_string()
                } else {
                    format!("array-{}.sbatch", k + 1)
                }),
                format!(
                    "# Array job {} of {} (the cluster's MaxArraySize is {}): task id i runs case {} + i.\n",
                    k + 1,
                    chunks.len(),
                    params.max_array_size,
                    chunk.offset
                ),
                format!("\"$(({} + SLURM_ARRAY_TASK_ID))\"", chunk.offset),
            )
        };
        let array = format!(
            "#!/bin/bash\n\
             # Written by `plumefield sweep --slurm`: one task per case not yet done ({count} of them).\n\
             # Re-running `plumefield sweep {sweep} --slurm {dir}` rewrites it with the tasks still missing and\n\
             # the same options (slurm/options.json). Submit from the sweep folder (slurm/submit.sh does).\n\
             {part}\
             #SBATCH --job-name={job_name}\n\
             #SBATCH --array={spec}\n\
             #SBATCH --ntasks=1\n\
             #SBATCH --cpus-per-task={cpus}\n\
             #SBATCH --mem={mem_mb}M\n\
             #SBATCH --time={time}\n\
             #SBATCH --output={log}\n\
             {partition}\
             set -eu\n\
             {setup}\
             exec {exe} sweep {sweep_q} --task {task} -o . --threads \"${{SLURM_CPUS_PER_TASK:-{cpus}}}\"\n",
            count = chunk.ids.len(),
            sweep = sweep_file.display(),
            dir = dir.display(),
            spec = array_spec(&chunk.ids, params.max_running),
            cpus = params.cpus_per_task,
            time = slurm_time(time_s as f64),
            log = directive_path(&logs.join("task-%A_%a.log")),
            exe = exe_text,
            sweep_q = q(&sweep_relative),
        );
        write_atomic(&script, array.as_bytes())?;
        array_scripts.push(script);
    }

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
         {partition}\
         set -eu\n\
         {setup}\
         exec {exe} {after}\n",
        log = directive_path(&logs.join("collect-%j.log")),
        exe = exe_text,
        after = after.replace("{sweep}", &q(&sweep_relative)),
    );
    write_atomic(&collect_script, collect.as_bytes())?;

    let submit_script = slurm_dir.join("submit.sh");
    write_atomic(
        &submit_script,
        submit_text(&array_scripts, &collect_script, ArrayOrder::for_max_running(params.max_running))
            .as_bytes(),
    )?;
    set_executable(&submit_script)?;

    Ok(SlurmScripts { chunks, array_scripts, collect_script, submit_script, mem_mb, time_s })
}

/// When the array jobs of one sweep may start.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ArrayOrder {
    /// All at once.
    Together,
    /// Each after the previous one (so `--max-running` holds across them).
    Chained,
}

impl ArrayOrder {
    /// A limit on running tasks must hold across the arrays of a split sweep, so they run one after another.
    pub fn for_max_running(max_running: Option<usize>) -> Self {
        if max_running.is_some() {
            ArrayOrder::Chained
        } else {
            ArrayOrder::Together
        }
    }
}

/// `submit.sh`: the array jobs (in `order`), then the collect job after all.
fn submit_text(array_scripts: &[PathBuf], collect_script: &Path, order: ArrayOrder) -> String {
    // Relative to the sweep folder, where the script changes to.
    let q = |p: &Path| {
        let relative = p.parent().and_then(Path::parent).map_or(p, |dir| p.strip_prefix(dir).unwrap_or(p));
        shell_quote(&relative.display().to_string())
    };
    let mut text = String::from(
        "#!/bin/sh\n\
         # Submits the array job(s), then the collect job to run after them (whether or not every task succeeded).\n\
         # The jobs start in the sweep folder, the folder above this script's.\n\
         set -eu\n\
         cd \"$(dirname \"$0\")/..\"\n",
    );
    let mut ids = Vec::new();
    for (k, script) in array_scripts.iter().enumerate() {
        let after = match ids.last() {
            Some(previous) if order == ArrayOrder::Chained => {
                format!(" --dependency=afterany:\"${previous}\"")
            }
            _ => String::new(),
        };
        let id = format!("a{}", k + 1);
        text.push_str(&format!("{id}=$(sbatch --parsable{after} {})\n{id}=${{{id}%%;*}}\n", q(script)));
        ids.push(id);
    }
    let all: Vec<String> = ids.iter().map(|id| format!("${id}")).collect();
    text.push_str(&format!(
        "collect=$(sbatch --parsable --dependency=afterany:\"{}\" {})\n\
         echo \"submitted array job{} {} and collect job ${{collect%%;*}}\"\n",
        all.join(":"),
        q(collect_script),
        if ids.len() == 1 { "" } else { "s" },
        all.join(",")
    ));
    text
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
    pub array_jobs: Vec<String>,
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

/// Submit the array jobs (each after the previous one with `--max-running`), then the collect job with
/// `--dependency=afterany:<every array job>`.
pub fn submit(scripts: &SlurmScripts, order: ArrayOrder) -> Result<Submitted, SubmitError> {
    let mut array_jobs: Vec<String> = Vec::new();
    for script in &scripts.array_scripts {
        let after = match array_jobs.last() {
            Some(previous) if order == ArrayOrder::Chained => {
                vec![format!("--dependency=afterany:{previous}")]
            }
            _ => Vec::new(),
        };
        array_jobs.push(sbatch(&after, script)?);
    }
    let collect_job =
        sbatch(&[format!("--dependency=afterany:{}", array_jobs.join(":"))], &scripts.collect_script)?;
    Ok(Submitted { array_jobs, collect_job })
}

fn sbatch(extra: &[String], script: &Path) -> Result<String, SubmitError> {
    // From the sweep folder (the scripts' paths are relative to it): the folder above `slurm/`.
    let sweep_dir = script.parent().and_then(Path::parent).filter(|d| !d.as_os_str().is_empty());
    let mut command = std::process::Command::new("sbatch");
    if let Some(dir) = sweep_dir {
        command.current_dir(dir);
    }
    let output = command.arg("--parsable").args(extra).arg(script).output().map_err(SubmitError::Spawn)?;
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
        let forecast = Forecast::for_grid(1_000_000, 0);
        let params = SlurmParams {
            cpus_per_task: 2,
            max_running: Some(3),
            partition: None,
            max_array_size: DEFAULT_MAX_ARRAY_SIZE,
            account: Some("lab7".into()),
            qos: None,
            setup: Some("module load hdf5".into()),
        };
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
        assert_eq!(s.array_scripts, [sweep_dir.join("slurm/array.sbatch")]);
        let text = std::fs::read_to_string(&s.array_scripts[0]).unwrap();
        assert!(text.contains("#SBATCH --array=0-1,4%3\n"), "{text}");
        assert!(text.contains("#SBATCH --cpus-per-task=2\n"));
        // 1.5 × (647 + 87) MB + 200 MB on 2 threads; three forecasts / 1.7 + 300 s → 6 min.
        assert!(text.contains("#SBATCH --mem=1301M\n"), "{text}");
        assert!(text.contains("#SBATCH --time=00:06:00\n"), "{text}");
        assert!(text.contains("task-%A_%a.log"));
        assert!(text.contains("--task \"$SLURM_ARRAY_TASK_ID\" -o . "), "{text}");
        // Paths relative to the sweep folder; the executable replaceable.
        assert!(text.contains(" sweep '../") && text.contains("/s/sweep.toml' --task"), "{text}");
        assert!(text.contains("\"${PLUMEFIELD:-/bin/pf}\" sweep"), "{text}");
        assert!(text.contains("#SBATCH --output=slurm/logs/task-%A_%a.log\n"), "{text}");
        assert!(!text.contains("--chdir"), "{text}");
        assert!(text.contains("#SBATCH --account=lab7\n") && !text.contains("--qos"), "{text}");
        assert!(text.contains("set -eu\n# Set-up (--setup):\nmodule load hdf5\nexec"), "{text}");
        let collect = std::fs::read_to_string(&s.collect_script).unwrap();
        assert!(collect.contains("module load hdf5\nexec") && collect.contains("collect .\n"), "{collect}");
        let submit = std::fs::read_to_string(&s.submit_script).unwrap();
        assert!(submit.contains("--dependency=afterany:\"$a1\""), "{submit}");
        assert!(submit.contains("submitted array job $a1 and collect job"), "{submit}");
    }

    #[test]
    fn options_are_remembered_and_paths_made_relative() {
        let dir = tempfile::tempdir().unwrap();
        let first = SlurmOptions { threads: Some(4), partition: Some("long".into()), ..Default::default() };
        first.remember(dir.path()).unwrap();
        let again = SlurmOptions { qos: Some("low".into()), threads: Some(2), ..Default::default() }
            .or(SlurmOptions::remembered(dir.path()));
        assert_eq!(again.threads, Some(2));
        assert_eq!(again.partition.as_deref(), Some("long"));
        assert_eq!(again.qos.as_deref(), Some("low"));
        assert_eq!(relative_to(Path::new("/a/b/c"), Path::new("/a/d/s.toml")), Path::new("../../d/s.toml"));
        assert_eq!(relative_to(Path::new("/a"), Path::new("/a/s.toml")), Path::new("s.toml"));
    }

    #[test]
    fn tasks_are_chunked_below_max_array_size() {
        let chunk = |offset, ids: &[usize]| ArrayChunk { offset, ids: ids.to_vec() };
        // Within the limit: one array job from 0, as before.
        assert_eq!(chunk_tasks(&[0, 1, 2, 5], 1001), [chunk(0, &[0, 1, 2, 5])]);
        // 2500 cases, MaxArraySize 1001: ids 0..=1000 each, the last job holds the remaining 498.
        let all: Vec<usize> = (0..2500).collect();
        let chunks = chunk_tasks(&all, 1001);
        assert_eq!(
            chunks.iter().map(|c| (c.offset, c.ids.len())).collect::<Vec<_>>(),
            [(0, 1001), (1001, 1001), (2002, 498)]
        );
        assert!(chunks.iter().all(|c| c.ids.iter().all(|&i| i < 1001)));
        assert_eq!(chunks.iter().flat_map(|c| c.cases()).collect::<Vec<_>>(), all);
        // Missing cases of a resubmission: each job starts at its first case.
        assert_eq!(
            chunk_tasks(&[3, 4, 6, 7, 9, 20], 4),
            [chunk(3, &[0, 1, 3]), chunk(7, &[0, 2]), chunk(20, &[0])]
        );
        assert_eq!(chunk_tasks(&[5, 6], 1), [chunk(5, &[0]), chunk(6, &[0])]);
        assert!(chunk_tasks(&[], 4).is_empty());
    }

    #[test]
    fn max_array_size_is_read_from_scontrol_output() {
        let config = "Configuration data as of 2026-12-02T15:00:00\nMaxArraySize            = 4\nMaxJobCount = 10000\n";
        assert_eq!(parse_max_array_size(config), Some(4));
        assert_eq!(parse_max_array_size("MaxJobCount = 10000\n"), None);
    }

    #[test]
    fn chunked_scripts_offset_their_task_ids_and_collect_after_all() {
        let dir = tempfile::tempdir().unwrap();
        // A stale script of an earlier writing is removed.
        std::fs::create_dir_all(dir.path().join("slurm")).unwrap();
        std::fs::write(dir.path().join("slurm/array-9.sbatch"), "old").unwrap();
        let forecast = Forecast::for_grid(20_000, 4);
        let write = |max_running| {
            let params = SlurmParams {
                cpus_per_task: 1,
                max_running,
                partition: None,
                max_array_size: 4,
                account: None,
                qos: None,
                setup: None,
            };
            let tasks = [0, 1, 2, 3, 4, 5, 7];
            write_scripts(
                dir.path(),
                Path::new("/s/sweep.toml"),
                Path::new("/bin/pf"),
                &tasks,
                &forecast,
                &params,
                "pf",
            )
            .unwrap()
        };
        let s = write(None);
        let names: Vec<String> =
            s.array_scripts.iter().map(|p| p.file_name().unwrap().to_string_lossy().into_owned()).collect();
        assert_eq!(names, ["array-1.sbatch", "array-2.sbatch"]);
        assert!(!dir.path().join("slurm/array-9.sbatch").exists());
        let first = std::fs::read_to_string(&s.array_scripts[0]).unwrap();
        assert!(first.contains("#SBATCH --array=0-3\n"), "{first}");
        assert!(first.contains("--task \"$((0 + SLURM_ARRAY_TASK_ID))\""), "{first}");
        let second = std::fs::read_to_string(&s.array_scripts[1]).unwrap();
        assert!(second.contains("#SBATCH --array=0-1,3\n"), "{second}");
        assert!(second.contains("--task \"$((4 + SLURM_ARRAY_TASK_ID))\""), "{second}");
        assert!(
            second.contains("Array job 2 of 2 (the cluster's MaxArraySize is 4): task id i runs case 4 + i.")
        );
        let submit = std::fs::read_to_string(&s.submit_script).unwrap();
        assert!(submit.contains("a1=$(sbatch --parsable '"), "{submit}");
        assert!(submit.contains("a2=$(sbatch --parsable '"), "unchained without --max-running: {submit}");
        assert!(submit.contains("--dependency=afterany:\"$a1:$a2\""), "{submit}");
        assert!(submit.contains("submitted array jobs $a1,$a2 and collect job"), "{submit}");
        // With --max-running, each array job waits for the previous one: the limit holds for the sweep.
        let submit = std::fs::read_to_string(&write(Some(2)).submit_script).unwrap();
        assert!(submit.contains("a2=$(sbatch --parsable --dependency=afterany:\"$a1\" '"), "{submit}");
        let second = std::fs::read_to_string(dir.path().join("slurm/array-2.sbatch")).unwrap();
        assert!(second.contains("#SBATCH --array=0-1,3%2\n"), "{second}");
    }
}
