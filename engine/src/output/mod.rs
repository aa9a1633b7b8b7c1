//! Result files: a NetCDF-4 file (HDF5 underneath) following the CF
//! conventions, and a small CSV with the settling curve beside it.
//!
//! Both are written atomically: the bytes go to `<name>.tmp-<pid>-<n>` in the
//! target directory, are flushed to disk, and only then renamed over the
//! target. A reader never sees a half-written file at the target path, and a
//! failed write leaves any previous file there untouched.
//!
//! # NetCDF layout
//!
//! Global attributes:
//!
//! | name | value |
//! |---|---|
//! | `Conventions` | `"CF-1.10"` |
//! | `title` | the scenario title |
//! | `source` | `"turbid <version>"` |
//! | `history` | `"<UTC time, ISO 8601>: written by turbid <version> (<engine> engine, run <status>)"` |
//! | `scenario_yaml` | the scenario text exactly as given (a one-element string attribute, so any length fits) |
//! | `seed` | seed of the random streams (unsigned 64-bit) |
//! | `engine` | engine that produced the run, e.g. `"particle"` |
//! | `resolution` | parcels (particle engine) or cells (continuum engine), unsigned 64-bit |
//! | `run_status` | `"complete"`, or `"partial"` when the run stopped early (the frames written are valid) |
//!
//! Dimensions: `time` (unlimited, one entry per recorded frame), `z` (height
//! slabs), `size_class`, `species`, `bounds` (= 2).
//!
//! | variable | dimensions | units | meaning |
//! |---|---|---|---|
//! | `time` | `time` | `s` | simulated time since the start of the run |
//! | `z` | `z` | `m` | height of the slab centre above the vessel floor; `positive = "up"`, `axis = "Z"`, `bounds = "z_bounds"` |
//! | `size_class` | `size_class` | `m` | representative particle diameter of the class |
//! | `volume_fraction` | `time, z` | `1` | solids volume fraction, all classes |
//! | `volume_fraction_by_class` | `time, size_class, z` | `1` | solids volume fraction of each class |
//! | `mass_concentration` | `time, z` | `kg m-3` | solids mass per volume of suspension: Σ over classes of volume fraction × species density |
//! | `interface_height` | `time` | `m` | height of the clear-liquid/suspension interface |
//! | `bed_height` | `time` | `m` | height of the bed (sediment) surface |
//! | `solids_volume` | `time` | `m3` | solids volume in the vessel |
//! | `z_bounds` | `z, bounds` | `m` | lower and upper boundary of each slab |
//! | `class_lower_diameter` | `size_class` | `m` | lower diameter bound of the class |
//! | `class_upper_diameter` | `size_class` | `m` | upper diameter bound of the class |
//! | `class_terminal_velocity` | `size_class` | `m s-1` | single-particle terminal velocity in the clear liquid, positive downward |
//! | `class_species` | `size_class` | `1` | index of the class's species along `species` (32-bit integer) |
//! | `species_name` | `species` | — | species name (string; CF asks no `units` of text) |
//! | `species_density` | `species` | `kg m-3` | solid density of the species |
//! | `vessel_area` | scalar | `m2` | horizontal cross-section area of the vessel |
//!
//! A **continuous thickener** (`RunRecord::outlets` present) adds the global
//! attribute `vessel = "thickener"` and these variables (a batch column's
//! file is unchanged):
//!
//! | variable | dimensions | units | meaning |
//! |---|---|---|---|
//! | `feed_flow`, `underflow_flow`, `overflow_flow` | `time` | `m3 s-1` | volume flows at the record time |
//! | `feed_solids_concentration` | `time` | `kg m-3` | solids in the feed |
//! | `underflow_solids_concentration`, `overflow_solids_concentration` | `time` | `kg m-3` | solids leaving through each outlet |
//! | `underflow_solids_concentration_by_class`, `overflow_solids_concentration_by_class` | `time, size_class` | `kg m-3` | the same per size class |
//! | `feed_solids_mass_flow`, `underflow_solids_mass_flow`, `overflow_solids_mass_flow` | `time` | `kg s-1` | flow × concentration |
//! | `blanket_level` | `time` | `m` | blanket (sludge bed) level above the floor (rule in the `comment` attribute) |
//! | `cumulative_solids_in`, `cumulative_solids_underflow`, `cumulative_solids_overflow` | `time` | `kg` | solids fed / drawn off since the start |
//! | `solids_inventory` | `time` | `kg` | solids in the vessel |
//! | `initial_solids_inventory` | `time` | `kg` | solids in the vessel at the start (constant) |
//! | `solids_balance_residual` | `time` | `kg` | in − out − (inventory − initial inventory) |
//! | `feed_level`, `overflow_level` | scalar | `m` | feed level and overflow lip above the floor |
//!
//! `time`, `z` and `size_class` are coordinate variables (HDF5 dimension
//! scales), so xarray and netCDF tools show named dimensions and coordinates.
//! `species` and `bounds` have no coordinate variable.
//! The 2-D and 3-D variables are chunked (whole profiles, several frames per
//! chunk) and compressed with deflate level 4 after byte shuffling; the time
//! series are chunked along the unlimited `time` dimension.
//!
//! No variable carries a CF `standard_name`: the standard names for
//! concentrations and heights are defined for sea water and the Earth's
//! surface, not for a liquid in a vessel, and a bare elapsed time is not a CF
//! time coordinate (that needs `units = "<unit> since <date>"`).
//!
//! `time` has `units = "s"` on purpose. xarray decodes a variable whose units
//! are exactly one of `days`, `hours`, `minutes`, `seconds`, … into
//! `timedelta64`, and one whose units contain `since` into dates; `s` is the
//! UDUNITS/CF symbol for the second and triggers neither, so `time` opens as
//! plain float seconds.
//!
//! # Settling-curve CSV
//!
//! [`settling_csv_path`] gives `<stem>.settling.csv` beside the NetCDF file.
//! It starts with comment lines `# title: …`, `# source: turbid <version>`,
//! `# run_status: …`, then the header
//! `time_s,interface_height_m,bed_height_m,solids_volume_m3` and one row per
//! frame.
//!
//! # Outlets CSV (thickeners)
//!
//! [`outlets_csv_path`] gives `<stem>.outlets.csv`: the same comment lines,
//! then [`OUTLETS_CSV_HEADER`] and one row per frame, in SI units named in
//! the header.

