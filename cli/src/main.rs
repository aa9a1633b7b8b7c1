//! `turbid`: the command-line front end.
//!
//! Exit codes: 0 success, 2 invalid input (the message says where and why),
//! 1 internal failure (a bug: please report it, or an output that could not be
//! written), 3 interrupted by SIGINT/SIGTERM without a checkpoint (partial
//! results were written), 4 (sweeps) some runs failed or are not complete,
//! 5 stopped by SIGINT/SIGTERM with a checkpoint (partial results were
//! written; rerun with `--resume` to continue).

mod atomic;
mod design;
mod plot;
mod report;
mod result_file;
mod run;
mod run_summary;
mod summary;
mod sweep;

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;
use turbid_engine::scenario;

#[derive(Parser)]
#[command(
    name = "turbid",
    version,
    about = "Simulate how solid particles settle out of a liquid: batch columns and thickeners"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Validate a scenario file and print the fluid, the size classes and their settling data.
    Check {
        /// Scenario file (YAML).
        file: PathBuf,
    },
    /// Run a scenario (particle or continuum engine) and write profiles (HDF5) and the settling curve (CSV).
    Run {
        /// Scenario file (YAML).
        file: PathBuf,
        /// Result file (HDF5, netCDF-4 layout); default: `output.file` of the scenario.
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Threads for the hot loops (default: all cores).
        #[arg(long)]
        threads: Option<usize>,
        /// How to show progress.
        #[arg(long, value_enum, default_value = "auto")]
        progress: run::ProgressMode,
        /// Seconds between plain progress lines when not on a terminal.
        #[arg(long, default_value_t = 10.0)]
        log_every: f64,
        /// Checkpoint file (default: `<stem>.checkpoint` beside the result file).
        #[arg(long)]
        checkpoint: Option<PathBuf>,
        /// Minutes of wall time between checkpoints; 0 turns checkpoints off (also on SIGTERM).
        #[arg(long, default_value_t = 10.0)]
        checkpoint_every: f64,
        /// Continue from the checkpoint (it must exist and belong to this scenario).
        #[arg(long)]
        resume: bool,
        /// Also write the plots (PNG and SVG) into DIR (default: `<stem>.plots/` beside the result).
        #[arg(long, value_name = "DIR", num_args = 0..=1)]
        plots: Option<Option<PathBuf>>,
    },
    /// Analyse a settling curve: Kynch flux table and compression point.
    Curve {
        #[command(flatten)]
        args: design::CurveArgs,
        /// Print the results as JSON (SI units) instead of text.
        #[arg(long)]
        json: bool,
        #[command(flatten)]
        plots: design::PlotArgs,
    },
    /// Size a thickener from a settling curve or a settling law; state-point check of a tank.
    Size {
        #[command(flatten)]
        args: design::SizeArgs,
        /// Print the results as JSON (SI units) instead of text.
        #[arg(long)]
        json: bool,
        #[command(flatten)]
        plots: design::PlotArgs,
    },
    /// Fit a settling law to measured settling curves (continuum model inside the fit).
    Fit {
        #[command(flatten)]
        args: design::FitArgs,
        /// Print the results as JSON (SI units) instead of text.
        #[arg(long)]
        json: bool,
        #[command(flatten)]
        plots: design::PlotArgs,
    },
    /// Plot a result file: settling curve, concentration map, profiles by size class.
    Plot {
        #[command(flatten)]
        args: design::RunPlotArgs,
        /// Directory for the plots (default: `<stem>.plots/` beside the result).
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Plot formats.
        #[arg(long, value_enum, value_delimiter = ',', default_value = "png,svg")]
        format: Vec<plot::Format>,
    },
    /// Write one run, curve analysis, sizing or fit as a self-contained HTML report.
    Report {
        #[command(subcommand)]
        what: ReportCommand,
    },
    /// Print the JSON Schema of the scenario format (for editors and validators).
    Schema,
    /// Parameter sweeps: expand a sweep file into runs, run them here or as a Slurm job array, gather the results.
    Sweep {
        #[command(subcommand)]
        command: SweepCommand,
    },
}

