//! `turbid sweep slurm`: a Slurm job array for a sweep. Array index (plus an
//! offset when the sweep is larger than the cluster's MaxArraySize) = run
//! number; each array task runs `turbid run` on its run's scenario file. With
//! `--submit` the script is handed to `sbatch` for the runs not yet complete;
//! `--wait` then waits for the jobs and gathers the table.
//!
//! Works with a stock Slurm: only `sbatch --array/--parsable/--export` and
//! `squeue -h -o %i -j`, no accounting database.

use super::{Failure, RunState, Sweep};
use serde::Deserialize;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Duration;
use turbid_engine::scenario::units::{self, Kind};

/// `slurm:` in the sweep file: defaults for the flags of the same names.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SlurmSpec {
    /// CPUs per array task (= threads per run); default: the sweep's threads.
    #[serde(default)]
    pub cpus_per_task: Option<u32>,
    /// Memory per task, e.g. "2 GB" or "500 MB" (Slurm counts 1 GB = 1024 MB).
    #[serde(default)]
    pub memory: Option<String>,
    /// Wall-time limit per task, e.g. "2 h" or "90 min".
    #[serde(default)]
    pub time_limit: Option<String>,
    #[serde(default)]
    pub partition: Option<String>,
    #[serde(default)]
    pub account: Option<String>,
    /// Most array tasks running at once (the `%N` throttle).
    #[serde(default)]
    pub max_running: Option<u32>,
    /// Shell lines run before each task, e.g. `module load …`.
    #[serde(default)]
    pub setup: Vec<String>,
}

pub struct SlurmOptions {
    pub cpus_per_task: Option<u32>,
    pub memory: Option<String>,
    pub time_limit: Option<String>,
    pub partition: Option<String>,
    pub account: Option<String>,
    pub max_running: Option<u32>,
    /// Largest array index the cluster accepts (MaxArraySize − 1).
    pub max_array_index: u32,
    pub submit: bool,
    pub wait: bool,
    /// The turbid binary the tasks run (default: this one).
    pub turbid: Option<PathBuf>,
}

/// Resources of one array task, checked and in Slurm's spelling.
struct Resources {
    cpus: u32,
    mem_mib: Option<u64>,
    time: Option<String>,
    /// Seconds of the time limit.
    time_s: Option<f64>,
    partition: Option<String>,
    account: Option<String>,
    throttle: Option<u32>,
}

/// `"2 GB"` → 2048 (MiB, Slurm's `M`).
fn memory_mib(text: &str) -> Result<u64, String> {
    let (x, unit) = super::sample::split_number(text).ok_or_else(|| {
        format!("expected an amount of memory such as \"2 GB\", found \"{text}\"")
    })?;
    let scale = match unit {
        "MB" | "M" | "MiB" => 1.0,
        "GB" | "G" | "GiB" => 1024.0,
        "TB" | "T" | "TiB" => 1024.0 * 1024.0,
        "" => return Err(format!("\"{text}\" needs a unit: MB, GB or TB")),
        u => return Err(format!("unknown memory unit \"{u}\"; use MB, GB or TB")),
    };
    if x <= 0.0 {
        return Err("memory must be positive".into());
    }
    Ok((x * scale).ceil() as u64)
}

/// Seconds before the time limit at which Slurm is asked to send SIGTERM
/// (`--signal=B:TERM@…`), so a run has time to save its results; only for
/// limits of at least `WARN_MIN_LIMIT` s.
const WARN_BEFORE: u64 = 120;
const WARN_MIN_LIMIT: f64 = 600.0;

/// `"90 min"` → `"0-01:30:00"` (whole minutes, rounded up) and the seconds.
fn time_limit(text: &str) -> Result<(String, f64), String> {
    let s = units::parse(text, Kind::Time)?;
    if s <= 0.0 {
        return Err("the time limit must be positive".into());
    }
    let min = (s / 60.0).ceil() as u64;
    Ok((
        format!("{}-{:02}:{:02}:00", min / 1440, min % 1440 / 60, min % 60),
        min as f64 * 60.0,
    ))
}

