//! Parameter sweeps: one base scenario, some of its values varied, expanded
//! into numbered runs (each a complete scenario file), run on a local pool or
//! as a Slurm job array, and gathered into one table.
//!
//! The sweep file (YAML, `sweep: 1`):
//!
//! ```yaml
//! sweep: 1
//! title: Loading and bead size          # optional
//! base: glass-beads-column.yaml         # relative to this file
//! output_dir: out/beads                 # optional, relative to this file; default out/<file stem>
//! grid:                                 # exactly one of grid | list | random
//!   initial.loading: ["5 vol%", "10 vol%"]
//!   solids.0.size.single: ["50 µm", "98 µm"]
//! threads: 1                            # threads per run (optional)
//! slurm: { cpus_per_task: 2, memory: "2 GB", time_limit: "1 h", max_running: 8 }
//! ```
//!
//! Layout of the output directory: `runs/run-NNNN.yaml` (the scenario),
//! `runs/run-NNNN.h5`, `.settling.csv`, `.summary.json` (written by
//! `turbid run`), `logs/run-NNNN.log` (local pool), `slurm/` (batch script
//! and its logs), `summary.csv` and `summary.h5` (gathered).

pub mod gather;
pub mod keypath;
pub mod pool;
pub mod sample;
pub mod slurm;

use crate::run_summary::{RunSummary, Status, summary_path, text_hash};
use keypath::KeyPath;
use sample::Distribution;
use serde::Deserialize;
use serde_yaml::{Mapping, Value};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use turbid_engine::scenario::{self, locate::Locations};

/// Exit codes of the sweep commands (beside those of `turbid run`).
pub const EXIT_SOME_FAILED: u8 = 4;

/// A problem that stops a sweep command, with its exit code.
#[derive(Debug)]
pub struct Failure {
    pub code: u8,
    pub message: String,
}

impl Failure {
    pub fn invalid(message: String) -> Failure {
        Failure { code: 2, message }
    }
    pub fn internal(message: String) -> Failure {
        Failure { code: 1, message }
    }
}

/// The sweep file as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SweepSpec {
    /// Version of the sweep file format: 1.
    pub sweep: u32,
    #[serde(default)]
    pub title: Option<String>,
    /// The scenario every run starts from, relative to the sweep file.
    pub base: String,
    /// Where runs and tables go, relative to the sweep file.
    #[serde(default)]
    pub output_dir: Option<String>,
    /// Every combination of the listed values (cartesian product; the last
    /// parameter varies fastest).
    #[serde(default)]
    pub grid: Option<Mapping>,
    /// The n-th values of all lists together (all lists equally long).
    #[serde(default)]
    pub list: Option<Mapping>,
    /// Random samples.
    #[serde(default)]
    pub random: Option<RandomSpec>,
    /// Threads per run.
    #[serde(default)]
    pub threads: Option<usize>,
    /// Defaults for `turbid sweep slurm`.
    #[serde(default)]
    pub slurm: slurm::SlurmSpec,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RandomSpec {
    pub samples: u32,
    pub seed: u64,
    /// Key path → distribution.
    pub parameters: Mapping,
}

/// One varied parameter.
#[derive(Debug, Clone)]
pub struct Param {
    /// As written in the sweep file.
    pub key: String,
    pub path: KeyPath,
    /// As the scenario checks name it (`solids[0].size.single`).
    pub canonical: String,
    /// Key path inside the sweep file, for locating messages.
    sweep_key: String,
}

/// One expanded run.
#[derive(Debug, Clone)]
pub struct Run {
    /// 1-based.
    pub number: usize,
    /// One value per parameter.
    pub values: Vec<Value>,
    pub scenario: PathBuf,
    pub output: PathBuf,
    pub summary: PathBuf,
    pub log: PathBuf,
    /// The scenario text written for this run, and its hash.
    pub text: String,
    pub hash: String,
}

/// A loaded and expanded sweep.
#[derive(Debug)]
pub struct Sweep {
    pub file: PathBuf,
    pub title: String,
    pub spec: SweepSpec,
    pub out_dir: PathBuf,
    pub params: Vec<Param>,
    pub runs: Vec<Run>,
    /// Digits in run file names.
    pub width: usize,
    text: String,
}

/// Largest number of runs one sweep file may expand to.
const MAX_RUNS: usize = 1_000_000;

/// The label of an unfinished run that left a checkpoint: the pool and the
/// Slurm script continue it with `turbid run --resume`.
pub const RESUMABLE: &str = "resumable";