use std::fmt::Write as _;
use std::fs::{self, File, OpenOptions};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::time::{SystemTime, UNIX_EPOCH};

use netcdf_writer::{NcAttrValue, NcFileBuilder, NcWriteFormat, NcWriteOptions, VariableId};

use crate::record::{Frame, OutletSample, RunRecord};

/// The CF version the NetCDF layout follows.
pub const CONVENTIONS: &str = "CF-1.10";

/// Header of the settling-curve CSV (after the `#` comment lines).
pub const SETTLING_CSV_HEADER: &str = "time_s,interface_height_m,bed_height_m,solids_volume_m3";

/// Header of the outlets CSV of a thickener run.
pub const OUTLETS_CSV_HEADER: &str = "time_s,feed_flow_m3_s,underflow_flow_m3_s,overflow_flow_m3_s,\
feed_solids_kg_m3,underflow_solids_kg_m3,overflow_solids_kg_m3,\
feed_solids_rate_kg_s,underflow_solids_rate_kg_s,overflow_solids_rate_kg_s,\
blanket_level_m,solids_in_kg,solids_out_underflow_kg,solids_out_overflow_kg,\
solids_inventory_kg,balance_residual_kg";

/// Deflate level of the profile variables (after byte shuffling): a middle
/// setting; 200 frames × 12 classes × 200 slabs write in about 0.1 s.
const DEFLATE_LEVEL: u8 = 4;