fn resources(sweep: &Sweep, o: &SlurmOptions) -> Result<Resources, Failure> {
    let spec = &sweep.spec.slurm;
    let bad = |what: &str, m: String| {
        Failure::invalid(format!(
            "error: {}: slurm {what}: {m}",
            sweep.file.display()
        ))
    };
    let cpus = o
        .cpus_per_task
        .or(spec.cpus_per_task)
        .unwrap_or(sweep.threads(None) as u32);
    if cpus == 0 {
        return Err(bad("cpus_per_task", "must be at least 1".into()));
    }
    let mem_mib = o
        .memory
        .as_ref()
        .or(spec.memory.as_ref())
        .map(|m| memory_mib(m))
        .transpose()
        .map_err(|m| bad("memory", m))?;
    let limit = o
        .time_limit
        .as_ref()
        .or(spec.time_limit.as_ref())
        .map(|t| time_limit(t))
        .transpose()
        .map_err(|m| bad("time_limit", m))?;
    let throttle = o.max_running.or(spec.max_running);
    if throttle == Some(0) {
        return Err(bad("max_running", "must be at least 1".into()));
    }
    let (time, time_s) = limit.unzip();
    Ok(Resources {
        cpus,
        mem_mib,
        time,
        time_s,
        partition: o.partition.clone().or(spec.partition.clone()),
        account: o.account.clone().or(spec.account.clone()),
        throttle,
    })
}

fn quote(s: &str) -> String {
    format!("'{}'", s.replace('\'', r"'\''"))
}

/// `[1, 2, 3, 5, 7, 8]` → `"1-3,5,7-8"`.
pub fn ranges(indices: &[u32]) -> String {
    let mut out = String::new();
    let mut i = 0;
    while i < indices.len() {
        let start = indices[i];
        let mut end = start;
        while i + 1 < indices.len() && indices[i + 1] == end + 1 {
            i += 1;
            end = indices[i];
        }
        if !out.is_empty() {
            out.push(',');
        }
        if start == end {
            let _ = write!(out, "{start}");
        } else {
            let _ = write!(out, "{start}-{end}");
        }
        i += 1;
    }
    out
}