/// What [`Sweep::done`] found for a run.
#[derive(Debug, Clone, PartialEq)]
pub enum RunState {
    /// A complete summary for this exact scenario and the result file it names.
    Complete(Box<RunSummary>),
    /// Partial, failed, stale (the scenario changed since) or broken: a
    /// one-word label for tables and the reason.
    Unfinished(&'static str, String),
    /// No summary yet.
    Missing,
}

impl Sweep {
    /// Read the sweep file and the base scenario, expand the runs (nothing is
    /// written yet).
    pub fn load(file: &Path) -> Result<Sweep, Failure> {
        let text = std::fs::read_to_string(file).map_err(|e| {
            Failure::invalid(format!(
                "error: {}: cannot read the sweep file: {e}",
                file.display()
            ))
        })?;
        let de = serde_yaml::Deserializer::from_str(&text);
        let spec: SweepSpec = serde_yaml::with::singleton_map_recursive::deserialize(de)
            .map_err(|e| Failure::invalid(yaml_error(file, &e)))?;
        let locs = Locations::scan(&text);
        let at = |key: &str| -> String {
            match locs.find(key) {
                Some((l, c)) => format!("{}:{l}:{c}", file.display()),
                None => file.display().to_string(),
            }
        };
        let bad = |key: &str, msg: String| {
            Failure::invalid(format!("error: {}: `{key}`: {msg}", at(key)))
        };
        if spec.sweep != 1 {
            return Err(bad(
                "sweep",
                format!(
                    "sweep format {} is not known to this build (it reads `sweep: 1`)",
                    spec.sweep
                ),
            ));
        }
        let dir = file.parent().filter(|p| !p.as_os_str().is_empty());
        let dir = std::fs::canonicalize(dir.unwrap_or(Path::new("."))).map_err(|e| {
            Failure::invalid(format!(
                "error: {}: cannot resolve its directory: {e}",
                file.display()
            ))
        })?;
        let base_file = dir.join(&spec.base);
        let base_text = std::fs::read_to_string(&base_file).map_err(|e| {
            bad(
                "base",
                format!(
                    "cannot read the base scenario {}: {e}; the path is relative to the sweep file",
                    base_file.display()
                ),
            )
        })?;
        let base: Value = serde_yaml::from_str(&base_text).map_err(|e| {
            Failure::invalid(format!(
                "error: {}: the base scenario is not valid YAML: {e}",
                base_file.display()
            ))
        })?;
        let stem = file
            .file_stem()
            .map_or("sweep".to_string(), |s| s.to_string_lossy().into_owned());
        let out_dir = dir.join(
            spec.output_dir
                .clone()
                .unwrap_or_else(|| format!("out/{stem}")),
        );
        if let Some(0) = spec.threads {
            return Err(bad("threads", "must be at least 1".into()));
        }

        // The varied parameters and their values, run by run.
        let modes = [
            spec.grid.is_some(),
            spec.list.is_some(),
            spec.random.is_some(),
        ];
        if modes.iter().filter(|&&m| m).count() != 1 {
            return Err(Failure::invalid(format!(
                "error: {}: give exactly one of `grid` (every combination), `list` (values taken together) or `random` (samples)",
                file.display()
            )));
        }
        let param = |section: &str, k: &Value| -> Result<Param, Failure> {
            let key = k.as_str().map(str::to_string).ok_or_else(|| {
                bad(
                    section,
                    "parameter names must be key paths such as `initial.loading`".into(),
                )
            })?;
            let sweep_key = format!("{section}.{key}");
            let path = KeyPath::parse(&key).map_err(|m| bad(&sweep_key, m))?;
            // Check the path reaches into the base scenario.
            let mut probe = base.clone();
            path.set(&mut probe, Value::Null)
                .map_err(|m| bad(&sweep_key, m))?;
            Ok(Param {
                canonical: path.canonical(&base),
                key,
                path,
                sweep_key,
            })
        };
        let mut params = Vec::new();
        let mut table: Vec<Vec<Value>> = Vec::new();
        let mut items: Vec<Vec<String>> = Vec::new(); // sweep-file key of each value, for messages
        if let Some(grid) = &spec.grid {
            let mut lists = Vec::new();
            for (k, v) in grid {
                let p = param("grid", k)?;
                let list = match v {
                    Value::Sequence(s) if !s.is_empty() => s.clone(),
                    _ => {
                        return Err(bad(
                            &p.sweep_key,
                            "give a non-empty list of values, e.g. [\"5 vol%\", \"10 vol%\"]"
                                .into(),
                        ));
                    }
                };
                lists.push(list);
                params.push(p);
            }
            let total = lists
                .iter()
                .try_fold(1usize, |n, l| n.checked_mul(l.len()))
                .filter(|&n| n <= MAX_RUNS)
                .ok_or_else(|| {
                    bad(
                        "grid",
                        format!("the grid has more than {MAX_RUNS} combinations"),
                    )
                })?;
            for r in 0..total {
                // Last parameter fastest, like nested loops in file order.
                let mut rest = r;
                let mut idx = vec![0; lists.len()];
                for (j, l) in lists.iter().enumerate().rev() {
                    idx[j] = rest % l.len();
                    rest /= l.len();
                }
                table.push(idx.iter().zip(&lists).map(|(&i, l)| l[i].clone()).collect());
                items.push(
                    idx.iter()
                        .zip(&params)
                        .map(|(i, p)| format!("{}[{i}]", p.sweep_key))
                        .collect(),
                );
            }
        } else if let Some(list) = &spec.list {
            let mut lists: Vec<Vec<Value>> = Vec::new();
            for (k, v) in list {
                let p = param("list", k)?;
                match v {
                    Value::Sequence(s) if !s.is_empty() => lists.push(s.clone()),
                    _ => {
                        return Err(bad(
                            &p.sweep_key,
                            "give a non-empty list of values, e.g. [\"5 vol%\", \"10 vol%\"]"
                                .into(),
                        ));
                    }
                }
                params.push(p);
            }
            let n = lists[0].len();
            if let Some((j, l)) = lists.iter().enumerate().find(|(_, l)| l.len() != n) {
                return Err(bad(
                    &params[j].sweep_key,
                    format!(
                        "has {} values but `{}` has {n}: lists are taken together, so all must be equally long (use `grid` for every combination)",
                        l.len(),
                        params[0].key
                    ),
                ));
            }
            for r in 0..n {
                table.push(lists.iter().map(|l| l[r].clone()).collect());
                items.push(
                    params
                        .iter()
                        .map(|p| format!("{}[{r}]", p.sweep_key))
                        .collect(),
                );
            }
        } else if let Some(random) = &spec.random {
            if random.samples == 0 || random.samples as usize > MAX_RUNS {
                return Err(bad(
                    "random.samples",
                    format!("must be between 1 and {MAX_RUNS}"),
                ));
            }
            let mut dists = Vec::new();
            for (k, v) in &random.parameters {
                let p = param("random.parameters", k)?;
                let d: Distribution =
                    serde_yaml::with::singleton_map_recursive::deserialize(v.clone()).map_err(
                        |e| {
                            bad(
                                &p.sweep_key,
                                format!(
                                    "{e}; write e.g. `{{ uniform: {{ low: \"5 vol%\", high: \"20 vol%\" }} }}`, `{{ normal: {{ mean: …, sd: … }} }}` or `{{ log_normal: {{ median: …, geometric_sd: 1.5 }} }}`"
                                ),
                            )
                        },
                    )?;
                let unit = d.check().map_err(|m| bad(&p.sweep_key, m))?;
                // A whole number in the base (a seed, a parcel count) stays whole.
                let whole = unit.is_none()
                    && p.path
                        .get(&base)
                        .is_some_and(|v| v.as_u64().is_some() || v.as_i64().is_some());
                dists.push((d, unit, whole));
                params.push(p);
            }
            if params.is_empty() {
                return Err(bad("random.parameters", "lists no parameters".into()));
            }
            for k in 0..u64::from(random.samples) {
                let row = dists
                    .iter()
                    .zip(&params)
                    .map(|((d, unit, whole), p)| {
                        let x = d.sample(random.seed, &p.key, k);
                        match unit {
                            Some(u) => Value::String(format!("{x} {u}")),
                            None if *whole => Value::from(x.round() as i64),
                            None => Value::from(x),
                        }
                    })
                    .collect();
                table.push(row);
                items.push(params.iter().map(|p| p.sweep_key.clone()).collect());
            }
        }
        if params.is_empty() {
            return Err(Failure::invalid(format!(
                "error: {}: the sweep varies no parameter",
                file.display()
            )));
        }

        let n = table.len();
        let width = n.to_string().len().max(4);
        let runs_dir = out_dir.join("runs");
        let logs_dir = out_dir.join("logs");
        let file_name = file
            .file_name()
            .map_or(String::new(), |s| s.to_string_lossy().into_owned());
        let mut runs = Vec::with_capacity(n);
        let mut problems = Vec::new();
        type Shared = ((String, String), Vec<usize>, scenario::Problem);
        let mut shared: Vec<Shared> = Vec::new();
        for (i, values) in table.into_iter().enumerate() {
            let number = i + 1;
            let id = format!("run-{number:0width$}");
            let scenario = runs_dir.join(format!("{id}.yaml"));
            let output = runs_dir.join(format!("{id}.h5"));
            let mut tree = base.clone();
            for (p, v) in params.iter().zip(&values) {
                p.path
                    .set(&mut tree, v.clone())
                    .map_err(|m| bad(&p.sweep_key, m))?;
            }
            KeyPath::parse("output.file")
                .expect("a valid path")
                .set(&mut tree, Value::String(output.display().to_string()))
                .map_err(|m| bad("base", format!("the base scenario: {m}")))?;
            let assignments = assignments(&params, &values);
            let body = serde_yaml::to_string(&tree)
                .map_err(|e| Failure::internal(format!("cannot write run {number}: {e}")))?;
            let text = format!(
                "# Run {number} of {n} of the sweep {file_name} (base scenario: {}), written by `turbid sweep`.\n\
                 # Varied: {assignments}.\n\
                 # Repeat this run alone with `turbid run` on this file; change the sweep, not this file.\n{body}",
                spec.base
            );
            // Every run is checked before anything runs.
            if let Err(e) = scenario::parse_str(&text, &scenario) {
                for p in e.problems {
                    let owner = params.iter().position(|q| {
                        p.key == q.canonical
                            || p.key.starts_with(&format!("{}.", q.canonical))
                            || p.key.starts_with(&format!("{}[", q.canonical))
                    });
                    let mut m = match owner {
                        Some(j) => format!(
                            "error: {}: run {number}, `{}` = {}: {}",
                            at(&items[i][j]),
                            params[j].key,
                            show(&values[j]),
                            p.message
                        ),
                        None => {
                            // Not the doing of a varied value: the same problem
                            // usually sits in the base scenario; reported once below.
                            let sig = (p.key.clone(), p.message.clone());
                            match shared.iter_mut().find(|(s, ..)| *s == sig) {
                                Some((_, runs, _)) => runs.push(number),
                                None => shared.push((sig, vec![number], p.clone())),
                            }
                            continue;
                        }
                    };
                    if let Some(h) = &p.hint {
                        let _ = write!(m, "\n  hint: {h}");
                    }
                    problems.push(m);
                }
            }
            let hash = text_hash(&text);
            runs.push(Run {
                number,
                values,
                summary: summary_path(&output),
                log: logs_dir.join(format!("{id}.log")),
                scenario,
                output,
                text,
                hash,
            });
        }
        let base_locs = Locations::scan(&base_text);
        for ((key, message), in_runs, p) in shared {
            let keyed = if key.is_empty() {
                String::new()
            } else {
                format!("`{key}`: ")
            };
            let mut m = if in_runs.len() == n && !key.is_empty() {
                // In every run: point at the base scenario.
                let place = match base_locs.find(&key) {
                    Some((l, c)) => format!("{}:{l}:{c}", base_file.display()),
                    None => base_file.display().to_string(),
                };
                format!(
                    "error: {place}: {keyed}{message} (in the base scenario of {}, so in every run)",
                    file.display()
                )
            } else {
                let first = &runs[in_runs[0] - 1];
                let place = match (p.line, p.column) {
                    (Some(l), Some(c)) => format!("{}:{l}:{c}", first.scenario.display()),
                    _ => first.scenario.display().to_string(),
                };
                let list: Vec<String> = in_runs.iter().take(10).map(|r| r.to_string()).collect();
                let more = if in_runs.len() > 10 { ", …" } else { "" };
                let which = if in_runs.len() == 1 {
                    format!(
                        "run {} ({})",
                        in_runs[0],
                        assignments(&params, &first.values)
                    )
                } else {
                    format!("runs {}{more} ({} of {n})", list.join(", "), in_runs.len())
                };
                format!(
                    "error: {}: {which}: {place}: {keyed}{message}",
                    file.display()
                )
            };
            if let Some(h) = &p.hint {
                let _ = write!(m, "\n  hint: {h}");
            }
            problems.push(m);
        }
        if !problems.is_empty() {
            // Written all the same, so the runs that were refused can be read.
            let written = runs
                .iter()
                .all(|r| crate::atomic::write_if_changed(&r.scenario, r.text.as_bytes()).is_ok());
            let problems_count = problems.len();
            const SHOWN: usize = 20;
            let mut m = problems
                .iter()
                .take(SHOWN)
                .cloned()
                .collect::<Vec<_>>()
                .join("\n");
            if problems.len() > SHOWN {
                let _ = write!(m, "\n… and {} more problems", problems.len() - SHOWN);
            }
            let _ = write!(
                m,
                "\n{}: {problems_count} problem{} in the expanded runs; nothing was run",
                file.display(),
                if problems_count == 1 { "" } else { "s" }
            );
            if written {
                let _ = write!(
                    m,
                    " (the expanded runs are in {} for a look)",
                    out_dir.join("runs").display()
                );
            }
            return Err(Failure::invalid(m));
        }
        Ok(Sweep {
            file: file.to_path_buf(),
            title: spec.title.clone().unwrap_or(stem),
            spec,
            out_dir,
            params,
            runs,
            width,
            text,
        })
    }

