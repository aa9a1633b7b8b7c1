//! `turbid sweep run`: the runs of a sweep on this machine, a bounded number
//! at a time.
//!
//! Each run is a child process of this same `turbid` binary (`turbid run`),
//! not a call inside this process: a run that panics, aborts or runs out of
//! memory takes only itself down; each run's output goes to its own log; and
//! SIGTERM reaches each run separately, so it can save its partial results.
//! The children are started with a parent-death signal (SIGTERM), so killing
//! the sweep, even with SIGKILL, stops its runs too: nothing keeps running
//! unattended, and a restart redoes exactly the runs without a complete summary.

use super::{EXIT_SOME_FAILED, Failure, RESUMABLE, Run, RunState, Sweep};
use crate::run::ProgressMode;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::collections::{HashMap, HashSet, VecDeque};
use std::fs::OpenOptions;
use std::io::{IsTerminal, Write};
use std::os::unix::process::CommandExt;
use std::path::PathBuf;
use std::process::{Command, Stdio};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

pub struct LocalOptions {
    /// Runs at a time.
    pub jobs: Option<usize>,
    /// Threads per run.
    pub threads: Option<usize>,
    pub progress: ProgressMode,
    pub log_every: Duration,
}

/// How one run ended.
enum Outcome {
    Complete,
    Interrupted,
    Failed(String),
}

struct Event {
    number: usize,
    outcome: Outcome,
    wall: Duration,
}

/// Exit code of `turbid run` when SIGINT/SIGTERM stopped it.
const RUN_INTERRUPTED: i32 = 3;
/// A run's exit code when it stopped on a signal and left a checkpoint.
const RUN_CHECKPOINTED: i32 = crate::EXIT_CHECKPOINTED as i32;

pub fn run(file: &std::path::Path, opts: &LocalOptions) -> Result<u8, Failure> {
    let sweep = Sweep::load(file)?;
    let threads = sweep.threads(opts.threads);
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    let jobs = opts.jobs.unwrap_or((cores / threads).max(1));
    if jobs == 0 {
        return Err(Failure::invalid("error: --jobs must be at least 1".into()));
    }
    let exe = std::env::current_exe()
        .map_err(|e| Failure::internal(format!("error: cannot find the turbid binary: {e}")))?;
    std::fs::create_dir_all(sweep.out_dir.join("logs")).map_err(|e| {
        Failure::internal(format!(
            "error: cannot create {}: {e}",
            sweep.out_dir.join("logs").display()
        ))
    })?;

    // One pool per sweep at a time: two would run the same runs into the same files.
    let lock_path = sweep.out_dir.join("sweep.lock");
    let _lock = lock(&lock_path)?;
    sweep.write_runs()?;

    let mut pending = VecDeque::new();
    let mut skipped = 0;
    let mut resume = HashSet::new();
    for r in &sweep.runs {
        match sweep.state(r) {
            RunState::Complete(_) => skipped += 1,
            RunState::Missing => pending.push_back(r.number),
            RunState::Unfinished(RESUMABLE, why) => {
                eprintln!("run {}: {why}", r.number);
                resume.insert(r.number);
                pending.push_back(r.number);
            }
            RunState::Unfinished(label, why) => {
                eprintln!("run {}: redoing it ({label}: {why})", r.number);
                pending.push_back(r.number);
            }
        }
    }
    let todo = pending.len();
    eprintln!(
        "sweep {}: {} runs; {skipped} already complete, {todo} to run, {} at a time, {threads} thread{} each",
        sweep.file.display(),
        sweep.runs.len(),
        jobs.min(todo.max(1)),
        if threads == 1 { "" } else { "s" }
    );

    let stop = Arc::new(AtomicBool::new(false));
    {
        let stop = stop.clone();
        // Not fatal if it cannot be installed: Ctrl-C still reaches the runs
        // (same process group), they just are not stopped by a plain SIGTERM.
        let _ = ctrlc::set_handler(move || stop.store(true, Ordering::SeqCst));
    }
    let queue = Mutex::new(pending);
    let running: Mutex<HashMap<usize, u32>> = Mutex::new(HashMap::new());
    let by_number: HashMap<usize, &Run> = sweep.runs.iter().map(|r| (r.number, r)).collect();
    let (tx, rx) = mpsc::channel::<Event>();

    let mut report = Report::new(opts.progress, todo as u64, opts.log_every);
    let mut failures: Vec<(usize, String)> = Vec::new();
    let mut interrupted = Vec::new();
    let mut completed = 0usize;
    std::thread::scope(|scope| {
        for _ in 0..jobs.min(todo) {
            let tx = tx.clone();
            let (queue, running, stop, by_number, exe, resume) =
                (&queue, &running, &stop, &by_number, &exe, &resume);
            scope.spawn(move || {
                loop {
                    if stop.load(Ordering::SeqCst) {
                        break;
                    }
                    let Some(number) = queue.lock().expect("queue").pop_front() else {
                        break;
                    };
                    let run = by_number[&number];
                    let started = Instant::now();
                    let outcome =
                        run_one(exe, run, threads, resume.contains(&number), running, stop);
                    let _ = tx.send(Event {
                        number,
                        outcome,
                        wall: started.elapsed(),
                    });
                }
            });
        }
        drop(tx);
        let mut signalled = false;
        loop {
            match rx.recv_timeout(Duration::from_millis(200)) {
                Ok(ev) => {
                    let line = match &ev.outcome {
                        Outcome::Complete => {
                            completed += 1;
                            format!(
                                "run {}: complete ({:.1} s)",
                                ev.number,
                                ev.wall.as_secs_f64()
                            )
                        }
                        Outcome::Interrupted => {
                            interrupted.push(ev.number);
                            format!("run {}: interrupted (partial results saved)", ev.number)
                        }
                        Outcome::Failed(why) => {
                            failures.push((ev.number, why.clone()));
                            format!("run {}: FAILED: {why}", ev.number)
                        }
                    };
                    report.event(&line);
                }
                Err(mpsc::RecvTimeoutError::Timeout) => {}
                Err(mpsc::RecvTimeoutError::Disconnected) => break,
            }
            let n_running = running.lock().expect("running").len();
            report.update(completed, failures.len(), n_running);
            if stop.load(Ordering::SeqCst) && !signalled {
                signalled = true;
                report.event("sweep: stopping; asking the running runs to save partial results");
                for &pid in running.lock().expect("running").values() {
                    // SAFETY: kill(2) with a pid of our own, still-running child.
                    unsafe {
                        libc::kill(pid as libc::pid_t, libc::SIGTERM);
                    }
                }
            }
        }
    });
    report.finish();

    let not_started = todo - completed - failures.len() - interrupted.len();
    println!(
        "sweep {}: {} complete ({skipped} from before), {} failed, {} interrupted, {not_started} not started",
        sweep.file.display(),
        skipped + completed,
        failures.len(),
        interrupted.len()
    );
    for (n, why) in &failures {
        println!(
            "  run {n} failed: {why}\n    log: {}",
            by_number[n].log.display()
        );
    }
    // The table of whatever is complete so far.
    super::gather::gather(&sweep, true)?;
    Ok(if stop.load(Ordering::SeqCst) || !interrupted.is_empty() {
        crate::EXIT_INTERRUPTED
    } else if failures.is_empty() {
        0
    } else {
        EXIT_SOME_FAILED
    })
}

