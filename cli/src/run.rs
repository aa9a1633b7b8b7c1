//! `turbid run`: run a scenario with either engine (through the shared
//! `engine::run` loop), show progress, write checkpoints, and write the
//! results atomically (partial results and a checkpoint on interrupt).

use indicatif::{HumanDuration, ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};
use turbid_engine::continuum::ContinuumEngine;
use turbid_engine::engine::{Checkpoints, Engine};
use turbid_engine::output;
use turbid_engine::particles::{EngineError, Monitor, ParticleEngine};
use turbid_engine::record::{BALANCE_TOLERANCE, OutletSeries, RunRecord, RunStatus};
use turbid_engine::scenario::Setup;
use turbid_engine::scenario::resolve::EngineSpec;

use crate::run_summary::{RunSummary, summary_path};

/// How progress is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ProgressMode {
    /// A bar on a terminal, plain log lines otherwise.
    Auto,
    Bar,
    Log,
    None,
}

/// Progress as a bar (terminal) or as a plain line every `every` (batch logs).
struct Progress {
    bar: Option<ProgressBar>,
    log_every: Option<Duration>,
    started: Instant,
    last_log: Instant,
    parcel_steps: u64,
    /// Work already done when this process started (a resumed run).
    baseline: u64,
    /// What one update is ("parcel" or "cell"), for the rate.
    unit: &'static str,
}

const TICKS_PER_SECOND: f64 = 1000.0;

impl Progress {
    fn new(mode: ProgressMode, end: f64, log_every: Duration, unit: &'static str) -> Progress {
        let terminal =
            std::io::stderr().is_terminal() && std::env::var("TERM").map_or(true, |t| t != "dumb");
        let bar = match (mode, terminal) {
            (ProgressMode::Bar, _) | (ProgressMode::Auto, true) => {
                let pb = ProgressBar::with_draw_target(
                    Some((end * TICKS_PER_SECOND) as u64),
                    ProgressDrawTarget::stderr_with_hz(4),
                );
                let style = ProgressStyle::with_template(
                    "{spinner} [{elapsed_precise}] {wide_bar} {msg} ETA {eta}",
                )
                .map(|s| s.progress_chars("=> "))
                .unwrap_or_else(|_| ProgressStyle::default_bar());
                pb.set_style(style);
                Some(pb)
            }
            _ => None,
        };
        let log_every = match (mode, terminal) {
            (ProgressMode::Log, _) | (ProgressMode::Auto, false) => Some(log_every),
            _ => None,
        };
        let now = Instant::now();
        Progress {
            bar,
            log_every,
            started: now,
            last_log: now,
            parcel_steps: 0,
            baseline: 0,
            unit,
        }
    }

    fn rate(&self) -> f64 {
        self.parcel_steps.saturating_sub(self.baseline) as f64
            / self.started.elapsed().as_secs_f64().max(1e-9)
    }

    fn finish(&self) {
        if let Some(pb) = &self.bar {
            pb.finish_and_clear();
        }
    }
}

impl Monitor for Progress {
    fn step(&mut self, time: f64, end: f64, parcel_steps: u64) {
        self.parcel_steps = parcel_steps;
        if let Some(pb) = &self.bar {
            pb.set_position((time * TICKS_PER_SECOND) as u64);
            pb.set_message(format!(
                "t = {time:.1} / {end:.1} s, {:.3e} {}-steps/s",
                self.rate(),
                self.unit
            ));
        }
        if let Some(every) = self.log_every
            && self.last_log.elapsed() >= every
        {
            self.last_log = Instant::now();
            let elapsed = self.started.elapsed();
            let frac = (time / end).clamp(1e-9, 1.0);
            let eta = elapsed.mul_f64((1.0 - frac) / frac);
            eprintln!(
                "progress: t = {time:.1} / {end:.1} s ({:.1} %), {:.3e} {}-steps/s, elapsed {}, eta {}",
                100.0 * frac,
                self.rate(),
                self.unit,
                HumanDuration(elapsed),
                HumanDuration(eta)
            );
        }
    }
}

