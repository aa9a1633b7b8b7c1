//! `turbid sweep gather`: one table of chosen results per run against the
//! varied parameters, as CSV (`summary.csv`) and HDF5 in the netCDF-4 layout
//! (`summary.h5`, dimension `run`, every numeric variable with `units`).
//!
//! Results come from the per-run summaries `turbid run` writes. A new result
//! column is one entry in [`RESULTS`] (and its field in `RunSummary`).

use super::{Failure, Param, RunState, Sweep, sample::split_number};
use crate::run_summary::RunSummary;
use netcdf_writer::{NcAttrValue, NcFileBuilder, NcWriteFormat, NcWriteOptions};
use serde_yaml::Value;
use std::path::Path;
use turbid_engine::scenario::units::{self, Kind};

/// One result column of the table.
pub struct ResultColumn {
    /// Variable name in the HDF5 file; the CSV header adds the unit suffix.
    pub name: &'static str,
    /// CSV header.
    pub csv: &'static str,
    /// UDUNITS spelling, as CF asks.
    pub units: &'static str,
    pub long_name: &'static str,
    pub get: fn(&RunSummary) -> Option<f64>,
    /// Only some vessels have it (a thickener's outlets): left out of the
    /// table when no run has a value, so a column sweep's table stays lean.
    pub optional: bool,
}

/// The results tabulated for every run, in column order.
pub const RESULTS: &[ResultColumn] = &[
    ResultColumn {
        name: "final_interface_height",
        csv: "final_interface_height_m",
        units: "m",
        long_name: "height of the clear-liquid/suspension interface at the end of the run",
        get: |s| s.final_interface_height_m,
        optional: false,
    },
    ResultColumn {
        name: "final_bed_height",
        csv: "final_bed_height_m",
        units: "m",
        long_name: "height of the bed surface at the end of the run",
        get: |s| s.final_bed_height_m,
        optional: false,
    },
    ResultColumn {
        name: "clarification_time_90",
        csv: "clarification_time_90_s",
        units: "s",
        long_name: "time until the interface has fallen 90 % of the way from the fill height to the final bed height",
        get: |s| s.clarification_time_90_s,
        optional: false,
    },
    ResultColumn {
        name: "final_underflow_concentration",
        csv: "final_underflow_concentration_kg_m3",
        units: "kg m-3",
        long_name: "thickener: underflow solids concentration at the last record",
        get: |s| s.final_underflow_concentration_kg_m3,
        optional: true,
    },
    ResultColumn {
        name: "final_overflow_concentration",
        csv: "final_overflow_concentration_kg_m3",
        units: "kg m-3",
        long_name: "thickener: overflow solids concentration at the last record",
        get: |s| s.final_overflow_concentration_kg_m3,
        optional: true,
    },
    ResultColumn {
        name: "final_blanket_level",
        csv: "final_blanket_level_m",
        units: "m",
        long_name: "thickener: blanket level above the floor at the last record",
        get: |s| s.final_blanket_level_m,
        optional: true,
    },
    ResultColumn {
        name: "simulated_time",
        csv: "simulated_time_s",
        units: "s",
        long_name: "simulated time of the last record",
        get: |s| s.simulated_time_s,
        optional: false,
    },
];

/// How a varied parameter appears in the table.
enum ParamColumn {
    /// Numbers in SI: the CSV suffix, the CF units and what they are.
    Numeric {
        values: Vec<f64>,
        suffix: &'static str,
        units: &'static str,
        what: &'static str,
    },
    /// Anything else, as written.
    Text(Vec<String>),
}

/// The quantity kinds a varied value may have, with their CF units and CSV suffix.
const KINDS: &[(Kind, &str, &str)] = &[
    (Kind::Length, "m", "_m"),
    (Kind::Density, "kg m-3", "_kg_m3"),
    (Kind::MassConcentration, "kg m-3", "_kg_m3"),
    (Kind::Viscosity, "Pa s", "_Pa_s"),
    (Kind::Temperature, "K", "_K"),
    (Kind::Time, "s", "_s"),
    (Kind::Velocity, "m s-1", "_m_s"),
    (Kind::VolumeFlow, "m3 s-1", "_m3_s"),
    (Kind::MassFlow, "kg s-1", "_kg_s"),
    (Kind::SpecificVolume, "m3 kg-1", "_m3_kg"),
    (Kind::Pressure, "Pa", "_Pa"),
    (Kind::Diffusivity, "m2 s-1", "_m2_s"),
    (Kind::LinearDragCoefficient, "kg s-1", "_kg_s"),
    (Kind::QuadraticDragCoefficient, "kg m-1", "_kg_m"),
];