fn script(sweep: &Sweep, res: &Resources, turbid: &Path, max_index: u32) -> String {
    let n = sweep.runs.len() as u32;
    let stem: String = sweep
        .file
        .file_stem()
        .map_or("sweep".into(), |s| s.to_string_lossy().into_owned())
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || "-_.".contains(c) {
                c
            } else {
                '_'
            }
        })
        .collect();
    let logs = sweep.out_dir.join("slurm").join("logs");
    let mut s = String::new();
    let _ = writeln!(s, "#!/bin/bash");
    let _ = writeln!(
        s,
        "# Slurm job array for the turbid sweep {} ({} runs), written by `turbid sweep slurm`.",
        sweep.file.display(),
        n
    );
    let _ = writeln!(
        s,
        "# Run number = array index + TURBID_RUN_OFFSET (0 unless the sweep is split into several arrays)."
    );
    let _ = writeln!(
        s,
        "# Submit with `turbid sweep slurm <sweep> --submit`: it leaves out runs already complete."
    );
    let _ = writeln!(s, "#SBATCH --job-name=turbid-{stem}");
    let mut array = format!("1-{}", n.min(max_index));
    if let Some(t) = res.throttle {
        let _ = write!(array, "%{t}");
    }
    let _ = writeln!(s, "#SBATCH --array={array}");
    let _ = writeln!(s, "#SBATCH --ntasks=1");
    let _ = writeln!(s, "#SBATCH --cpus-per-task={}", res.cpus);
    if let Some(m) = res.mem_mib {
        let _ = writeln!(s, "#SBATCH --mem={m}M");
    }
    if let Some(t) = &res.time {
        let _ = writeln!(s, "#SBATCH --time={t}");
    }
    if res.time_s.is_some_and(|t| t >= WARN_MIN_LIMIT) {
        // SIGTERM to the batch shell, which is turbid itself (exec below).
        let _ = writeln!(s, "#SBATCH --signal=B:TERM@{WARN_BEFORE}");
    }
    if let Some(p) = &res.partition {
        let _ = writeln!(s, "#SBATCH --partition={p}");
    }
    if let Some(a) = &res.account {
        let _ = writeln!(s, "#SBATCH --account={a}");
    }
    let _ = writeln!(s, "#SBATCH --output={}/%x-%A_%a.log", logs.display());
    let _ = writeln!(s, "set -eu");
    for line in &sweep.spec.slurm.setup {
        let _ = writeln!(s, "{line}");
    }
    let _ = writeln!(s, "turbid={}", quote(&turbid.display().to_string()));
    let _ = writeln!(
        s,
        "runs={}",
        quote(&sweep.out_dir.join("runs").display().to_string())
    );
    let _ = writeln!(
        s,
        "run=$(( SLURM_ARRAY_TASK_ID + ${{TURBID_RUN_OFFSET:-0}} ))"
    );
    let _ = writeln!(s, "printf -v id '%0{}d' \"$run\"", sweep.width);
    let _ = writeln!(
        s,
        "echo \"turbid sweep: run $run on $(hostname) (job ${{SLURM_ARRAY_JOB_ID}}_${{SLURM_ARRAY_TASK_ID}})\""
    );
    let _ = writeln!(
        s,
        "# SIGTERM (at or before the time limit) reaches turbid, which saves partial results and a"
    );
    let _ = writeln!(
        s,
        "# checkpoint and exits 5; a requeued or resubmitted task continues from that checkpoint."
    );
    let _ = writeln!(s, "resume=");
    let _ = writeln!(
        s,
        "if [ -f \"$runs/run-$id.checkpoint\" ]; then resume=--resume; fi"
    );
    let _ = writeln!(
        s,
        "exec \"$turbid\" run \"$runs/run-$id.yaml\" -o \"$runs/run-$id.h5\" --threads \"${{SLURM_CPUS_PER_TASK:-1}}\" --progress log --log-every 60 $resume"
    );
    s
}

fn command_output(cmd: &mut Command) -> Result<String, String> {
    let out = cmd
        .output()
        .map_err(|e| format!("cannot run {:?}: {e}", cmd.get_program()))?;
    if out.status.success() {
        Ok(String::from_utf8_lossy(&out.stdout).trim().to_string())
    } else {
        Err(String::from_utf8_lossy(&out.stderr).trim().to_string())
    }
}