/// Options of one run.
pub struct RunOptions {
    pub output: Option<PathBuf>,
    pub threads: usize,
    pub progress: ProgressMode,
    pub log_every: Duration,
    /// Write the run's plots (PNG and SVG) into this directory; `Some(None)`
    /// for `<stem>.plots/` beside the result file.
    pub plots: Option<Option<PathBuf>>,
    /// Checkpoint file (default `<stem>.checkpoint` beside the result file).
    pub checkpoint: Option<PathBuf>,
    /// Wall time between checkpoints; `None`: no checkpoints at all (not even
    /// on a signal).
    pub checkpoint_every: Option<Duration>,
    /// Continue from the checkpoint.
    pub resume: bool,
}

/// `<stem>.checkpoint` beside the result file.
pub fn checkpoint_path(h5_path: &Path) -> PathBuf {
    let stem = h5_path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".to_owned());
    h5_path.with_file_name(format!("{stem}.checkpoint"))
}

/// What happened, for the exit code.
pub enum Outcome {
    Complete,
    /// Stopped by a signal without a checkpoint (exit 3).
    Interrupted,
    /// Stopped by a signal; a checkpoint was written (exit 5).
    Checkpointed,
}

/// Checkpoints every `every` of wall time, written atomically.
struct WallClock {
    path: PathBuf,
    every: Duration,
    last: Instant,
}

impl WallClock {
    fn write(&mut self, engine: &mut dyn Engine) -> std::io::Result<()> {
        let bytes = engine.checkpoint();
        crate::atomic::write(&self.path, &bytes)?;
        self.last = Instant::now();
        eprintln!(
            "checkpoint: t = {:.1} s, {} records, written to {}",
            engine.time(),
            engine.frames_recorded(),
            self.path.display()
        );
        Ok(())
    }
}

impl Checkpoints for WallClock {
    fn due(&mut self) -> bool {
        self.last.elapsed() >= self.every
    }
    fn save(&mut self, engine: &mut dyn Engine) {
        if let Err(e) = self.write(engine) {
            // The run goes on; the next attempt comes after another interval.
            self.last = Instant::now();
            eprintln!(
                "warning: cannot write the checkpoint {}: {e}",
                self.path.display()
            );
        }
    }
}

/// Why a run did not happen or did not finish.
pub enum RunError {
    /// The scenario asks for something the engine cannot do (exit 2).
    Unsupported(String),
    /// `--resume` without a usable checkpoint (exit 2).
    NoResume(String),
    /// Something failed (exit 1).
    Failed(String),
}

/// Run, and when it fails leave a summary saying why beside the intended
/// result file (a sweep reports it and redoes the run next time).
pub fn run(file: &Path, text: &str, setup: &Setup, opts: &RunOptions) -> Result<Outcome, RunError> {
    let result = run_inner(file, text, setup, opts);
    if let Err(RunError::Unsupported(e) | RunError::Failed(e) | RunError::NoResume(e)) = &result {
        let out = opts
            .output
            .clone()
            .unwrap_or_else(|| setup.output.file.clone());
        let mut failed = RunSummary::failed(file, text, e.clone());
        failed.threads = opts.threads;
        failed.end_time_s = setup.run.end_time;
        // Best effort: the error itself is reported on stderr either way.
        let _ = failed.write(&summary_path(&out));
    }
    result
}