/// Aim for chunks of about this many bytes: a whole number of frames, each
/// with whole profiles, so reading one profile or one short time window
/// decompresses little.
const CHUNK_TARGET_BYTES: usize = 256 * 1024;

/// Why a result file could not be written. Each variant names the target path.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    #[error("cannot write {}: {source}", path.display())]
    Io { path: PathBuf, source: io::Error },
    #[error("cannot write {}: NetCDF encoding failed: {source}", path.display())]
    Encode {
        path: PathBuf,
        source: netcdf_writer::Error,
    },
    #[error("cannot write {}: the run record is inconsistent: {reason}", path.display())]
    InvalidRecord { path: PathBuf, reason: String },
    #[error("cannot write {}: the path does not name a file", path.display())]
    NotAFilePath { path: PathBuf },
}

/// `"turbid <version>"`, as written in the `source` attribute and CSV header.
pub fn source_text() -> String {
    format!("turbid {}", env!("CARGO_PKG_VERSION"))
}

/// Write `record` as a NetCDF-4 file at `path` (layout in the module docs),
/// atomically, creating parent directories as needed.
pub fn write_netcdf(record: &RunRecord, path: &Path) -> Result<(), OutputError> {
    check_record(record).map_err(|reason| OutputError::InvalidRecord {
        path: path.to_path_buf(),
        reason,
    })?;
    let builder = build_netcdf(record, &utc_timestamp(SystemTime::now()))
        .map_err(|source| encode_error(path, source))?;
    write_atomically(path, |w| {
        builder
            .write(
                w,
                NcWriteOptions {
                    format: NcWriteFormat::Nc4,
                },
            )
            .map(drop)
            .map_err(|source| encode_error(path, source))
    })
}

/// Write the settling curve (interface height, bed height and solids volume
/// over time) as CSV at `path`, atomically.
pub fn write_settling_csv(record: &RunRecord, path: &Path) -> Result<(), OutputError> {
    let text = settling_csv_text(record);
    write_atomically(path, |w| {
        w.write_all(text.as_bytes())
            .map_err(|source| OutputError::Io {
                path: path.to_path_buf(),
                source,
            })
    })
}

/// Write the outlets of a thickener run as CSV at `path`, atomically (does
/// nothing for a batch record).
pub fn write_outlets_csv(record: &RunRecord, path: &Path) -> Result<(), OutputError> {
    let Some(text) = outlets_csv_text(record) else {
        return Ok(());
    };
    write_atomically(path, |w| {
        w.write_all(text.as_bytes())
            .map_err(|source| OutputError::Io {
                path: path.to_path_buf(),
                source,
            })
    })
}

/// `<stem>.outlets.csv` beside the NetCDF file.
pub fn outlets_csv_path(h5_path: &Path) -> PathBuf {
    let stem = h5_path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".to_owned());
    h5_path.with_file_name(format!("{stem}.outlets.csv"))
}

/// Where the settling-curve CSV goes for a NetCDF file: `<stem>.settling.csv`
/// in the same directory (`out/run.nc` → `out/run.settling.csv`).
pub fn settling_csv_path(h5_path: &Path) -> PathBuf {
    let stem = h5_path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".to_owned());
    h5_path.with_file_name(format!("{stem}.settling.csv"))
}

fn encode_error(path: &Path, source: netcdf_writer::Error) -> OutputError {
    OutputError::Encode {
        path: path.to_path_buf(),
        source,
    }
}

