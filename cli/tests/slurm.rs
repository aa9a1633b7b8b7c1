//! A sweep as a Slurm job array on a real cluster gives the same gathered
//! table as the local pool.
//!
//! Needs a running Slurm cluster: `tools/slurm/local-cluster.sh start` (root)
//! sets up a single-node one on this machine, as `.ci/run` does. Without a
//! ready cluster the test says so and skips, unless `TURBID_REQUIRE_SLURM=1`
//! (set by `.ci/run` after it started the cluster), where it fails instead.

mod common;

use common::*;
use std::process::Command;
use std::time::Instant;

/// Whether `sinfo` answers and shows a node that can take jobs.
fn cluster_ready() -> Result<String, String> {
    let out = Command::new("sinfo")
        .args(["-h", "-o", "%T %C"])
        .output()
        .map_err(|e| format!("cannot run sinfo: {e}"))?;
    let text = String::from_utf8_lossy(&out.stdout).trim().to_string();
    if !out.status.success() {
        return Err(format!(
            "sinfo failed: {}",
            String::from_utf8_lossy(&out.stderr).trim()
        ));
    }
    let state = text.split_whitespace().next().unwrap_or("");
    if ["idle", "mixed", "allocated"]
        .iter()
        .any(|s| state.starts_with(s))
    {
        Ok(text)
    } else {
        Err(format!("no node ready (sinfo: `{text}`)"))
    }
}

#[test]
fn a_sweep_as_a_slurm_job_array_gathers_the_same_table_as_the_local_pool() {
    match cluster_ready() {
        Ok(state) => {
            eprintln!("Slurm node ready: {state} (state, CPUs allocated/idle/other/total)")
        }
        Err(why) => {
            assert!(
                std::env::var_os("TURBID_REQUIRE_SLURM").is_none(),
                "TURBID_REQUIRE_SLURM is set but the cluster is not usable: {why}"
            );
            eprintln!(
                "SKIPPED: no Slurm cluster ready ({why}); start one with `tools/slurm/local-cluster.sh start` (as root)"
            );
            return;
        }
    }
    let dir = temp_dir("sweep-slurm");
    // The same sweep twice, in two directories: one for each way of running it.
    let sweep = "sweep: 1\ntitle: Tiny job-array sweep (invented)\nbase: ../base.yaml\n\
                 grid:\n  initial.loading: [\"5 vol%\", \"15 vol%\"]\n  run.seed: [3, 4]\n";
    write(&dir.join("base.yaml"), &base(3000));
    write(&dir.join("local/sweep.yaml"), sweep);
    write(&dir.join("slurm/sweep.yaml"), sweep);

    let t = Instant::now();
    let local = run_in(
        &dir.join("local"),
        &[
            "sweep",
            "run",
            "sweep.yaml",
            "--jobs",
            "2",
            "--threads",
            "1",
        ],
    );
    assert!(local.status.success(), "{}", text(&local.stderr));
    eprintln!("local pool: {:.1} s", t.elapsed().as_secs_f64());

    // Two threads per task here: the particle engine gives bit-identical
    // results for any thread count, so the tables must still agree.
    let t = Instant::now();
    let slurm = run_in(
        &dir.join("slurm"),
        &[
            "sweep",
            "slurm",
            "sweep.yaml",
            "--cpus-per-task",
            "2",
            "--memory",
            "500 MB",
            "--time-limit",
            "10 min",
            "--max-running",
            "2",
            // As if the cluster took array indices up to 3 only: two arrays,
            // runs 1–3 and run 4 (index 1 + offset 3).
            "--max-array-index",
            "3",
            "--submit",
            "--wait",
        ],
    );
    let (out, err) = (text(&slurm.stdout), text(&slurm.stderr));
    eprintln!("job array: {:.1} s\n{out}{err}", t.elapsed().as_secs_f64());
    assert!(slurm.status.success(), "{out}{err}");
    assert_eq!(out.matches("submitted job array").count(), 2, "{out}");
    let script = std::fs::read_to_string(dir.join("slurm/out/sweep/slurm/array.sbatch")).unwrap();
    for line in [
        "#SBATCH --array=1-3%2",
        "#SBATCH --cpus-per-task=2",
        "#SBATCH --mem=500M",
        "#SBATCH --time=0-00:10:00",
        "#SBATCH --signal=B:TERM@120",
    ] {
        assert!(script.contains(line), "no `{line}` in\n{script}");
    }
    // Every task left its log, and ran on the cluster (not here).
    let logs: Vec<String> = std::fs::read_dir(dir.join("slurm/out/sweep/slurm/logs"))
        .unwrap()
        .map(|e| std::fs::read_to_string(e.unwrap().path()).unwrap())
        .collect();
    assert_eq!(logs.len(), 4, "{logs:?}");
    for l in &logs {
        assert!(
            l.contains("turbid sweep: run ") && l.contains("run complete"),
            "{l}"
        );
    }

    let a = std::fs::read_to_string(dir.join("local/out/sweep/summary.csv")).unwrap();
    let b = std::fs::read_to_string(dir.join("slurm/out/sweep/summary.csv")).unwrap();
    let (_, rows) = table(&a);
    assert_eq!(rows.len(), 4);
    assert!(rows.iter().all(|r| r[1] == "complete"), "{a}");
    assert_eq!(a, b, "the gathered tables differ");
    let a = std::fs::read(dir.join("local/out/sweep/summary.h5")).unwrap();
    let b = std::fs::read(dir.join("slurm/out/sweep/summary.h5")).unwrap();
    assert!(a == b, "the HDF5 tables differ");
    std::fs::remove_dir_all(&dir).ok();
}