fn run_inner(
    file: &Path,
    text: &str,
    setup: &Setup,
    opts: &RunOptions,
) -> Result<Outcome, RunError> {
    let out = opts
        .output
        .clone()
        .unwrap_or_else(|| setup.output.file.clone());
    let csv = output::settling_csv_path(&out);
    let stop = Arc::new(AtomicBool::new(false));
    {
        let stop = stop.clone();
        // Ignore a failure to install (e.g. already installed in this process):
        // the run still works, it just cannot save partial results on a signal.
        let _ = ctrlc::set_handler(move || stop.store(true, Ordering::SeqCst));
    }
    let refused = |e: EngineError| match e {
        EngineError::Unsupported(m) => RunError::Unsupported(m),
        other => RunError::Failed(other.to_string()),
    };
    let wall = Instant::now();
    let (mut engine, unit): (Box<dyn Engine>, &'static str) = match setup.engine {
        EngineSpec::Particles => {
            let engine = ParticleEngine::new(setup, text, opts.threads).map_err(refused)?;
            let (a, b) = engine.kernel_size();
            eprintln!(
                "turbid: {} — particle engine, {} parcels, {} threads, concentration window {:.2} mm across × {:.2} mm ahead",
                file.display(),
                setup.run.parcels,
                opts.threads,
                2.0 * a * 1e3,
                b * 1e3
            );
            (Box::new(engine), "parcel")
        }
        EngineSpec::Continuum => {
            let engine = ContinuumEngine::new(setup, text).map_err(refused)?;
            eprintln!(
                "turbid: {} — continuum engine, {} cells of {:.2} mm",
                file.display(),
                engine.cells(),
                engine.cell_height() * 1e3
            );
            (Box::new(engine), "cell")
        }
    };
    let checkpoint = opts
        .checkpoint
        .clone()
        .unwrap_or_else(|| checkpoint_path(&out));
    if opts.resume {
        let bytes = std::fs::read(&checkpoint).map_err(|e| {
            RunError::NoResume(format!(
                "cannot resume: no checkpoint at {} ({e}); run without --resume to start from the beginning",
                checkpoint.display()
            ))
        })?;
        engine.restore(&bytes).map_err(|e| {
            RunError::NoResume(format!("cannot resume from {}: {e}", checkpoint.display()))
        })?;
        eprintln!(
            "turbid: resumed from {} at t = {:.1} s ({} records so far)",
            checkpoint.display(),
            engine.time(),
            engine.frames_recorded()
        );
    }
    let mut progress = Progress::new(opts.progress, setup.run.end_time, opts.log_every, unit);
    progress.baseline = engine.work_done();
    let mut saver = opts.checkpoint_every.map(|every| WallClock {
        path: checkpoint.clone(),
        every,
        last: Instant::now(),
    });
    let record = turbid_engine::engine::run(
        engine.as_mut(),
        &mut progress,
        Some(&stop),
        saver.as_mut().map(|s| s as &mut dyn Checkpoints),
    );
    // Stopped by a signal: save where it stands, so `--resume` continues.
    let mut checkpointed = false;
    if record.status == RunStatus::Partial
        && let Some(s) = saver.as_mut()
    {
        match s.write(engine.as_mut()) {
            Ok(()) => checkpointed = true,
            Err(e) => eprintln!(
                "warning: cannot write the checkpoint {}: {e}; the run must start again",
                checkpoint.display()
            ),
        }
    }
    progress.finish();
    output::write_netcdf(&record, &out).map_err(|e| RunError::Failed(e.to_string()))?;
    output::write_settling_csv(&record, &csv).map_err(|e| RunError::Failed(e.to_string()))?;
    let outlets_csv = output::outlets_csv_path(&out);
    if record.outlets.is_some() {
        output::write_outlets_csv(&record, &outlets_csv)
            .map_err(|e| RunError::Failed(e.to_string()))?;
    }
    // Last, so that a summary saying `complete` means both files above are in place.
    let summary_file = summary_path(&out);
    let mut machine = RunSummary::from_record(&record, file, text);
    machine.output = Some(out.display().to_string());
    machine.output_bytes = std::fs::metadata(&out).ok().map(|m| m.len());
    machine.settling_csv = Some(csv.display().to_string());
    machine.threads = opts.threads;
    machine.end_time_s = setup.run.end_time;
    machine.wall_time_s = wall.elapsed().as_secs_f64();
    if checkpointed {
        machine.checkpoint = Some(checkpoint.display().to_string());
    }
    machine
        .write(&summary_file)
        .map_err(|e| RunError::Failed(format!("cannot write {}: {e}", summary_file.display())))?;
    if record.status == RunStatus::Complete && checkpoint.exists() {
        // Finished: a checkpoint left from an earlier stop is stale now.
        let _ = std::fs::remove_file(&checkpoint);
    }
    if checkpointed {
        println!(
            "  checkpoint         {} (continue with --resume)",
            checkpoint.display()
        );
    }
    summary(
        &record,
        &out,
        &csv,
        wall.elapsed(),
        progress.rate(),
        progress.unit,
    );
    if let Some(dir) = &opts.plots {
        let dir = dir.clone().unwrap_or_else(|| {
            let stem = out
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "run".to_owned());
            out.with_file_name(format!("{stem}.plots"))
        });
        let data = crate::result_file::RunData::from_record(&record);
        let figures = crate::design::run_figures(&data, &[]);
        let formats = [crate::plot::Format::Png, crate::plot::Format::Svg];
        crate::design::write_plots(&figures, &dir, &formats)
            .map_err(|f| RunError::Failed(f.message))?;
        println!("  plots              {}", dir.display());
    }
    if let Some(o) = &record.outlets {
        thickener_summary(o, &outlets_csv);
        let worst = o.worst_residual();
        if worst.is_nan() || worst > BALANCE_TOLERANCE {
            return Err(RunError::Failed(format!(
                "SOLIDS BALANCE BROKEN: the residual (fed − drawn off − accumulated) reached {:.3e} of the solids fed, above the {:.0e} limit; the results are written but must not be trusted",
                worst, BALANCE_TOLERANCE
            )));
        }
    }
    Ok(match record.status {
        RunStatus::Complete => Outcome::Complete,
        RunStatus::Partial if checkpointed => Outcome::Checkpointed,
        RunStatus::Partial => Outcome::Interrupted,
    })
}