pub fn run(file: &Path, o: &SlurmOptions) -> Result<u8, Failure> {
    let sweep = Sweep::load(file)?;
    sweep.write_runs()?;
    let res = resources(&sweep, o)?;
    if o.max_array_index == 0 {
        return Err(Failure::invalid(
            "error: --max-array-index must be at least 1".into(),
        ));
    }
    let turbid = match &o.turbid {
        Some(p) => std::path::absolute(p),
        None => std::env::current_exe(),
    }
    .map_err(|e| Failure::internal(format!("error: cannot find the turbid binary: {e}")))?;
    let dir = sweep.out_dir.join("slurm");
    let logs = dir.join("logs");
    std::fs::create_dir_all(&logs)
        .map_err(|e| Failure::internal(format!("error: cannot create {}: {e}", logs.display())))?;
    let script_path = dir.join("array.sbatch");
    crate::atomic::write(
        &script_path,
        script(&sweep, &res, &turbid, o.max_array_index).as_bytes(),
    )
    .map_err(|e| {
        Failure::internal(format!(
            "error: cannot write {}: {e}",
            script_path.display()
        ))
    })?;
    println!("wrote {}", script_path.display());

    let pending: Vec<u32> = sweep
        .runs
        .iter()
        .filter(|r| !matches!(sweep.state(r), RunState::Complete(_)))
        .map(|r| r.number as u32)
        .collect();
    // Chunks of at most `max_array_index` runs: array index = run − offset.
    let m = o.max_array_index;
    let mut chunks: Vec<(u32, Vec<u32>)> = Vec::new();
    for &r in &pending {
        let offset = (r - 1) / m * m;
        match chunks.last_mut() {
            Some((o, idx)) if *o == offset => idx.push(r - offset),
            _ => chunks.push((offset, vec![r - offset])),
        }
    }
    let throttle = res.throttle.map_or(String::new(), |t| format!("%{t}"));
    let commands: Vec<Vec<String>> = chunks
        .iter()
        .map(|(offset, idx)| {
            let mut c = vec![
                "sbatch".to_string(),
                "--parsable".to_string(),
                format!("--array={}{throttle}", ranges(idx)),
            ];
            if *offset > 0 {
                c.push(format!("--export=ALL,TURBID_RUN_OFFSET={offset}"));
            }
            c.push(script_path.display().to_string());
            c
        })
        .collect();
    if pending.is_empty() {
        println!(
            "all {} runs are complete: nothing to submit",
            sweep.runs.len()
        );
    } else if !o.submit {
        println!(
            "{} of {} runs to do; submit them with `turbid sweep slurm {} --submit`, or by hand:",
            pending.len(),
            sweep.runs.len(),
            sweep.file.display()
        );
        for c in &commands {
            println!("  {}", c.join(" "));
        }
        return Ok(0);
    }
    let mut jobs = Vec::new();
    if o.submit {
        for (c, (_, idx)) in commands.iter().zip(&chunks) {
            let id = command_output(Command::new(&c[0]).args(&c[1..])).map_err(|e| {
                Failure::internal(format!("error: sbatch refused the job array: {e}"))
            })?;
            // `--parsable` prints `jobid` or `jobid;cluster`.
            let id = id.split(';').next().unwrap_or("").trim().to_string();
            let n = idx.len();
            println!(
                "submitted job array {id} ({n} run{})",
                if n == 1 { "" } else { "s" }
            );
            jobs.push(id);
        }
    }
    if !o.wait {
        if !jobs.is_empty() {
            println!(
                "when it has finished: turbid sweep gather {}",
                sweep.file.display()
            );
        }
        return Ok(0);
    }
    wait_for(&jobs)?;
    let (complete, n) = super::gather::gather(&sweep, false)?;
    Ok(if complete == n {
        0
    } else {
        super::EXIT_SOME_FAILED
    })
}

/// Poll `squeue` until none of `jobs` is pending or running.
fn wait_for(jobs: &[String]) -> Result<(), Failure> {
    if jobs.is_empty() {
        return Ok(());
    }
    let list = jobs.join(",");
    let mut errors = 0;
    loop {
        match command_output(Command::new("squeue").args(["-h", "-o", "%i", "-j", &list])) {
            Ok(out) if out.is_empty() => return Ok(()),
            Ok(_) => errors = 0,
            // Jobs that ended long ago are forgotten: squeue calls them invalid.
            Err(e) if e.contains("Invalid job id") => return Ok(()),
            Err(e) => {
                errors += 1;
                if errors > 10 {
                    return Err(Failure::internal(format!("error: squeue failed: {e}")));
                }
            }
        }
        std::thread::sleep(Duration::from_secs(2));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_compress_runs_of_numbers() {
        assert_eq!(ranges(&[1, 2, 3, 5, 7, 8]), "1-3,5,7-8");
        assert_eq!(ranges(&[4]), "4");
    }

    #[test]
    fn resources_in_slurm_spelling() {
        assert_eq!(memory_mib("2 GB"), Ok(2048));
        assert_eq!(memory_mib("500 MB"), Ok(500));
        assert!(memory_mib("2").unwrap_err().contains("needs a unit"));
        assert_eq!(time_limit("90 min").unwrap().0, "0-01:30:00");
        assert_eq!(time_limit("2 d").unwrap().0, "2-00:00:00");
        assert_eq!(
            time_limit("61 s").unwrap(),
            ("0-00:02:00".to_string(), 120.0)
        );
        assert!(time_limit("2").is_err());
    }
}