#[derive(Subcommand)]
enum ReportCommand {
    /// A run, from its result file.
    Run {
        #[command(flatten)]
        args: design::RunPlotArgs,
        /// The HTML file to write.
        #[arg(short, long)]
        output: PathBuf,
    },
    /// A settling-curve analysis (flags as for `turbid curve`).
    Curve {
        #[command(flatten)]
        args: design::CurveArgs,
        /// The HTML file to write.
        #[arg(short, long)]
        output: PathBuf,
    },
    /// A thickener sizing (flags as for `turbid size`).
    Size {
        #[command(flatten)]
        args: design::SizeArgs,
        /// The HTML file to write.
        #[arg(short, long)]
        output: PathBuf,
    },
    /// A fit (flags as for `turbid fit`).
    Fit {
        #[command(flatten)]
        args: design::FitArgs,
        /// The HTML file to write.
        #[arg(short, long)]
        output: PathBuf,
    },
}

#[derive(Subcommand)]
enum SweepCommand {
    /// Write every run's scenario file, check them all, and list the runs.
    Expand {
        /// Sweep file (YAML).
        file: PathBuf,
    },
    /// Run the sweep on this machine (skips runs already complete), then gather the table.
    Run {
        /// Sweep file (YAML).
        file: PathBuf,
        /// Runs at a time (default: cores / threads per run).
        #[arg(short, long)]
        jobs: Option<usize>,
        /// Threads per run (default: `threads` of the sweep file, else 1).
        #[arg(long)]
        threads: Option<usize>,
        /// How to show progress.
        #[arg(long, value_enum, default_value = "auto")]
        progress: run::ProgressMode,
        /// Seconds between plain progress lines when not on a terminal.
        #[arg(long, default_value_t = 30.0)]
        log_every: f64,
    },
    /// Write a Slurm job-array script for the runs; `--submit` hands it to sbatch.
    Slurm {
        /// Sweep file (YAML).
        file: PathBuf,
        /// CPUs per array task = threads per run (default: `slurm.cpus_per_task`, else the sweep's threads).
        #[arg(long)]
        cpus_per_task: Option<u32>,
        /// Memory per task, e.g. "2 GB" (default: `slurm.memory`, else the cluster's default).
        #[arg(long)]
        memory: Option<String>,
        /// Time limit per task, e.g. "2 h" (default: `slurm.time_limit`, else the partition's).
        #[arg(long)]
        time_limit: Option<String>,
        /// Partition (default: `slurm.partition`, else the cluster's default).
        #[arg(long)]
        partition: Option<String>,
        /// Account to charge (default: `slurm.account`).
        #[arg(long)]
        account: Option<String>,
        /// Most tasks running at once, the `%N` throttle (default: `slurm.max_running`, else no limit).
        #[arg(long)]
        max_running: Option<u32>,
        /// Largest array index the cluster accepts (its MaxArraySize − 1); larger sweeps become several arrays.
        #[arg(long, default_value_t = 1000)]
        max_array_index: u32,
        /// Submit with sbatch (only the runs not yet complete).
        #[arg(long)]
        submit: bool,
        /// After submitting, wait for the jobs to end and gather the table.
        #[arg(long, requires = "submit")]
        wait: bool,
        /// turbid binary the tasks run (default: this one).
        #[arg(long)]
        turbid: Option<PathBuf>,
    },
    /// Collect the results of all runs into summary.csv and summary.h5.
    Gather {
        /// Sweep file (YAML).
        file: PathBuf,
    },
}

const EXIT_INVALID_INPUT: u8 = 2;
const EXIT_INTERNAL: u8 = 1;
/// Interrupted by SIGINT or SIGTERM; the partial results were written.
pub(crate) const EXIT_INTERRUPTED: u8 = 3;
/// Stopped by SIGINT or SIGTERM with a checkpoint written: rerun with `--resume`.
pub(crate) const EXIT_CHECKPOINTED: u8 = 5;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                EXIT_INVALID_INPUT
            } else {
                0
            };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    // A panic is a bug in turbid, never the user's fault: report it as such.
    std::panic::set_hook(Box::new(|info| {
        eprintln!("internal error (a bug in turbid, please report it): {info}");
    }));
    match std::panic::catch_unwind(|| run(cli)) {
        Ok(code) => code,
        Err(_) => ExitCode::from(EXIT_INTERNAL),
    }
}