    /// Write the run scenarios (unchanged files are left alone).
    pub fn write_runs(&self) -> Result<(), Failure> {
        for r in &self.runs {
            crate::atomic::write_if_changed(&r.scenario, r.text.as_bytes()).map_err(|e| {
                Failure::internal(format!("error: cannot write {}: {e}", r.scenario.display()))
            })?;
        }
        Ok(())
    }

    /// Whether `run` has a complete, valid output for its current scenario.
    pub fn state(&self, run: &Run) -> RunState {
        let s = match RunSummary::read(&run.summary) {
            Ok(s) => s,
            Err(_) if !run.summary.exists() => return RunState::Missing,
            Err(e) => return RunState::Unfinished("broken", format!("unreadable summary: {e}")),
        };
        if s.scenario_hash != run.hash {
            return RunState::Unfinished(
                "stale",
                "its summary is for another scenario (the sweep changed since)".into(),
            );
        }
        match s.status {
            Status::Complete => {
                let size = std::fs::metadata(&run.output).ok().map(|m| m.len());
                if size.is_some() && size == s.output_bytes {
                    RunState::Complete(Box::new(s))
                } else {
                    RunState::Unfinished(
                        "broken",
                        format!(
                            "the result file {} is missing or not the one the summary describes",
                            run.output.display()
                        ),
                    )
                }
            }
            Status::Partial => match s.checkpoint.as_deref().map(Path::new) {
                Some(c) if c.exists() => RunState::Unfinished(
                    RESUMABLE,
                    format!(
                        "stopped at t = {:.1} s with a checkpoint; continuing from it",
                        s.simulated_time_s.unwrap_or(0.0)
                    ),
                ),
                _ => RunState::Unfinished("partial", "interrupted before its end time".into()),
            },
            Status::Failed => RunState::Unfinished(
                "failed",
                format!(
                    "failed: {}",
                    s.error.as_deref().unwrap_or("no reason recorded")
                ),
            ),
        }
    }