/// An exclusive lock on `path`, held while the returned file is open (the
/// kernel drops it when the process ends, however it ends).
fn lock(path: &std::path::Path) -> Result<std::fs::File, Failure> {
    use std::os::fd::AsRawFd;
    let f = OpenOptions::new()
        .create(true)
        .truncate(false)
        .write(true)
        .open(path)
        .map_err(|e| Failure::internal(format!("error: cannot open {}: {e}", path.display())))?;
    // SAFETY: flock(2) on a descriptor we own.
    if unsafe { libc::flock(f.as_raw_fd(), libc::LOCK_EX | libc::LOCK_NB) } != 0 {
        return Err(Failure::invalid(format!(
            "error: another `turbid sweep run` is working on {} (lock {})",
            path.parent()
                .map_or(String::new(), |p| p.display().to_string()),
            path.display()
        )));
    }
    Ok(f)
}

/// Run one scenario as `turbid run` in a child process; its stdout and
/// stderr go to the run's log (appended, so earlier attempts stay readable).
fn run_one(
    exe: &PathBuf,
    run: &Run,
    threads: usize,
    resume: bool,
    running: &Mutex<HashMap<usize, u32>>,
    stop: &AtomicBool,
) -> Outcome {
    let log = match OpenOptions::new().create(true).append(true).open(&run.log) {
        Ok(f) => f,
        Err(e) => return Outcome::Failed(format!("cannot open {}: {e}", run.log.display())),
    };
    let _ = writeln!(
        &log,
        "== turbid sweep: run {} ({})",
        run.number,
        run.scenario.display()
    );
    let err_log = match log.try_clone() {
        Ok(f) => f,
        Err(e) => return Outcome::Failed(format!("cannot open {}: {e}", run.log.display())),
    };
    let parent = std::process::id();
    let mut cmd = Command::new(exe);
    cmd.arg("run")
        .arg(&run.scenario)
        .arg("-o")
        .arg(&run.output)
        .args(["--threads", &threads.to_string()])
        .args(["--progress", "log", "--log-every", "60"])
        .args(resume.then_some("--resume"))
        .stdin(Stdio::null())
        .stdout(log)
        .stderr(err_log);
    // SAFETY: only async-signal-safe calls between fork and exec.
    unsafe {
        cmd.pre_exec(move || {
            // Die with the sweep (SIGTERM: the run saves partial results).
            libc::prctl(libc::PR_SET_PDEATHSIG, libc::SIGTERM as libc::c_ulong);
            // The sweep may have died before the line above took effect.
            if libc::getppid() as u32 != parent {
                libc::_exit(RUN_INTERRUPTED);
            }
            Ok(())
        });
    }
    let mut child = match cmd.spawn() {
        Ok(c) => c,
        Err(e) => return Outcome::Failed(format!("cannot start {}: {e}", exe.display())),
    };
    running
        .lock()
        .expect("running")
        .insert(run.number, child.id());
    // A stop that came between taking this run and starting it.
    if stop.load(Ordering::SeqCst) {
        // SAFETY: kill(2) on our own child, not yet waited for.
        unsafe {
            libc::kill(child.id() as libc::pid_t, libc::SIGTERM);
        }
    }
    let status = child.wait();
    running.lock().expect("running").remove(&run.number);
    let code = match status {
        Ok(s) => s.code(),
        Err(e) => return Outcome::Failed(format!("lost the run's process: {e}")),
    };
    match code {
        Some(0) => Outcome::Complete,
        Some(RUN_INTERRUPTED | RUN_CHECKPOINTED) => Outcome::Interrupted,
        Some(c) => Outcome::Failed(format!("exit code {c}: {}", last_error(&run.log))),
        None => Outcome::Failed("killed by a signal".into()),
    }
}