fn run(cli: Cli) -> ExitCode {
    match cli.command {
        Command::Check { file } => match scenario::load(&file) {
            Ok(setup) => {
                print!("{}", summary::render(&file, &setup));
                ExitCode::SUCCESS
            }
            Err(e) => {
                eprintln!("{e}");
                ExitCode::from(EXIT_INVALID_INPUT)
            }
        },
        Command::Run {
            file,
            output,
            threads,
            progress,
            log_every,
            checkpoint,
            checkpoint_every,
            resume,
            plots,
        } => {
            let text = match std::fs::read_to_string(&file) {
                Ok(t) => t,
                Err(_) => {
                    // Let `load` produce the located message for a missing file.
                    return match scenario::load(&file) {
                        Err(e) => {
                            eprintln!("{e}");
                            ExitCode::from(EXIT_INVALID_INPUT)
                        }
                        Ok(_) => ExitCode::from(EXIT_INTERNAL),
                    };
                }
            };
            let setup = match scenario::parse_str(&text, &file) {
                Ok(s) => s,
                Err(e) => {
                    eprintln!("{e}");
                    return ExitCode::from(EXIT_INVALID_INPUT);
                }
            };
            if !(log_every.is_finite() && log_every > 0.0) {
                eprintln!("error: --log-every must be a positive number of seconds");
                return ExitCode::from(EXIT_INVALID_INPUT);
            }
            let threads = threads
                .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
            if threads == 0 {
                eprintln!("error: --threads must be at least 1");
                return ExitCode::from(EXIT_INVALID_INPUT);
            }
            if !(checkpoint_every.is_finite() && checkpoint_every >= 0.0) {
                eprintln!("error: --checkpoint-every must be a number of minutes, 0 or more");
                return ExitCode::from(EXIT_INVALID_INPUT);
            }
            if resume && checkpoint_every == 0.0 {
                eprintln!(
                    "error: --resume needs checkpoints; drop --checkpoint-every 0 (or give it minutes)"
                );
                return ExitCode::from(EXIT_INVALID_INPUT);
            }
            let opts = run::RunOptions {
                output,
                threads,
                progress,
                log_every: std::time::Duration::from_secs_f64(log_every),
                checkpoint,
                checkpoint_every: (checkpoint_every > 0.0)
                    .then(|| std::time::Duration::from_secs_f64(checkpoint_every.min(1e9) * 60.0)),
                resume,
                plots,
            };
            match run::run(&file, &text, &setup, &opts) {
                Ok(run::Outcome::Complete) => ExitCode::SUCCESS,
                Ok(run::Outcome::Interrupted) => ExitCode::from(EXIT_INTERRUPTED),
                Ok(run::Outcome::Checkpointed) => ExitCode::from(EXIT_CHECKPOINTED),
                Err(run::RunError::NoResume(e)) => {
                    eprintln!("error: {}: {e}", file.display());
                    ExitCode::from(EXIT_INVALID_INPUT)
                }
                Err(run::RunError::Unsupported(e)) => {
                    eprintln!("error: {}: {e}", file.display());
                    ExitCode::from(EXIT_INVALID_INPUT)
                }
                Err(run::RunError::Failed(e)) => {
                    eprintln!("error: {e}");
                    ExitCode::from(EXIT_INTERNAL)
                }
            }
        }
        Command::Sweep { command } => {
            let result = match command {
                SweepCommand::Expand { file } => sweep::expand(&file).map(|()| 0),
                SweepCommand::Run {
                    file,
                    jobs,
                    threads,
                    progress,
                    log_every,
                } => {
                    if !(log_every.is_finite() && log_every > 0.0) {
                        eprintln!("error: --log-every must be a positive number of seconds");
                        return ExitCode::from(EXIT_INVALID_INPUT);
                    }
                    if threads == Some(0) {
                        eprintln!("error: --threads must be at least 1");
                        return ExitCode::from(EXIT_INVALID_INPUT);
                    }
                    sweep::pool::run(
                        &file,
                        &sweep::pool::LocalOptions {
                            jobs,
                            threads,
                            progress,
                            log_every: std::time::Duration::from_secs_f64(log_every),
                        },
                    )
                }
                SweepCommand::Slurm {
                    file,
                    cpus_per_task,
                    memory,
                    time_limit,
                    partition,
                    account,
                    max_running,
                    max_array_index,
                    submit,
                    wait,
                    turbid,
                } => sweep::slurm::run(
                    &file,
                    &sweep::slurm::SlurmOptions {
                        cpus_per_task,
                        memory,
                        time_limit,
                        partition,
                        account,
                        max_running,
                        max_array_index,
                        submit,
                        wait,
                        turbid,
                    },
                ),
                SweepCommand::Gather { file } => sweep::gather::run(&file),
            };
            match result {
                Ok(code) => ExitCode::from(code),
                Err(f) => {
                    eprintln!("{}", f.message);
                    ExitCode::from(f.code)
                }
            }
        }
        Command::Curve { args, json, plots } => finish(design::curve_command(&args), json, &plots),
        Command::Size { args, json, plots } => finish(design::size_command(&args), json, &plots),
        Command::Fit { args, json, plots } => finish(design::fit_command(&args), json, &plots),
        Command::Plot {
            args,
            output,
            format,
        } => {
            let dir = output.unwrap_or_else(|| {
                let stem = args
                    .result
                    .file_stem()
                    .map(|s| s.to_string_lossy().into_owned())
                    .unwrap_or_else(|| "run".to_owned());
                args.result.with_file_name(format!("{stem}.plots"))
            });
            let result = design::run_outcome(&args)
                .and_then(|o| design::write_plots(&o.figures, &dir, &format));
            match result {
                Ok(files) => {
                    for f in files {
                        println!("{}", f.display());
                    }
                    ExitCode::SUCCESS
                }
                Err(f) => fail(f),
            }
        }
        Command::Report { what } => {
            let command = std::env::args().collect::<Vec<_>>().join(" ");
            let (outcome, output) = match what {
                ReportCommand::Run { args, output } => (design::run_outcome(&args), output),
                ReportCommand::Curve { args, output } => (design::curve_command(&args), output),
                ReportCommand::Size { args, output } => (design::size_command(&args), output),
                ReportCommand::Fit { args, output } => (design::fit_command(&args), output),
            };
            match outcome.and_then(|o| report::write(&o, &command, &output)) {
                Ok(()) => {
                    println!("{}", output.display());
                    ExitCode::SUCCESS
                }
                Err(f) => fail(f),
            }
        }
        Command::Schema => {
            let schema = scenario::json_schema();
            match serde_json::to_string_pretty(&schema) {
                Ok(s) => {
                    println!("{s}");
                    ExitCode::SUCCESS
                }
                Err(e) => {
                    eprintln!("internal error: cannot print the schema: {e}");
                    ExitCode::from(EXIT_INTERNAL)
                }
            }
        }
    }
}

/// Print a design command's outcome (text or JSON) and write its plots.
fn finish(
    outcome: Result<design::Outcome, design::Failure>,
    json: bool,
    plots: &design::PlotArgs,
) -> ExitCode {
    let outcome = match outcome {
        Ok(o) => o,
        Err(f) => return fail(f),
    };
    if json {
        match serde_json::to_string_pretty(&outcome.json) {
            Ok(s) => println!("{s}"),
            Err(e) => {
                eprintln!("internal error: cannot print the results as JSON: {e}");
                return ExitCode::from(EXIT_INTERNAL);
            }
        }
    } else {
        print!("{}", outcome.text);
    }
    if let Some(dir) = &plots.plots {
        match design::write_plots(&outcome.figures, dir, &plots.format) {
            Ok(files) => {
                if !json {
                    println!("\nplots");
                    for f in files {
                        println!("  {}", f.display());
                    }
                }
            }
            Err(f) => return fail(f),
        }
    }
    ExitCode::SUCCESS
}

fn fail(f: design::Failure) -> ExitCode {
    eprintln!("{}", f.message);
    ExitCode::from(f.code)
}