fn summary(record: &RunRecord, out: &Path, csv: &Path, wall: Duration, rate: f64, unit: &str) {
    let (first, last) = match (record.frames.first(), record.frames.last()) {
        (Some(f), Some(l)) => (f, l),
        _ => return,
    };
    let balance = record
        .frames
        .iter()
        .map(|f| ((f.solids_volume - first.solids_volume) / first.solids_volume).abs())
        .fold(0.0, f64::max);
    let continuous = record.outlets.is_some();
    let status = match record.status {
        RunStatus::Complete => "complete",
        RunStatus::Partial => "PARTIAL (interrupted; the frames recorded so far are saved)",
    };
    println!("run {status} at t = {:.1} s", last.time);
    if !continuous {
        println!("  interface height   {:.4} m", last.interface_height);
    }
    println!("  bed height         {:.4} m", last.bed_height);
    if !continuous {
        println!(
            "  solids balance     {balance:.2e} (largest relative change of the solids volume over all records)"
        );
    }
    println!(
        "  wall time          {:.1} s ({rate:.3e} {unit}-steps/s)",
        wall.as_secs_f64()
    );
    println!(
        "  results            {} ({} records)",
        out.display(),
        record.frames.len()
    );
    println!("  settling curve     {}", csv.display());
    println!("  run summary        {}", summary_path(out).display());
}

/// The closing lines of a thickener run: outlets at the end, the blanket and
/// the solids balance.
fn thickener_summary(o: &OutletSeries, csv: &Path) {
    let Some(last) = o.samples.last() else {
        return;
    };
    println!(
        "  blanket level      {:.3} m (highest point at {:.3} g/L; feed at {:.3} m, overflow lip at {:.3} m)",
        last.blanket_level, o.blanket_threshold, o.feed_level, o.overflow_level
    );
    println!(
        "  feed               {:.2} m³/h at {:.3} g/L = {:.4} t/h of solids",
        last.feed_flow * 3600.0,
        last.feed_concentration,
        last.feed_solids_rate * 3.6
    );
    println!(
        "  underflow          {:.2} m³/h at {:.3} g/L = {:.4} t/h of solids",
        last.underflow_flow * 3600.0,
        last.underflow_concentration,
        last.underflow_solids_rate * 3.6
    );
    println!(
        "  overflow           {:.2} m³/h at {:.4} g/L = {:.4} t/h of solids",
        last.overflow_flow * 3600.0,
        last.overflow_concentration,
        last.overflow_solids_rate * 3.6
    );
    println!(
        "  solids in / out    {:.4} t fed, {:.4} t underflow, {:.4} t overflow; in the tank {:.4} t (at start {:.4} t)",
        last.solids_in * 1e-3,
        last.solids_out_underflow * 1e-3,
        last.solids_out_overflow * 1e-3,
        last.inventory * 1e-3,
        last.initial_inventory * 1e-3
    );
    let worst = o.worst_residual();
    let verdict = if worst.is_nan() || worst > BALANCE_TOLERANCE {
        "BROKEN"
    } else {
        "closes"
    };
    println!(
        "  solids balance     {verdict}: residual {:.3e} kg at the end, at most {worst:.2e} of the solids fed over all records",
        last.balance_residual
    );
    println!("  outlets            {}", csv.display());
    println!(
        "  caution            underflow and blanket predictions are estimates for screening; confirm designs with \
         pilot tests and the judgement of a licensed engineer under local codes and regulations"
    );
}