/// The last `error`-looking lines of a log, for the report.
fn last_error(log: &PathBuf) -> String {
    let text = std::fs::read_to_string(log).unwrap_or_default();
    let attempt = text.rsplit("== turbid sweep: run").next().unwrap_or("");
    let lines: Vec<&str> = attempt
        .lines()
        .filter(|l| l.contains("error") || l.trim_start().starts_with("hint:"))
        .collect();
    if lines.is_empty() {
        "see the log".into()
    } else {
        lines[lines.len().saturating_sub(3)..].join(" / ")
    }
}

/// Overall progress: a bar on a terminal, plain lines otherwise.
struct Report {
    bar: Option<ProgressBar>,
    log_every: Option<Duration>,
    last: Instant,
    total: u64,
}

impl Report {
    fn new(mode: ProgressMode, total: u64, every: Duration) -> Report {
        let terminal =
            std::io::stderr().is_terminal() && std::env::var("TERM").map_or(true, |t| t != "dumb");
        let bar = match (mode, terminal) {
            (ProgressMode::Bar, _) | (ProgressMode::Auto, true) => {
                let pb = ProgressBar::with_draw_target(
                    Some(total),
                    ProgressDrawTarget::stderr_with_hz(4),
                );
                let style = ProgressStyle::with_template(
                    "{spinner} [{elapsed_precise}] {wide_bar} {pos}/{len} runs {msg} ETA {eta}",
                )
                .map(|s| s.progress_chars("=> "))
                .unwrap_or_else(|_| ProgressStyle::default_bar());
                pb.set_style(style);
                Some(pb)
            }
            _ => None,
        };
        let log_every = match (mode, terminal) {
            (ProgressMode::Log, _) | (ProgressMode::Auto, false) => Some(every),
            _ => None,
        };
        Report {
            bar,
            log_every,
            last: Instant::now(),
            total,
        }
    }

    fn event(&self, line: &str) {
        match &self.bar {
            // A bar forced where it cannot be drawn must not swallow the lines.
            Some(pb) if !pb.is_hidden() => pb.println(line),
            _ => eprintln!("{line}"),
        }
    }

    fn update(&mut self, done: usize, failed: usize, running: usize) {
        let finished = (done + failed) as u64;
        if let Some(pb) = &self.bar {
            pb.set_position(finished);
            pb.set_message(format!("({failed} failed, {running} running)"));
        }
        if let Some(every) = self.log_every
            && self.last.elapsed() >= every
        {
            self.last = Instant::now();
            eprintln!(
                "progress: {finished}/{} runs finished ({done} complete, {failed} failed), {running} running",
                self.total
            );
        }
    }

    fn finish(&self) {
        if let Some(pb) = &self.bar {
            pb.finish_and_clear();
        }
    }
}