/// Check the array lengths the layout relies on, so a bad record gives a
/// clear error rather than a confusing one from the encoder.
fn check_record(record: &RunRecord) -> Result<(), String> {
    let l = &record.layout;
    let (nz, nc, ns) = (l.nz(), l.nclasses(), l.species_name.len());
    if nz == 0 || nc == 0 || ns == 0 {
        return Err(format!(
            "needs at least one slab, size class and species (got {nz}, {nc}, {ns})"
        ));
    }
    let lengths = [
        ("z_edges", l.z_edges.len(), nz + 1),
        ("class_lower", l.class_lower.len(), nc),
        ("class_upper", l.class_upper.len(), nc),
        ("class_species", l.class_species.len(), nc),
        (
            "class_terminal_velocity",
            l.class_terminal_velocity.len(),
            nc,
        ),
        ("species_density", l.species_density.len(), ns),
    ];
    for (name, got, want) in lengths {
        if got != want {
            return Err(format!("{name} has {got} entries, expected {want}"));
        }
    }
    if let Some(&s) = l.class_species.iter().find(|&&s| s >= ns) {
        return Err(format!(
            "class_species refers to species {s}, but there are {ns}"
        ));
    }
    if let Some(o) = &record.outlets {
        if o.samples.len() != record.frames.len() {
            return Err(format!(
                "{} outlet samples for {} frames",
                o.samples.len(),
                record.frames.len()
            ));
        }
        for (i, s) in o.samples.iter().enumerate() {
            if s.underflow_concentration_by_class.len() != nc
                || s.overflow_concentration_by_class.len() != nc
            {
                return Err(format!("outlet sample {i} does not have {nc} classes"));
            }
        }
    }
    for (i, f) in record.frames.iter().enumerate() {
        if f.phi_class.len() != nc * nz {
            return Err(format!(
                "frame {i} has {} volume fractions, expected {nc} classes × {nz} slabs",
                f.phi_class.len()
            ));
        }
    }
    Ok(())
}

/// Frames per chunk for a variable whose frame holds `frame_values` doubles.
fn frames_per_chunk(frame_values: usize, frames: usize) -> u64 {
    let per_frame = (frame_values * std::mem::size_of::<f64>()).max(1);
    (CHUNK_TARGET_BYTES / per_frame).clamp(1, frames.max(1)) as u64
}

fn text(s: &str) -> NcAttrValue {
    NcAttrValue::Chars(s.to_owned())
}