fn classify(values: &[&Value]) -> ParamColumn {
    let plain: Option<Vec<f64>> = values.iter().map(|v| v.as_f64()).collect();
    if let Some(values) = plain {
        return ParamColumn::Numeric {
            values,
            suffix: "",
            units: "1",
            what: "plain number",
        };
    }
    let texts: Option<Vec<&str>> = values.iter().map(|v| v.as_str()).collect();
    if let Some(texts) = &texts {
        // Loadings as fractions, by volume or by mass (never mixed in one column).
        for (unit, suffix, what) in [
            ("vol%", "_vol_fraction", "solids volume fraction"),
            ("wt%", "_mass_fraction", "solids mass fraction"),
        ] {
            let fr: Option<Vec<f64>> = texts
                .iter()
                .map(|t| match split_number(t) {
                    Some((x, u)) if u.replace(' ', "") == unit => Some(x / 100.0),
                    _ => None,
                })
                .collect();
            if let Some(values) = fr {
                return ParamColumn::Numeric {
                    values,
                    suffix,
                    units: "1",
                    what,
                };
            }
        }
        for &(kind, cf, suffix) in KINDS {
            let si: Option<Vec<f64>> = texts.iter().map(|t| units::parse(t, kind).ok()).collect();
            if let Some(values) = si {
                return ParamColumn::Numeric {
                    values,
                    suffix,
                    units: cf,
                    what: "converted to SI",
                };
            }
        }
    }
    ParamColumn::Text(values.iter().map(|v| text_of(v)).collect())
}

fn text_of(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        other => super::show(other),
    }
}

/// A variable name from a key path: `solids[0].size.single` → `solids_0_size_single`.
fn var_name(p: &Param) -> String {
    let mut s: String = p
        .canonical
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    while s.contains("__") {
        s = s.replace("__", "_");
    }
    let s = s.trim_matches('_').to_string();
    if RESULTS.iter().any(|r| r.name == s) || ["run", "status"].contains(&s.as_str()) {
        format!("{s}_param")
    } else {
        s
    }
}

/// Shortest text that reads back to the same number; empty for none.
fn number(x: Option<f64>) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{v}"),
        _ => String::new(),
    }
}

/// Build and write the tables; `quiet` prints only where they went.
pub fn gather(sweep: &Sweep, quiet: bool) -> Result<(usize, usize), Failure> {
    let n = sweep.runs.len();
    let mut status = Vec::with_capacity(n);
    let mut summaries = Vec::with_capacity(n);
    for r in &sweep.runs {
        match sweep.state(r) {
            RunState::Complete(s) => {
                status.push("complete".to_string());
                summaries.push(Some(*s));
            }
            RunState::Missing => {
                status.push("missing".to_string());
                summaries.push(None);
            }
            RunState::Unfinished(label, _) => {
                status.push(label.to_string());
                summaries.push(None);
            }
        }
    }
    let columns: Vec<ParamColumn> = (0..sweep.params.len())
        .map(|j| classify(&sweep.runs.iter().map(|r| &r.values[j]).collect::<Vec<_>>()))
        .collect();
    let results: Vec<(&ResultColumn, Vec<Option<f64>>)> = RESULTS
        .iter()
        .map(|c| {
            let col: Vec<Option<f64>> = summaries
                .iter()
                .map(|s| s.as_ref().and_then(c.get))
                .collect();
            (c, col)
        })
        .filter(|(c, col)| !c.optional || col.iter().any(Option::is_some))
        .collect();

    let csv_path = sweep.out_dir.join("summary.csv");
    let h5_path = sweep.out_dir.join("summary.h5");
    let csv = csv_text(sweep, &status, &columns, &results)
        .map_err(|e| Failure::internal(format!("error: cannot build the CSV table: {e}")))?;
    crate::atomic::write(&csv_path, csv.as_bytes()).map_err(|e| {
        Failure::internal(format!("error: cannot write {}: {e}", csv_path.display()))
    })?;
    let nc = netcdf(sweep, &status, &columns, &results).map_err(|e| {
        Failure::internal(format!("error: cannot build {}: {e}", h5_path.display()))
    })?;
    let mut bytes = Vec::new();
    nc.write(
        &mut bytes,
        NcWriteOptions {
            format: NcWriteFormat::Nc4,
        },
    )
    .map_err(|e| Failure::internal(format!("error: cannot encode {}: {e}", h5_path.display())))?;
    crate::atomic::write(&h5_path, &bytes).map_err(|e| {
        Failure::internal(format!("error: cannot write {}: {e}", h5_path.display()))
    })?;
    let complete = status.iter().filter(|s| *s == "complete").count();
    if !quiet {
        print!("{csv}");
    }
    println!(
        "sweep {}: {complete} of {n} runs complete; table in {} and {}",
        sweep.file.display(),
        csv_path.display(),
        h5_path.display()
    );
    Ok((complete, n))
}

