//! The machine-readable summary `turbid run` writes beside its result file
//! (`<stem>.summary.json`): how the run ended and its headline results. Sweeps
//! read it to skip finished runs and to gather their results into one table.
//!
//! A plain serde struct: add a field (with `#[serde(default)]`, so older
//! summaries still read) when an engine gains a result worth tabulating, and a
//! column in `sweep::gather::RESULTS`.

use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};
use turbid_engine::record::{RunRecord, RunStatus};

/// Version of this file's layout.
pub const SUMMARY_FORMAT: u32 = 1;

/// Share of the clear-liquid zone's final extent that defines the
/// clarification time (see [`clarification_time`]).
pub const CLARIFIED_SHARE: f64 = 0.9;

/// How a run ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// Reached the end time; the outputs are complete.
    Complete,
    /// Stopped early by SIGINT/SIGTERM; the frames written are valid (and
    /// `checkpoint` names the file to resume from, if one was written).
    Partial,
    /// The run failed (its `error` says why); outputs may be missing.
    Failed,
}

/// What one run produced. Lengths in m, times in s.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct RunSummary {
    pub summary_format: u32,
    /// `turbid <version>` that wrote it.
    pub source: String,
    pub status: Status,
    /// Why the run failed (status `failed`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
    /// The scenario file as given on the command line.
    pub scenario: String,
    /// FNV-1a 64-bit hash of the scenario text (hex): a sweep redoes a run
    /// whose scenario changed since.
    pub scenario_hash: String,
    /// Result file (HDF5) and its size in bytes, when written.
    pub output: Option<String>,
    pub output_bytes: Option<u64>,
    pub settling_csv: Option<String>,
    /// `particle` or `continuum`.
    pub engine: String,
    /// Parcels or cells.
    pub resolution: u64,
    pub seed: u64,
    pub threads: usize,
    pub end_time_s: f64,
    /// Time of the last record (the end time unless the run stopped early).
    pub simulated_time_s: Option<f64>,
    pub wall_time_s: f64,
    /// Initial (fill) height of the suspension.
    pub fill_height_m: Option<f64>,
    pub final_interface_height_m: Option<f64>,
    pub final_bed_height_m: Option<f64>,
    /// Time to 90 % clarification, see [`clarification_time`]; absent when not
    /// reached within the run or the run did not complete.
    pub clarification_time_90_s: Option<f64>,
    /// Batch column: largest relative change of the solids volume over all
    /// records. Thickener: worst relative residual of fed − drawn off −
    /// accumulated (`OutletSeries::worst_residual`).
    pub solids_balance: Option<f64>,
    /// Thickener only: underflow and overflow solids concentration and the
    /// blanket level at the last record.
    pub final_underflow_concentration_kg_m3: Option<f64>,
    pub final_overflow_concentration_kg_m3: Option<f64>,
    pub final_blanket_level_m: Option<f64>,
    /// Checkpoint written when the run was stopped (status `partial`):
    /// `turbid run --resume` continues from it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub checkpoint: Option<String>,
}

impl Default for RunSummary {
    fn default() -> Self {
        RunSummary {
            summary_format: SUMMARY_FORMAT,
            source: turbid_engine::output::source_text(),
            status: Status::Failed,
            error: None,
            scenario: String::new(),
            scenario_hash: String::new(),
            output: None,
            output_bytes: None,
            settling_csv: None,
            engine: String::new(),
            resolution: 0,
            seed: 0,
            threads: 0,
            end_time_s: 0.0,
            simulated_time_s: None,
            wall_time_s: 0.0,
            fill_height_m: None,
            final_interface_height_m: None,
            final_bed_height_m: None,
            clarification_time_90_s: None,
            solids_balance: None,
            final_underflow_concentration_kg_m3: None,
            final_overflow_concentration_kg_m3: None,
            final_blanket_level_m: None,
            checkpoint: None,
        }
    }
}

impl RunSummary {
    /// Summary of a run whose result files were written.
    pub fn from_record(record: &RunRecord, scenario: &Path, text: &str) -> RunSummary {
        let last = record.frames.last();
        let first = record.frames.first();
        let fill = record.layout.z_edges.last().copied();
        let status = match record.status {
            RunStatus::Complete => Status::Complete,
            RunStatus::Partial => Status::Partial,
        };
        // A thickener's inventory changes by design: its balance is the ledger's.
        let balance = match &record.outlets {
            Some(o) => Some(o.worst_residual()),
            None => first.map(|f0| {
                record
                    .frames
                    .iter()
                    .map(|f| ((f.solids_volume - f0.solids_volume) / f0.solids_volume).abs())
                    .fold(0.0, f64::max)
            }),
        };
        let outlet = record.outlets.as_ref().and_then(|o| o.samples.last());
        let t90 = match (status, fill) {
            (Status::Complete, Some(h0)) => clarification_time(
                &record.frames.iter().map(|f| f.time).collect::<Vec<_>>(),
                &record
                    .frames
                    .iter()
                    .map(|f| f.interface_height)
                    .collect::<Vec<_>>(),
                h0,
                last.map_or(0.0, |f| f.bed_height),
            ),
            _ => None,
        };
        RunSummary {
            status,
            scenario: scenario.display().to_string(),
            scenario_hash: text_hash(text),
            engine: record.engine.clone(),
            resolution: record.resolution,
            seed: record.seed,
            simulated_time_s: last.map(|f| f.time),
            fill_height_m: fill,
            final_interface_height_m: last.map(|f| f.interface_height),
            final_bed_height_m: last.map(|f| f.bed_height),
            clarification_time_90_s: t90,
            solids_balance: balance,
            final_underflow_concentration_kg_m3: outlet.map(|o| o.underflow_concentration),
            final_overflow_concentration_kg_m3: outlet.map(|o| o.overflow_concentration),
            final_blanket_level_m: outlet.map(|o| o.blanket_level),
            ..RunSummary::default()
        }
    }