/// Lay out the whole file in a builder. `created` is the UTC creation time
/// for `history`.
fn build_netcdf(record: &RunRecord, created: &str) -> netcdf_writer::Result<NcFileBuilder> {
    let l = &record.layout;
    let (nz, nc, nt) = (l.nz(), l.nclasses(), record.frames.len());
    let source = source_text();
    let mut b = NcFileBuilder::new();

    b.add_attribute("Conventions", text(CONVENTIONS))?;
    b.add_attribute("title", text(&record.title))?;
    b.add_attribute("source", text(&source))?;
    b.add_attribute(
        "history",
        text(&format!(
            "{created}: written by {source} ({} engine, run {})",
            record.engine,
            record.status.as_str()
        )),
    )?;
    // A variable-length string (NC_STRING) keeps its text in the HDF5 global
    // heap: a fixed-length one sits in the object header and fails past 64 KiB.
    b.add_attribute(
        "scenario_yaml",
        NcAttrValue::Strings(vec![record.scenario_yaml.clone()]),
    )?;
    b.add_attribute("seed", NcAttrValue::UInt64s(vec![record.seed]))?;
    b.add_attribute("engine", text(&record.engine))?;
    b.add_attribute("resolution", NcAttrValue::UInt64s(vec![record.resolution]))?;
    b.add_attribute("run_status", text(record.status.as_str()))?;

    let time = b.add_unlimited_dimension("time")?;
    let z = b.add_dimension("z", nz as u64)?;
    let class = b.add_dimension("size_class", nc as u64)?;
    let species = b.add_dimension("species", l.species_name.len() as u64)?;
    let bounds = b.add_dimension("bounds", 2)?;

    // Attaches `units` and `long_name`, then any further attributes.
    let describe = |b: &mut NcFileBuilder,
                    v: VariableId,
                    units: &str,
                    long_name: &str,
                    extra: &[(&str, &str)]|
     -> netcdf_writer::Result<()> {
        b.add_variable_attribute(v, "units", text(units))?;
        b.add_variable_attribute(v, "long_name", text(long_name))?;
        for (name, value) in extra {
            b.add_variable_attribute(v, *name, text(value))?;
        }
        Ok(())
    };
    let compress = |b: &mut NcFileBuilder, v: VariableId, chunk: Vec<u64>| {
        b.set_variable_chunking(v, chunk)?;
        b.set_variable_deflate(v, Some(DEFLATE_LEVEL), true)
    };

    // Coordinates.
    let v = b.add_variable::<f64>("time", &[time])?;
    describe(
        &mut b,
        v,
        "s",
        "simulated time since the start of the run",
        &[],
    )?;
    let times: Vec<f64> = record.frames.iter().map(|f| f.time).collect();
    b.write_variable(v, &times)?;

    let v = b.add_variable::<f64>("z", &[z])?;
    describe(
        &mut b,
        v,
        "m",
        "height of the slab centre above the vessel floor",
        &[("positive", "up"), ("axis", "Z"), ("bounds", "z_bounds")],
    )?;
    b.write_variable(v, &l.z)?;

    let v = b.add_variable::<f64>("size_class", &[class])?;
    describe(
        &mut b,
        v,
        "m",
        "representative particle diameter of the size class",
        &[],
    )?;
    b.write_variable(v, &l.class_diameter)?;

    // Profiles.
    let tc2 = frames_per_chunk(nz, nt);
    let tc3 = frames_per_chunk(nc * nz, nt);

    let v = b.add_variable::<f64>("volume_fraction", &[time, z])?;
    describe(
        &mut b,
        v,
        "1",
        "solids volume fraction, all size classes",
        &[],
    )?;
    compress(&mut b, v, vec![tc2, nz as u64])?;
    let total: Vec<f64> = record.frames.iter().flat_map(|f| f.phi_total(nz)).collect();
    b.write_variable(v, &total)?;

    let v = b.add_variable::<f64>("volume_fraction_by_class", &[time, class, z])?;
    describe(
        &mut b,
        v,
        "1",
        "solids volume fraction of each size class",
        &[],
    )?;
    compress(&mut b, v, vec![tc3, nc as u64, nz as u64])?;
    let by_class: Vec<f64> = record
        .frames
        .iter()
        .flat_map(|f| f.phi_class.iter().copied())
        .collect();
    b.write_variable(v, &by_class)?;

    let v = b.add_variable::<f64>("mass_concentration", &[time, z])?;
    describe(
        &mut b,
        v,
        "kg m-3",
        "solids mass per volume of suspension",
        &[(
            "comment",
            "sum over size classes of volume fraction times the density of the class's species",
        )],
    )?;
    compress(&mut b, v, vec![tc2, nz as u64])?;
    let class_density: Vec<f64> = l
        .class_species
        .iter()
        .map(|&s| l.species_density[s])
        .collect();
    let mass: Vec<f64> = record
        .frames
        .iter()
        .flat_map(|f| {
            let mut m = vec![0.0; nz];
            for (phi, rho) in f.phi_class.chunks_exact(nz).zip(&class_density) {
                for (mk, p) in m.iter_mut().zip(phi) {
                    *mk += p * rho;
                }
            }
            m
        })
        .collect();
    b.write_variable(v, &mass)?;

    // Settling curve and inventory.
    type Series = (&'static str, &'static str, &'static str, fn(&Frame) -> f64);
    let series: [Series; 3] = [
        (
            "interface_height",
            "m",
            "height of the clear-liquid/suspension interface above the vessel floor",
            |f| f.interface_height,
        ),
        (
            "bed_height",
            "m",
            "height of the bed (sediment) surface above the vessel floor",
            |f| f.bed_height,
        ),
        (
            "solids_volume",
            "m3",
            "volume of solids in the vessel",
            |f| f.solids_volume,
        ),
    ];
    for (name, units, long_name, get) in series {
        let v = b.add_variable::<f64>(name, &[time])?;
        describe(&mut b, v, units, long_name, &[])?;
        let values: Vec<f64> = record.frames.iter().map(get).collect();
        b.write_variable(v, &values)?;
    }

    if let Some(o) = &record.outlets {
        b.add_attribute("vessel", text("thickener"))?;
        type OutSeries = (
            &'static str,
            &'static str,
            &'static str,
            fn(&OutletSample) -> f64,
        );
        let series: [OutSeries; 16] = [
            ("feed_flow", "m3 s-1", "feed volume flow", |s| s.feed_flow),
            ("underflow_flow", "m3 s-1", "underflow volume flow", |s| {
                s.underflow_flow
            }),
            (
                "overflow_flow",
                "m3 s-1",
                "overflow (effluent) volume flow",
                |s| s.overflow_flow,
            ),
            (
                "feed_solids_concentration",
                "kg m-3",
                "solids mass per volume of feed",
                |s| s.feed_concentration,
            ),
            (
                "underflow_solids_concentration",
                "kg m-3",
                "solids mass per volume of underflow",
                |s| s.underflow_concentration,
            ),
            (
                "overflow_solids_concentration",
                "kg m-3",
                "solids mass per volume of overflow",
                |s| s.overflow_concentration,
            ),
            (
                "feed_solids_mass_flow",
                "kg s-1",
                "solids mass flow in the feed",
                |s| s.feed_solids_rate,
            ),
            (
                "underflow_solids_mass_flow",
                "kg s-1",
                "solids mass flow in the underflow",
                |s| s.underflow_solids_rate,
            ),
            (
                "overflow_solids_mass_flow",
                "kg s-1",
                "solids mass flow in the overflow",
                |s| s.overflow_solids_rate,
            ),
            (
                "blanket_level",
                "m",
                "blanket (sludge bed) level above the vessel floor",
                |s| s.blanket_level,
            ),
            (
                "cumulative_solids_in",
                "kg",
                "solids fed since the start of the run",
                |s| s.solids_in,
            ),
            (
                "cumulative_solids_underflow",
                "kg",
                "solids drawn off in the underflow since the start of the run",
                |s| s.solids_out_underflow,
            ),
            (
                "cumulative_solids_overflow",
                "kg",
                "solids lost in the overflow since the start of the run",
                |s| s.solids_out_overflow,
            ),
            ("solids_inventory", "kg", "solids mass in the vessel", |s| {
                s.inventory
            }),
            (
                "solids_balance_residual",
                "kg",
                "solids fed minus solids out minus the change of the inventory",
                |s| s.balance_residual,
            ),
            (
                "initial_solids_inventory",
                "kg",
                "solids mass in the vessel at the start",
                |s| s.initial_inventory,
            ),
        ];
        for (name, units, long_name, get) in series {
            let v = b.add_variable::<f64>(name, &[time])?;
            let comment = format!(
                "the highest point, scanning down from the overflow lip, where the solids concentration reaches {} kg m-3",
                o.blanket_threshold
            );
            let extra: Vec<(&str, &str)> = if name == "blanket_level" {
                vec![("comment", comment.as_str())]
            } else {
                Vec::new()
            };
            describe(&mut b, v, units, long_name, &extra)?;
            let values: Vec<f64> = o.samples.iter().map(get).collect();
            b.write_variable(v, &values)?;
        }
        type ClassSeries = (&'static str, &'static str, fn(&OutletSample) -> &[f64]);
        let by_class: [ClassSeries; 2] = [
            (
                "underflow_solids_concentration_by_class",
                "solids mass per volume of underflow, per size class",
                |s| &s.underflow_concentration_by_class,
            ),
            (
                "overflow_solids_concentration_by_class",
                "solids mass per volume of overflow, per size class",
                |s| &s.overflow_concentration_by_class,
            ),
        ];
        for (name, long_name, get) in by_class {
            let v = b.add_variable::<f64>(name, &[time, class])?;
            describe(&mut b, v, "kg m-3", long_name, &[])?;
            let values: Vec<f64> = o
                .samples
                .iter()
                .flat_map(|s| get(s).iter().copied())
                .collect();
            b.write_variable(v, &values)?;
        }
        for (name, long_name, value) in [
            (
                "feed_level",
                "height of the feed above the vessel floor",
                o.feed_level,
            ),
            (
                "overflow_level",
                "height of the overflow lip above the vessel floor",
                o.overflow_level,
            ),
        ] {
            let v = b.add_variable::<f64>(name, &[])?;
            describe(&mut b, v, "m", long_name, &[])?;
            b.write_variable(v, &[value])?;
        }
    }

    // Grid and class tables.
    let v = b.add_variable::<f64>("z_bounds", &[z, bounds])?;
    describe(&mut b, v, "m", "lower and upper boundary of each slab", &[])?;
    let zb: Vec<f64> = l.z_edges.windows(2).flatten().copied().collect();
    b.write_variable(v, &zb)?;

    let class_tables: [(&str, &str, &str, &[f64]); 3] = [
        (
            "class_lower_diameter",
            "m",
            "lower particle diameter bound of the size class",
            &l.class_lower,
        ),
        (
            "class_upper_diameter",
            "m",
            "upper particle diameter bound of the size class",
            &l.class_upper,
        ),
        (
            "class_terminal_velocity",
            "m s-1",
            "terminal settling velocity of a single particle of the size class in the clear liquid, positive downward",
            &l.class_terminal_velocity,
        ),
    ];
    for (name, units, long_name, values) in class_tables {
        let v = b.add_variable::<f64>(name, &[class])?;
        describe(&mut b, v, units, long_name, &[])?;
        b.write_variable(v, values)?;
    }

    let v = b.add_variable::<i32>("class_species", &[class])?;
    describe(
        &mut b,
        v,
        "1",
        "species of the size class, as a zero-based index along the species dimension",
        &[],
    )?;
    // check_record bounds every entry by the species count, itself a
    // dimension length: it fits an i32 in any file this writer can produce.
    let idx: Vec<i32> = l.class_species.iter().map(|&s| s as i32).collect();
    b.write_variable(v, &idx)?;

    let v = b.add_string_variable("species_name", &[species])?;
    b.add_variable_attribute(v, "long_name", text("name of the particle species"))?;
    b.write_string_variable(v, &l.species_name)?;

    let v = b.add_variable::<f64>("species_density", &[species])?;
    describe(&mut b, v, "kg m-3", "solid density of the species", &[])?;
    b.write_variable(v, &l.species_density)?;

    let v = b.add_variable::<f64>("vessel_area", &[])?;
    describe(
        &mut b,
        v,
        "m2",
        "horizontal cross-section area of the vessel",
        &[],
    )?;
    b.write_variable(v, &[l.area])?;

    Ok(b)
}

/// The CSV text: comment lines, header, one row per frame.
fn settling_csv_text(record: &RunRecord) -> String {
    let mut s = String::new();
    // One line per comment, whatever the title holds.
    let title = record.title.replace(['\r', '\n'], " ");
    let _ = writeln!(s, "# title: {title}");
    let _ = writeln!(s, "# source: {}", source_text());
    let _ = writeln!(s, "# run_status: {}", record.status.as_str());
    let _ = writeln!(s, "{SETTLING_CSV_HEADER}");
    for f in &record.frames {
        let _ = writeln!(
            s,
            "{},{},{},{}",
            csv_number(f.time),
            csv_number(f.interface_height),
            csv_number(f.bed_height),
            csv_number(f.solids_volume)
        );
    }
    s
}

/// The outlets CSV text, None for a batch record.
fn outlets_csv_text(record: &RunRecord) -> Option<String> {
    let o = record.outlets.as_ref()?;
    let mut s = String::new();
    let title = record.title.replace(['\r', '\n'], " ");
    let _ = writeln!(s, "# title: {title}");
    let _ = writeln!(s, "# source: {}", source_text());
    let _ = writeln!(s, "# run_status: {}", record.status.as_str());
    let _ = writeln!(
        s,
        "# feed level {} m, overflow lip {} m above the floor; blanket threshold {} kg/m3",
        o.feed_level, o.overflow_level, o.blanket_threshold
    );
    let _ = writeln!(s, "{OUTLETS_CSV_HEADER}");
    for x in &o.samples {
        let row = [
            x.time,
            x.feed_flow,
            x.underflow_flow,
            x.overflow_flow,
            x.feed_concentration,
            x.underflow_concentration,
            x.overflow_concentration,
            x.feed_solids_rate,
            x.underflow_solids_rate,
            x.overflow_solids_rate,
            x.blanket_level,
            x.solids_in,
            x.solids_out_underflow,
            x.solids_out_overflow,
            x.inventory,
            x.balance_residual,
        ];
        let cells: Vec<String> = row.iter().map(|&v| csv_number(v)).collect();
        let _ = writeln!(s, "{}", cells.join(","));
    }
    Some(s)
}

/// Shortest text that reads back to the same f64; exponent form for very
/// small or large magnitudes so rows stay short.
fn csv_number(x: f64) -> String {
    let a = x.abs();
    if x != 0.0 && a.is_finite() && !(1e-4..1e15).contains(&a) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// Distinguishes temporary files of concurrent writes within one process.
static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// Removes the temporary file unless the rename went through.
struct TempFile<'a> {
    path: &'a Path,
    keep: bool,
}

impl Drop for TempFile<'_> {
    fn drop(&mut self) {
        if !self.keep {
            let _ = fs::remove_file(self.path);
        }
    }
}