fn csv_text(
    sweep: &Sweep,
    status: &[String],
    columns: &[ParamColumn],
    results: &[(&ResultColumn, Vec<Option<f64>>)],
) -> Result<String, csv::Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["run".to_string(), "status".to_string()];
    for (p, c) in sweep.params.iter().zip(columns) {
        header.push(match c {
            ParamColumn::Numeric { suffix, .. } => format!("{}{suffix}", p.canonical),
            ParamColumn::Text(_) => p.canonical.clone(),
        });
    }
    header.extend(results.iter().map(|(r, _)| r.csv.to_string()));
    w.write_record(&header)?;
    for (i, r) in sweep.runs.iter().enumerate() {
        let mut row = vec![r.number.to_string(), status[i].clone()];
        for c in columns {
            row.push(match c {
                ParamColumn::Numeric { values, .. } => number(Some(values[i])),
                ParamColumn::Text(t) => t[i].clone(),
            });
        }
        row.extend(results.iter().map(|(_, col)| number(col[i])));
        w.write_record(&row)?;
    }
    let body = String::from_utf8(w.into_inner().map_err(|e| e.into_error())?).unwrap_or_default();
    let title = sweep.title.replace(['\r', '\n'], " ");
    Ok(format!(
        "# sweep: {title}\n# source: {}\n# numbers in SI units (suffix in the column name); loadings as fractions\n{body}",
        turbid_engine::output::source_text()
    ))
}

fn netcdf(
    sweep: &Sweep,
    status: &[String],
    columns: &[ParamColumn],
    results: &[(&ResultColumn, Vec<Option<f64>>)],
) -> netcdf_writer::Result<NcFileBuilder> {
    let text = |s: &str| NcAttrValue::Chars(s.to_string());
    let mut b = NcFileBuilder::new();
    b.add_attribute("Conventions", text(turbid_engine::output::CONVENTIONS))?;
    b.add_attribute("title", text(&sweep.title))?;
    b.add_attribute("source", text(&turbid_engine::output::source_text()))?;
    b.add_attribute(
        "comment",
        text("one row per run of a parameter sweep: the varied parameters and the results of each run"),
    )?;
    b.add_attribute(
        "sweep_yaml",
        NcAttrValue::Strings(vec![sweep.text().to_string()]),
    )?;
    let run = b.add_dimension("run", sweep.runs.len() as u64)?;

    let v = b.add_variable::<i32>("run", &[run])?;
    b.add_variable_attribute(v, "units", text("1"))?;
    b.add_variable_attribute(v, "long_name", text("run number within the sweep"))?;
    let numbers: Vec<i32> = sweep.runs.iter().map(|r| r.number as i32).collect();
    b.write_variable(v, &numbers)?;

    let v = b.add_string_variable("status", &[run])?;
    b.add_variable_attribute(
        v,
        "long_name",
        text("how the run ended: complete, partial, failed, stale or missing"),
    )?;
    b.write_string_variable(v, status)?;

    for (p, c) in sweep.params.iter().zip(columns) {
        let name = var_name(p);
        match c {
            ParamColumn::Numeric {
                values,
                units,
                what,
                ..
            } => {
                let v = b.add_variable::<f64>(&name, &[run])?;
                b.add_variable_attribute(v, "units", text(units))?;
                b.add_variable_attribute(
                    v,
                    "long_name",
                    text(&format!("varied parameter {} ({what})", p.canonical)),
                )?;
                b.add_variable_attribute(v, "key_path", text(&p.canonical))?;
                b.write_variable(v, values)?;
            }
            ParamColumn::Text(t) => {
                let v = b.add_string_variable(&name, &[run])?;
                b.add_variable_attribute(
                    v,
                    "long_name",
                    text(&format!("varied parameter {} (as written)", p.canonical)),
                )?;
                b.add_variable_attribute(v, "key_path", text(&p.canonical))?;
                b.write_string_variable(v, t)?;
            }
        }
    }
    for (c, col) in results {
        let v = b.add_variable::<f64>(c.name, &[run])?;
        b.add_variable_attribute(v, "units", text(c.units))?;
        b.add_variable_attribute(v, "long_name", text(c.long_name))?;
        b.set_variable_fill_value(v, f64::NAN)?;
        let values: Vec<f64> = col.iter().map(|x| x.unwrap_or(f64::NAN)).collect();
        b.write_variable(v, &values)?;
    }
    Ok(b)
}

/// `turbid sweep gather`.
pub fn run(file: &Path) -> Result<u8, Failure> {
    let sweep = Sweep::load(file)?;
    let (complete, n) = gather(&sweep, false)?;
    Ok(if complete == n {
        0
    } else {
        super::EXIT_SOME_FAILED
    })
}