    /// Summary of a run that failed before or while writing its results.
    pub fn failed(scenario: &Path, text: &str, error: String) -> RunSummary {
        RunSummary {
            status: Status::Failed,
            error: Some(error),
            scenario: scenario.display().to_string(),
            scenario_hash: text_hash(text),
            ..RunSummary::default()
        }
    }

    pub fn write(&self, path: &Path) -> std::io::Result<()> {
        let mut text = serde_json::to_string_pretty(self).map_err(std::io::Error::other)?;
        text.push('\n');
        crate::atomic::write(path, text.as_bytes())
    }

    pub fn read(path: &Path) -> Result<RunSummary, String> {
        let text = std::fs::read_to_string(path).map_err(|e| format!("{}: {e}", path.display()))?;
        serde_json::from_str(&text).map_err(|e| format!("{}: {e}", path.display()))
    }
}

/// `<stem>.summary.json` beside the result file (`out/run.h5` → `out/run.summary.json`).
pub fn summary_path(h5_path: &Path) -> PathBuf {
    let stem = h5_path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".to_owned());
    h5_path.with_file_name(format!("{stem}.summary.json"))
}

/// FNV-1a, 64 bits, as 16 hex digits: a stable fingerprint of a text (not a
/// security hash; it only tells whether a scenario changed).
pub fn text_hash(text: &str) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in text.bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

/// Time to 90 % clarification: the first time at which the clear-liquid
/// zone above the interface has reached 90 % of its final extent, that is
/// when the interface has fallen to `bed + 0.1 (fill − bed)`, with `fill` the
/// initial suspension height and `bed` the bed height at the end of the run
/// (where the interface ends when all solids have settled). Linear
/// interpolation between records; `None` if the interface never gets there
/// within the records, or there was nothing to clarify (`fill ≤ bed`).
pub fn clarification_time(times: &[f64], interface: &[f64], fill: f64, bed: f64) -> Option<f64> {
    if fill <= bed || times.len() != interface.len() || times.is_empty() {
        return None;
    }
    let target = bed + (1.0 - CLARIFIED_SHARE) * (fill - bed);
    let i = interface.iter().position(|&h| h <= target)?;
    if i == 0 {
        return Some(times[0]);
    }
    let (t0, t1) = (times[i - 1], times[i]);
    let (h0, h1) = (interface[i - 1], interface[i]);
    Some(t0 + (t1 - t0) * (h0 - target) / (h0 - h1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clarification_time_of_a_linear_descent() {
        // Exact: an interface falling at 1 mm/s from 1.0 m onto a 0.1 m bed,
        // recorded every 100 s, reaches 0.1 + 0.1 × 0.9 = 0.19 m at
        // t = (1.0 − 0.19) / 0.001 = 810 s, between records at 800 and 900 s.
        let times: Vec<f64> = (0..=10).map(|k| 100.0 * k as f64).collect();
        let h: Vec<f64> = times.iter().map(|t| (1.0 - 0.001 * t).max(0.1)).collect();
        let t90 = clarification_time(&times, &h, 1.0, 0.1).unwrap();
        assert!((t90 - 810.0).abs() < 1e-9, "{t90}");
        // Never reached within the records.
        assert_eq!(clarification_time(&times[..5], &h[..5], 1.0, 0.1), None);
        // Nothing to clarify.
        assert_eq!(clarification_time(&times, &h, 0.1, 0.1), None);
    }

    #[test]
    fn hash_is_fnv1a() {
        // FNV-1a 64 test vectors from the algorithm's published description
        // (Fowler, Noll, Vo; values from memory): "" → cbf29ce484222325,
        // "a" → af63dc4c8601ec8c.
        assert_eq!(text_hash(""), "cbf29ce484222325");
        assert_eq!(text_hash("a"), "af63dc4c8601ec8c");
    }

    #[test]
    fn old_summaries_without_new_fields_still_read() {
        let s: RunSummary = serde_json::from_str(r#"{"status": "complete"}"#).unwrap();
        assert_eq!(s.status, Status::Complete);
        assert_eq!(s.final_bed_height_m, None);
    }
}