    /// `initial.loading = "10 vol%", …` for run `run`.
    pub fn assignments(&self, run: &Run) -> String {
        assignments(&self.params, &run.values)
    }

    /// Threads per run: the flag, else the sweep file, else 1.
    pub fn threads(&self, flag: Option<usize>) -> usize {
        flag.or(self.spec.threads).unwrap_or(1).max(1)
    }

    /// The sweep file's text (for the record).
    pub fn text(&self) -> &str {
        &self.text
    }
}

fn assignments(params: &[Param], values: &[Value]) -> String {
    params
        .iter()
        .zip(values)
        .map(|(p, v)| format!("{} = {}", p.key, show(v)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A value on one line: strings quoted, mappings as compact JSON.
pub fn show(v: &Value) -> String {
    match v {
        Value::String(s) => format!("\"{s}\""),
        Value::Number(n) => n.to_string(),
        Value::Bool(b) => b.to_string(),
        Value::Null => "null".into(),
        other => serde_json::to_string(other).unwrap_or_else(|_| "?".into()),
    }
}

/// A serde_yaml error located in the sweep file.
fn yaml_error(file: &Path, e: &serde_yaml::Error) -> String {
    let mut text = e.to_string();
    if let Some(i) = text.rfind(" at line ") {
        text.truncate(i);
    }
    match e.location() {
        Some(l) => format!(
            "error: {}:{}:{}: {text}",
            file.display(),
            l.line(),
            l.column()
        ),
        None => format!("error: {}: {text}", file.display()),
    }
}

/// `turbid sweep expand`: write and check every run, print the table.
pub fn expand(file: &Path) -> Result<(), Failure> {
    let sweep = Sweep::load(file)?;
    sweep.write_runs()?;
    println!(
        "{}: {} runs, all valid, written to {}",
        sweep.file.display(),
        sweep.runs.len(),
        sweep.out_dir.join("runs").display()
    );
    for r in &sweep.runs {
        println!(
            "  run {:>w$}  {}",
            r.number,
            sweep.assignments(r),
            w = sweep.width
        );
    }
    Ok(())
}