/// Write through `fill` to a temporary file beside `path`, flush it to disk,
/// then rename it over `path`.
fn write_atomically<F>(path: &Path, fill: F) -> Result<(), OutputError>
where
    F: FnOnce(&mut BufWriter<&File>) -> Result<(), OutputError>,
{
    let io_error = |source| OutputError::Io {
        path: path.to_path_buf(),
        source,
    };
    let name = path.file_name().ok_or_else(|| OutputError::NotAFilePath {
        path: path.to_path_buf(),
    })?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    fs::create_dir_all(dir).map_err(io_error)?;
    let tmp_path = dir.join(format!(
        "{}.tmp-{}-{}",
        name.to_string_lossy(),
        std::process::id(),
        TEMP_COUNTER.fetch_add(1, Ordering::Relaxed)
    ));
    let file = OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&tmp_path)
        .map_err(io_error)?;
    let mut tmp = TempFile {
        path: &tmp_path,
        keep: false,
    };
    {
        let mut w = BufWriter::new(&file);
        fill(&mut w)?;
        w.flush().map_err(io_error)?;
    }
    file.sync_all().map_err(io_error)?;
    drop(file);
    fs::rename(&tmp_path, path).map_err(io_error)?;
    tmp.keep = true;
    // Make the rename itself durable. Some file systems refuse to sync a
    // directory; the file is complete at `path` either way.
    if let Ok(d) = File::open(dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

/// `t` as ISO 8601 UTC to the second, e.g. `2024-03-01T12:34:56Z`. Times
/// before 1970 (a wrong clock) print as the epoch.
fn utc_timestamp(t: SystemTime) -> String {
    let secs = t
        .duration_since(UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    let (days, rem) = (secs / 86_400, secs % 86_400);
    let (year, month, day) = civil_from_days(days as i64);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// Proleptic Gregorian date of `days` since 1970-01-01. Counts in 400-year
/// eras starting on 1 March, so the leap day falls at the end of a year.
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468; // days since 0000-03-01
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // day of era, 0..=146096
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // 0..=399
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // day of the March-based year
    let mp = (5 * doy + 2) / 153; // month from March = 0
    let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let year = yoe + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

#[cfg(test)]
mod tests;
