//! `turbid curve`, `turbid size`, `turbid fit` and `turbid plot`: the design
//! analysis of `turbid_engine::analysis` at the command line.
//!
//! Each command turns its flags (quantities with their units, as in the
//! scenario format) into SI, calls the library, and returns an [`Outcome`]:
//! the readable text, the JSON for programs, the figures and what the HTML
//! report needs. The CLI holds no analysis of its own.

use crate::plot::figures::{
    FluxFigure, HeatMapFigure, Mark, OperatingLine, ProfilesFigure, Series, SettlingCurveFigure,
    TransientsFigure,
};
use crate::plot::{self, Figure, Format};
use crate::result_file::{RunData, diameter_label};
use serde_json::json;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use turbid_engine::analysis::curve::{
    CompressionMethod, CompressionPoint, KynchAnalysis, SettlingCurve, Smoothing,
    compression_point, kynch,
};
use turbid_engine::analysis::fit::{FitOptions, FitResult, LawToFit, fit};
use turbid_engine::analysis::sizing::{
    BatchFluxCurve, DesignBasis, StatePoint, TankOperation, ThickenerArea, coe_clevenger, oltmann,
    state_point, talmage_fitch, yoshioka,
};
use turbid_engine::analysis::{AnalysisError, CAUTION};
use turbid_engine::scenario::{self, units, units::Kind};

/// A failed command: the exit code (2 input, 1 output) and the message.
#[derive(Debug)]
pub struct Failure {
    pub code: u8,
    pub message: String,
}

impl Failure {
    pub fn input(message: impl Into<String>) -> Failure {
        Failure {
            code: 2,
            message: message.into(),
        }
    }
    pub fn output(message: impl Into<String>) -> Failure {
        Failure {
            code: 1,
            message: message.into(),
        }
    }
}

/// Every analysis error is about the input given (the data, a flag, a
/// model the inputs make impossible): exit 2.
impl From<AnalysisError> for Failure {
    fn from(e: AnalysisError) -> Failure {
        Failure::input(format!("error: {e}"))
    }
}

/// Any of the figures (plotters' `Figure` is generic, so not object safe).
pub enum AnyFigure {
    Curve(SettlingCurveFigure),
    Map(HeatMapFigure),
    Profiles(ProfilesFigure),
    Flux(FluxFigure),
    Transients(TransientsFigure),
}

impl AnyFigure {
    pub fn write(&self, dir: &Path, formats: &[Format]) -> Result<Vec<PathBuf>, String> {
        match self {
            AnyFigure::Curve(f) => plot::write(f, dir, formats),
            AnyFigure::Map(f) => plot::write(f, dir, formats),
            AnyFigure::Profiles(f) => plot::write(f, dir, formats),
            AnyFigure::Flux(f) => plot::write(f, dir, formats),
            AnyFigure::Transients(f) => plot::write(f, dir, formats),
        }
    }
    pub fn svg(&self) -> Result<String, String> {
        match self {
            AnyFigure::Curve(f) => plot::svg_string(f),
            AnyFigure::Map(f) => plot::svg_string(f),
            AnyFigure::Profiles(f) => plot::svg_string(f),
            AnyFigure::Flux(f) => plot::svg_string(f),
            AnyFigure::Transients(f) => plot::svg_string(f),
        }
    }
    pub fn name(&self) -> &str {
        match self {
            AnyFigure::Curve(f) => f.name(),
            AnyFigure::Map(f) => f.name(),
            AnyFigure::Profiles(f) => f.name(),
            AnyFigure::Flux(f) => f.name(),
            AnyFigure::Transients(f) => f.name(),
        }
    }
}

/// What a command produced.
pub struct Outcome {
    /// Heading of the report.
    pub title: String,
    /// Readable text (what the command prints).
    pub text: String,
    /// The same for programs (`--json`).
    pub json: serde_json::Value,
    pub figures: Vec<AnyFigure>,
    /// Key numbers for the report: (what, value with unit).
    pub key_numbers: Vec<(String, String)>,
    /// Inputs for the report: (what, text), e.g. the scenario text.
    pub inputs: Vec<(String, String)>,
    /// Whether this is a design output (carries the caution).
    pub design: bool,
}

/// Flags shared by the commands that write plots.
#[derive(clap::Args, Debug, Clone)]
pub struct PlotArgs {
    /// Also write the plots (PNG and SVG) into this directory.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Plot formats.
    #[arg(long, value_enum, value_delimiter = ',', default_value = "png,svg")]
    pub format: Vec<Format>,
}

/// Write the figures of `outcome` as `args` asks; returns the files.
pub fn write_plots(
    figures: &[AnyFigure],
    dir: &Path,
    formats: &[Format],
) -> Result<Vec<PathBuf>, Failure> {
    std::fs::create_dir_all(dir)
        .map_err(|e| Failure::output(format!("error: cannot create {}: {e}", dir.display())))?;
    let mut files = Vec::new();
    for f in figures {
        files.extend(
            f.write(dir, formats)
                .map_err(|e| Failure::output(format!("error: plot {}: {e}", f.name())))?,
        );
    }
    Ok(files)
}

// ---------------------------------------------------------------- quantities

/// Parse `--flag "value unit"` as a quantity of `kind`, SI.
fn quantity(flag: &str, text: &str, kind: Kind) -> Result<f64, Failure> {
    units::parse(text, kind).map_err(|m| Failure::input(format!("error: --{flag} \"{text}\": {m}")))
}

/// An area, m²: "450 m²", "450 m2", "1.2 ha".
fn area(flag: &str, text: &str) -> Result<f64, Failure> {
    let t = text.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || "+-.eE".contains(c)))
        .unwrap_or(t.len());
    let (num, unit) = (t[..split].trim(), t[split..].trim());
    let scale = match unit {
        "m²" | "m2" | "m^2" => Some(1.0),
        "ha" => Some(1e4),
        _ => None,
    };
    match (num.parse::<f64>(), scale) {
        (Ok(v), Some(s)) if v.is_finite() && v > 0.0 => Ok(v * s),
        (Ok(v), Some(_)) => Err(Failure::input(format!(
            "error: --{flag} \"{text}\": an area must be positive, got {v}"
        ))),
        _ => Err(Failure::input(format!(
            "error: --{flag} \"{text}\": expected an area such as \"450 m²\" (units: m², m2, ha)"
        ))),
    }
}

fn per_hour(v: f64) -> f64 {
    v * 3600.0
}

// ------------------------------------------------------------ settling curve

/// Where a settling curve comes from.
#[derive(clap::Args, Debug, Clone)]
pub struct CurveArgs {
    /// Settling curve: a turbid result file (.h5/.nc), turbid's `<stem>.settling.csv`, or a
    /// measured CSV (`# comments`, a header like `time [min],height [mm]`).
    pub curve: PathBuf,
    /// Initial suspension height, e.g. "0.35 m" (for a CSV; a result file carries it).
    #[arg(long)]
    pub height: Option<String>,
    /// Initial solids concentration, e.g. "60 g/L" (for a CSV; a result file carries it).
    #[arg(long)]
    pub loading: Option<String>,
    /// Compression time read off the curve, e.g. "40 min" (default: found by --compression).
    #[arg(long)]
    pub compression_time: Option<String>,
    /// How the compression point is found.
    #[arg(long, value_enum, default_value = "curvature")]
    pub compression: CompressionChoice,
    /// Half width of the local smoothing window, in readings.
    #[arg(long, default_value_t = Smoothing::default().half_window)]
    pub smoothing: usize,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum CompressionChoice {
    /// Largest curvature of the curve in a unit box.
    Curvature,
    /// Roberts' plot of ln(h − h∞).
    Roberts,
}

fn is_result_file(p: &Path) -> bool {
    matches!(
        p.extension().and_then(|e| e.to_str()),
        Some("h5" | "nc" | "hdf5" | "nc4")
    )
}

/// Read one settling curve: a result file, or a CSV with its height and loading.
fn read_curve(
    path: &Path,
    height: Option<&str>,
    loading: Option<&str>,
) -> Result<(SettlingCurve, Option<RunData>), Failure> {
    if is_result_file(path) {
        let data = RunData::read(path).map_err(|m| Failure::input(format!("error: {m}")))?;
        let curve = data.settling_curve()?;
        return Ok((curve, Some(data)));
    }
    let missing = |flag: &str, eg: &str| {
        Failure::input(format!(
            "error: {}: a CSV settling curve needs --{flag} (e.g. --{flag} \"{eg}\")\n  hint: the \
             CSV holds only times and heights; a turbid result file (.h5) carries both",
            path.display()
        ))
    };
    let h0 = quantity(
        "height",
        height.ok_or_else(|| missing("height", "0.35 m"))?,
        Kind::Length,
    )?;
    let c0 = quantity(
        "loading",
        loading.ok_or_else(|| missing("loading", "60 g/L"))?,
        Kind::MassConcentration,
    )?;
    Ok((SettlingCurve::from_csv_path(path, h0, c0)?, None))
}

/// The Kynch construction and the compression point of a curve.
struct CurveAnalysis {
    curve: SettlingCurve,
    run: Option<RunData>,
    kynch: KynchAnalysis,
    compression: Result<CompressionPoint, AnalysisError>,
}

fn analyse_curve(a: &CurveArgs) -> Result<CurveAnalysis, Failure> {
    let (curve, run) = read_curve(&a.curve, a.height.as_deref(), a.loading.as_deref())?;
    if a.smoothing == 0 {
        return Err(Failure::input(
            "error: --smoothing must be at least 1 reading",
        ));
    }
    let smoothing = Smoothing {
        half_window: a.smoothing,
    };
    let k = kynch(&curve, smoothing, None)?;
    let compression = match &a.compression_time {
        Some(t) => {
            let t = quantity("compression-time", t, Kind::Time)?;
            let last = *curve.time.last().unwrap_or(&0.0);
            if !(t > 0.0 && t < last) {
                return Err(Failure::input(format!(
                    "error: --compression-time {t} s lies outside the curve (0 … {last} s)"
                )));
            }
            Ok(CompressionPoint::at_time(&curve, &k.smooth, t))
        }
        None => compression_point(
            &curve,
            &k.smooth,
            match a.compression {
                CompressionChoice::Curvature => CompressionMethod::MaxCurvature,
                CompressionChoice::Roberts => CompressionMethod::Roberts {
                    final_height: None,
                    tolerance: 0.05,
                },
            },
        ),
    };
    Ok(CurveAnalysis {
        curve,
        run,
        kynch: k,
        compression,
    })
}

fn curve_figure(ca: &CurveAnalysis, extra: Vec<Series>) -> SettlingCurveFigure {
    let mut series = vec![
        Series {
            label: if ca.run.is_some() {
                "simulated interface".into()
            } else {
                "measured".into()
            },
            time: ca.curve.time.clone(),
            height: ca.curve.height.clone(),
            mark: if ca.run.is_some() {
                Mark::Line
            } else {
                Mark::Points
            },
        },
        Series {
            label: "smoothed (Kynch)".into(),
            time: ca.kynch.smooth.time.clone(),
            height: ca.kynch.smooth.height.clone(),
            mark: Mark::Line,
        },
    ];
    if ca.run.is_some() {
        series.truncate(1);
    }
    series.extend(extra);
    SettlingCurveFigure {
        title: format!("Settling curve: {}", ca.curve.source),
        series,
        marker: ca
            .compression
            .as_ref()
            .ok()
            .map(|c| ("compression point".to_string(), c.time, c.height)),
    }
}

fn flux_points(k: &KynchAnalysis) -> Vec<(f64, f64)> {
    k.points
        .iter()
        .map(|p| (p.concentration, per_hour(p.flux)))
        .collect()
}

fn curve_header(c: &SettlingCurve) -> String {
    format!(
        "settling curve   {}\n  readings        {} (last at {:.4} min)\n  initial height  {:.4} m\n  \
         initial solids  {:.4} g/L\n",
        c.source,
        c.len(),
        c.time.last().copied().unwrap_or(0.0) / 60.0,
        c.initial_height,
        c.initial_concentration
    )
}

/// `turbid curve`: Kynch flux table and compression point.
pub fn curve_command(a: &CurveArgs) -> Result<Outcome, Failure> {
    let ca = analyse_curve(a)?;
    let mut text = curve_header(&ca.curve);
    let _ = writeln!(
        text,
        "\nKynch construction (batch flux over the concentrations the test covers)\n  \
         {:>10} {:>10} {:>10} {:>10} {:>14}",
        "t [min]", "h [m]", "C [g/L]", "v [m/h]", "G [kg/(m²·h)]"
    );
    // A readable table: at most ~25 rows, evenly spread.
    let n = ca.kynch.points.len();
    let step = n.div_ceil(25).max(1);
    for (i, p) in ca.kynch.points.iter().enumerate() {
        if i % step == 0 || i + 1 == n {
            let _ = writeln!(
                text,
                "  {:>10.3} {:>10.4} {:>10.2} {:>10.4} {:>14.4}",
                p.time / 60.0,
                p.height,
                p.concentration,
                per_hour(p.settling_velocity),
                per_hour(p.flux)
            );
        }
    }
    if let Some((lo, hi)) = ca.kynch.covered_range() {
        let _ = writeln!(
            text,
            "  covered range   {lo:.2} … {hi:.2} g/L ({n} tangents)"
        );
    }
    let mut key = vec![
        (
            "initial height".into(),
            format!("{:.4} m", ca.curve.initial_height),
        ),
        (
            "initial solids".into(),
            format!("{:.3} g/L", ca.curve.initial_concentration),
        ),
    ];
    match &ca.compression {
        Ok(c) => {
            let _ = writeln!(
                text,
                "\ncompression point\n  time            {:.3} min\n  height          {:.4} m\n  \
                 concentration   {:.2} g/L",
                c.time / 60.0,
                c.height,
                c.concentration
            );
            key.push((
                "compression point".into(),
                format!(
                    "{:.3} min, {:.4} m, {:.2} g/L",
                    c.time / 60.0,
                    c.height,
                    c.concentration
                ),
            ));
        }
        Err(e) => {
            let _ = writeln!(text, "\ncompression point: not found: {e}");
        }
    }
    let mut figures = vec![AnyFigure::Curve(curve_figure(&ca, vec![]))];
    let table = BatchFluxCurve::from_kynch(&ca.kynch)?;
    figures.push(AnyFigure::Flux(FluxFigure {
        title: "Batch flux curve (Kynch)".into(),
        curve: sample_flux(&table, f64::INFINITY),
        points: flux_points(&ca.kynch),
        operating: None,
        tangent: None,
    }));
    let json = json!({
        "curve": ca.curve,
        "kynch": ca.kynch.points,
        "covered_range_kg_per_m3": ca.kynch.covered_range(),
        "compression_point": ca.compression.as_ref().ok(),
        "compression_error": ca.compression.as_ref().err().map(|e| e.to_string()),
    });
    Ok(Outcome {
        title: format!("Settling-curve analysis: {}", ca.curve.source),
        text,
        json,
        figures,
        key_numbers: key,
        inputs: curve_inputs(&a.curve, ca.run.as_ref()),
        design: false,
    })
}

/// The inputs the report shows: the scenario of a run, or the CSV text.
fn curve_inputs(path: &Path, run: Option<&RunData>) -> Vec<(String, String)> {
    match run {
        Some(r) => vec![(
            format!("scenario of {}", path.display()),
            r.scenario_yaml.clone(),
        )],
        None => vec![(
            path.display().to_string(),
            std::fs::read_to_string(path).unwrap_or_default(),
        )],
    }
}

/// A flux curve sampled for drawing, (g/L, kg/(m²·h)), up to `upto` g/L
/// at most (a law runs to the packing limit, far beyond the design range).
fn sample_flux(flux: &BatchFluxCurve, upto: f64) -> Vec<(f64, f64)> {
    let (lo, hi) = flux.range();
    let hi = hi.min(upto.max(lo));
    let n = 300;
    (0..=n)
        .map(|i| {
            let c = lo + (hi - lo) * i as f64 / n as f64;
            (c, per_hour(flux.flux(c)))
        })
        .collect()
}

// --------------------------------------------------------------------- size

#[derive(clap::Args, Debug, Clone)]
pub struct SizeArgs {
    /// Settling curve (result file or CSV, as for `turbid curve`); sizes by all four methods.
    #[arg(
        long,
        conflicts_with = "scenario",
        required_unless_present = "scenario"
    )]
    pub curve: Option<PathBuf>,
    /// Initial suspension height of a CSV curve, e.g. "0.35 m".
    #[arg(long, requires = "curve")]
    pub height: Option<String>,
    /// Initial solids concentration of a CSV curve, e.g. "60 g/L".
    #[arg(long, requires = "curve")]
    pub loading: Option<String>,
    /// Compression time read off the curve, e.g. "40 min" (default: largest curvature).
    #[arg(long, requires = "curve")]
    pub compression_time: Option<String>,
    /// A one-class scenario whose settling law (e.g. a fitted one) gives the flux curve.
    #[arg(long)]
    pub scenario: Option<PathBuf>,
    /// Dry solids fed, e.g. "50 t/h".
    #[arg(long)]
    pub feed: String,
    /// Feed solids concentration, e.g. "80 g/L".
    #[arg(long)]
    pub feed_concentration: String,
    /// Target underflow concentration, e.g. "600 g/L".
    #[arg(long)]
    pub underflow: String,
    /// State-point check of a tank: its area, e.g. "450 m²".
    #[arg(long, requires = "underflow_flow")]
    pub tank_area: Option<String>,
    /// Underflow volume flow of the tank, e.g. "80 m³/h".
    #[arg(long, requires = "tank_area")]
    pub underflow_flow: Option<String>,
    /// Feed volume flow of the tank, e.g. "600 m³/h" (default: feed ÷ feed concentration).
    #[arg(long, requires = "tank_area")]
    pub feed_flow: Option<String>,
}

fn area_line(a: &ThickenerArea) -> String {
    format!(
        "  {:<34} {:>10.4} {:>12.1}",
        a.method.name(),
        a.unit_area_m2_day_per_tonne(),
        a.area
    )
}

/// `turbid size`: thickener area by each method, and the state point of a tank.
pub fn size_command(a: &SizeArgs) -> Result<Outcome, Failure> {
    let feed = quantity("feed", &a.feed, Kind::MassFlow)?;
    let cf = quantity(
        "feed-concentration",
        &a.feed_concentration,
        Kind::MassConcentration,
    )?;
    let cu = quantity("underflow", &a.underflow, Kind::MassConcentration)?;
    let basis = DesignBasis {
        feed_solids: feed,
        feed_concentration: cf,
        underflow_concentration: cu,
    };
    // Every flag is read before any analysis, so a typo is reported first.
    let tank = match (&a.tank_area, &a.underflow_flow) {
        (Some(ta), Some(qu)) => Some(TankOperation {
            area: area("tank-area", ta)?,
            underflow_flow: quantity("underflow-flow", qu, Kind::VolumeFlow)?,
            feed_flow: match &a.feed_flow {
                Some(q) => quantity("feed-flow", q, Kind::VolumeFlow)?,
                None => feed / cf,
            },
            feed_concentration: cf,
        }),
        _ => None,
    };
    let mut text = String::new();
    let mut inputs = Vec::new();
    let mut figures = Vec::new();
    let mut results: Vec<Result<ThickenerArea, (String, AnalysisError)>> = Vec::new();
    let mut kynch_points = Vec::new();
    let flux: BatchFluxCurve;
    let source: String;
    if let Some(path) = &a.curve {
        let ca = analyse_curve(&CurveArgs {
            curve: path.clone(),
            height: a.height.clone(),
            loading: a.loading.clone(),
            compression_time: a.compression_time.clone(),
            compression: CompressionChoice::Curvature,
            smoothing: Smoothing::default().half_window,
        })?;
        text.push_str(&curve_header(&ca.curve));
        source = ca.curve.source.clone();
        flux = BatchFluxCurve::from_kynch(&ca.kynch)?;
        kynch_points = flux_points(&ca.kynch);
        results.push(yoshioka(&flux, &basis).map_err(|e| ("Yoshioka".into(), e)));
        results.push(coe_clevenger(&flux, &basis).map_err(|e| ("Coe-Clevenger".into(), e)));
        match &ca.compression {
            Ok(c) => {
                results.push(
                    talmage_fitch(&ca.curve, &ca.kynch.smooth, c, &basis)
                        .map_err(|e| ("Talmage-Fitch".into(), e)),
                );
                results.push(oltmann(&ca.curve, c, &basis).map_err(|e| ("Oltmann".into(), e)));
                let _ = writeln!(
                    text,
                    "  compression     {:.3} min, {:.4} m, {:.2} g/L",
                    c.time / 60.0,
                    c.height,
                    c.concentration
                );
            }
            Err(e) => {
                results.push(Err(("Talmage-Fitch".into(), e.clone())));
                results.push(Err(("Oltmann".into(), e.clone())));
            }
        }
        figures.push(AnyFigure::Curve(curve_figure(&ca, vec![])));
        inputs = curve_inputs(path, ca.run.as_ref());
    } else {
        let path = a
            .scenario
            .as_ref()
            .expect("clap requires --curve or --scenario");
        let setup = scenario::load(path).map_err(|e| Failure::input(e.to_string()))?;
        if setup.classes.len() != 1 {
            return Err(Failure::input(format!(
                "error: {}: --scenario needs a scenario with one size class (it has {})\n  hint: a \
                 settling law fitted to a test (turbid fit) describes the slurry as one class",
                path.display(),
                setup.classes.len()
            )));
        }
        let class = &setup.classes[0];
        flux = BatchFluxCurve::law(
            setup.hindered_law(class),
            class.terminal.velocity,
            setup.max_packing,
            setup.species[class.species].density,
        );
        source = format!("settling law of {}", path.display());
        let _ = writeln!(text, "flux curve       {source}");
        results.push(yoshioka(&flux, &basis).map_err(|e| ("Yoshioka".into(), e)));
        results.push(coe_clevenger(&flux, &basis).map_err(|e| ("Coe-Clevenger".into(), e)));
        inputs.push((
            format!("scenario {}", path.display()),
            std::fs::read_to_string(path).unwrap_or_default(),
        ));
    }
    let _ = writeln!(
        text,
        "\ndesign basis\n  feed solids     {:.3} t/h\n  feed            {:.2} g/L\n  underflow       \
         {:.2} g/L\n",
        feed * 3.6,
        cf,
        cu
    );
    let _ = writeln!(
        text,
        "thickener area\n  {:<34} {:>10} {:>12}",
        "method", "[m²·d/t]", "area [m²]"
    );
    let mut key = vec![
        ("feed solids".to_string(), format!("{:.3} t/h", feed * 3.6)),
        ("feed concentration".into(), format!("{cf:.2} g/L")),
        ("target underflow".into(), format!("{cu:.2} g/L")),
    ];
    let mut areas = Vec::new();
    let mut refused = Vec::new();
    let mut notes: Vec<String> = Vec::new();
    for r in &results {
        match r {
            Ok(area) => {
                text.push_str(&area_line(area));
                text.push('\n');
                key.push((
                    format!("area, {}", area.method.name()),
                    format!(
                        "{:.1} m² ({:.4} m²·d/t)",
                        area.area,
                        area.unit_area_m2_day_per_tonne()
                    ),
                ));
                for n in &area.notes {
                    if !notes.contains(n) {
                        notes.push(n.clone());
                    }
                }
                areas.push(area.clone());
            }
            Err((method, e)) => {
                let _ = writeln!(text, "  {method:<34} not available: {}", first_line(e));
                refused.push(json!({"method": method, "error": e}));
            }
        }
    }
    if areas.is_empty() {
        let reasons: Vec<String> = results
            .iter()
            .filter_map(|r| r.as_ref().err())
            .map(|(m, e)| format!("{m}: {e}"))
            .collect();
        return Err(Failure::input(format!(
            "error: no method could size the thickener\n{}",
            reasons.join("\n")
        )));
    }
    for n in &notes {
        let _ = writeln!(text, "  note: {n}");
    }
    let limiting = areas
        .iter()
        .find(|x| x.method == turbid_engine::analysis::sizing::SizingMethod::Yoshioka);
    let mut state: Option<StatePoint> = None;
    if let Some(tank) = tank {
        let sp = state_point(&flux, &tank, 0.02)?;
        let _ = writeln!(
            text,
            "\nstate point of the tank ({:.1} m², feed {:.1} m³/h, underflow {:.1} m³/h)\n  \
             applied flux    {:.4} kg/(m²·h)\n  capacity        {:.4} kg/(m²·h) at {:.2} g/L\n  \
             loading         {:.3} of capacity: {}\n  overflow rate   {:.4} m/h against v(C_f) = \
             {:.4} m/h: clarification {}\n  underflow       {:.2} g/L if all solids leave by it",
            tank.area,
            per_hour(tank.feed_flow),
            per_hour(tank.underflow_flow),
            per_hour(sp.applied_flux),
            per_hour(sp.capacity),
            sp.limiting_concentration,
            sp.loading_ratio,
            sp.verdict.name().to_uppercase(),
            per_hour(sp.overflow_rate),
            per_hour(sp.settling_velocity_at_feed),
            if sp.clarification_ok {
                "holds"
            } else {
                "FAILS"
            },
            sp.underflow_concentration
        );
        for n in &sp.notes {
            let _ = writeln!(text, "  note: {n}");
        }
        key.push((
            "state point".into(),
            format!(
                "{} ({:.3} of capacity); clarification {}",
                sp.verdict.name(),
                sp.loading_ratio,
                if sp.clarification_ok {
                    "holds"
                } else {
                    "fails"
                }
            ),
        ));
        state = Some(sp);
    }
    let operating = state.as_ref().map(|sp| {
        let t = &sp.tank;
        OperatingLine {
            start: (0.0, per_hour(sp.applied_flux)),
            end: (sp.underflow_concentration, 0.0),
            state_point: (
                t.feed_concentration,
                per_hour(sp.overflow_rate * t.feed_concentration),
            ),
            label: format!("state point: {}", sp.verdict.name()),
        }
    });
    figures.push(AnyFigure::Flux(FluxFigure {
        title: format!("Batch flux curve: {source}"),
        curve: sample_flux(
            &flux,
            match flux {
                BatchFluxCurve::Law { .. } => {
                    1.5 * state
                        .as_ref()
                        .map_or(cu, |sp| sp.underflow_concentration.max(cu))
                }
                BatchFluxCurve::Table { .. } => f64::INFINITY,
            },
        ),
        points: kynch_points,
        operating,
        tangent: limiting.map(|l| ((0.0, per_hour(l.limiting_flux)), (cu, 0.0))),
    }));
    let _ = writeln!(text, "\ncaution: {CAUTION}");
    let json = json!({
        "basis": basis,
        "areas": areas,
        "unit_areas_m2_day_per_tonne": areas.iter().map(|x| json!({"method": x.method, "value": x.unit_area_m2_day_per_tonne()})).collect::<Vec<_>>(),
        "not_available": refused,
        "state_point": state,
        "caution": CAUTION,
    });
    Ok(Outcome {
        title: format!("Thickener sizing: {source}"),
        text,
        json,
        figures,
        key_numbers: key,
        inputs,
        design: true,
    })
}

fn first_line(e: &AnalysisError) -> String {
    e.to_string().lines().next().unwrap_or_default().to_string()
}

// ---------------------------------------------------------------------- fit

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum LawChoice {
    /// Richardson–Zaki: v∞ and n.
    RichardsonZaki,
    /// Vesilind: v0 and k.
    Vesilind,
    /// Takács: v0 and r_h (the cap, r_p and the non-settleable share held).
    Takacs,
}

#[derive(clap::Args, Debug, Clone)]
pub struct FitArgs {
    /// Base scenario: fluid, solids, packing limit (the law, height and loading come from the fit
    /// and the curves).
    pub scenario: PathBuf,
    /// A measured settling curve (CSV); repeat for several tests.
    #[arg(long, required = true)]
    pub curve: Vec<PathBuf>,
    /// Initial height of each curve, e.g. "0.35 m": one for all or one per --curve, in order.
    #[arg(long, required = true)]
    pub height: Vec<String>,
    /// Initial solids concentration of each curve, e.g. "60 g/L": one for all or one per --curve.
    #[arg(long, required = true)]
    pub loading: Vec<String>,
    /// The law to fit.
    #[arg(long, value_enum)]
    pub law: LawChoice,
    /// Takács: the cap on the settling velocity v0′, e.g. "10 m/h" (held).
    #[arg(long)]
    pub v0_max: Option<String>,
    /// Takács: r_p of the flocculant zone, e.g. "3 L/g" (held).
    #[arg(long)]
    pub r_flocculant: Option<String>,
    /// Takács: non-settleable share of the feed solids, e.g. 0.002 (held).
    #[arg(long, default_value_t = 0.0)]
    pub non_settleable: f64,
    /// Confidence level of the intervals, in percent.
    #[arg(long, default_value_t = 95.0)]
    pub confidence: f64,
    /// Cells of the model's grid over the fill height.
    #[arg(long, default_value_t = FitOptions::default().cells)]
    pub cells: usize,
}

fn nth<'a>(flag: &str, values: &'a [String], i: usize, n: usize) -> Result<&'a str, Failure> {
    match values.len() {
        1 => Ok(&values[0]),
        k if k == n => Ok(&values[i]),
        k => Err(Failure::input(format!(
            "error: {k} values of --{flag} for {n} curves\n  hint: give one --{flag} for all \
             curves or one per --curve, in the same order"
        ))),
    }
}

/// `turbid fit`: fit a law to lab curves with the continuum solver.
pub fn fit_command(a: &FitArgs) -> Result<Outcome, Failure> {
    let setup = scenario::load(&a.scenario).map_err(|e| Failure::input(e.to_string()))?;
    // Flags first, so a typo is reported before the curves are read.
    let law = match a.law {
        LawChoice::RichardsonZaki => LawToFit::RichardsonZaki,
        LawChoice::Vesilind => LawToFit::Vesilind,
        LawChoice::Takacs => {
            let need = |flag: &str, v: &Option<String>, eg: &str| {
                v.clone().ok_or_else(|| {
                    Failure::input(format!(
                        "error: --law takacs needs --{flag} (e.g. --{flag} \"{eg}\"), which the \
                         fit holds"
                    ))
                })
            };
            let v0_max = quantity(
                "v0-max",
                &need("v0-max", &a.v0_max, "10 m/h")?,
                Kind::Velocity,
            )?;
            let r_p = quantity(
                "r-flocculant",
                &need("r-flocculant", &a.r_flocculant, "3 L/g")?,
                Kind::SpecificVolume,
            )?;
            if !(0.0..1.0).contains(&a.non_settleable) {
                return Err(Failure::input(format!(
                    "error: --non-settleable {}: must be a fraction from 0 to below 1",
                    a.non_settleable
                )));
            }
            LawToFit::Takacs {
                v0_max,
                r_flocculant: r_p,
                non_settleable_fraction: a.non_settleable,
            }
        }
    };
    if !(a.confidence > 0.0 && a.confidence < 100.0) {
        return Err(Failure::input(format!(
            "error: --confidence {}: must be a percentage between 0 and 100, e.g. 95",
            a.confidence
        )));
    }
    if a.cells < 10 {
        return Err(Failure::input(format!(
            "error: --cells {}: at least 10 cells are needed",
            a.cells
        )));
    }
    let n = a.curve.len();
    let mut curves = Vec::new();
    for (i, path) in a.curve.iter().enumerate() {
        let (c, _) = read_curve(
            path,
            Some(nth("height", &a.height, i, n)?),
            Some(nth("loading", &a.loading, i, n)?),
        )?;
        curves.push(c);
    }
    let options = FitOptions {
        cells: a.cells,
        confidence: a.confidence / 100.0,
        ..FitOptions::default()
    };
    let r: FitResult = fit(&setup, law, &curves, &options)?;
    let mut text = String::new();
    let _ = writeln!(
        text,
        "fit of {} to {} curve(s), {} readings, {} degrees of freedom",
        r.law.name(),
        curves.len(),
        r.points,
        r.degrees_of_freedom
    );
    let _ = writeln!(
        text,
        "  {} after {} iterations ({} model runs, {} cells){}",
        if r.converged {
            "converged"
        } else {
            "NOT converged"
        },
        r.iterations,
        r.model_runs,
        r.cells,
        if r.converged {
            ""
        } else {
            ": treat the estimates with care"
        }
    );
    let _ = writeln!(
        text,
        "\n  {:<12} {:>14} {:>14} {:>30}",
        "parameter",
        "estimate",
        "std. error",
        format!("{:.0} % interval", a.confidence)
    );
    let mut key = Vec::new();
    for p in &r.parameters {
        let (scale, unit) = display_unit(&p.unit);
        let _ = writeln!(
            text,
            "  {:<12} {:>14.5} {:>14.5} {:>13.5} … {:<13.5} {unit}",
            p.name,
            p.value * scale,
            p.standard_error * scale,
            p.lower * scale,
            p.upper * scale
        );
        key.push((
            p.name.clone(),
            format!(
                "{:.5} {unit} ({:.5} … {:.5})",
                p.value * scale,
                p.lower * scale,
                p.upper * scale
            ),
        ));
    }
    let _ = writeln!(
        text,
        "\n  residuals: rms {:.5} m, standard deviation {:.5} m",
        r.rms_residual, r.residual_sd
    );
    key.push(("rms residual".into(), format!("{:.5} m", r.rms_residual)));
    for c in &r.curves {
        let worst = c.residual.iter().map(|x| x.abs()).fold(0.0, f64::max);
        let _ = writeln!(
            text,
            "  {}: {} readings, largest |residual| {:.5} m",
            c.source,
            c.time.len(),
            worst
        );
    }
    let _ = writeln!(
        text,
        "\nscenario snippet (the fitted law):\n{}",
        r.scenario_snippet
    );
    let _ = writeln!(text, "caution: {CAUTION}");
    let mut series = Vec::new();
    for c in &r.curves {
        series.push(Series {
            label: format!("measured: {}", short(&c.source)),
            time: c.time.clone(),
            height: c.measured.clone(),
            mark: Mark::Points,
        });
    }
    for c in &r.curves {
        series.push(Series {
            label: format!("fitted: {}", short(&c.source)),
            time: c.time.clone(),
            height: c.model.clone(),
            mark: Mark::Line,
        });
    }
    let figures = vec![AnyFigure::Curve(SettlingCurveFigure {
        title: format!("Fit of {}", r.law.name()),
        series,
        marker: None,
    })];
    let mut inputs = vec![(
        format!("base scenario {}", a.scenario.display()),
        std::fs::read_to_string(&a.scenario).unwrap_or_default(),
    )];
    for p in &a.curve {
        inputs.push((
            p.display().to_string(),
            std::fs::read_to_string(p).unwrap_or_default(),
        ));
    }
    inputs.push((
        "fitted law (scenario snippet)".into(),
        r.scenario_snippet.clone(),
    ));
    Ok(Outcome {
        title: format!("Fit of {}", r.law.name()),
        text,
        json: serde_json::to_value(&r).unwrap_or_default(),
        figures,
        key_numbers: key,
        inputs,
        design: true,
    })
}

/// Display units of fitted parameters: velocities in m/h, specific volumes in L/g.
fn display_unit(si: &str) -> (f64, &'static str) {
    match si {
        "m/s" => (3600.0, "m/h"),
        "m3/kg" => (1.0, "L/g"),
        _ => (1.0, ""),
    }
}

fn short(source: &str) -> String {
    Path::new(source)
        .file_name()
        .map(|f| f.to_string_lossy().to_string())
        .unwrap_or_else(|| source.to_string())
}

// --------------------------------------------------------------------- plot

#[derive(clap::Args, Debug, Clone)]
pub struct RunPlotArgs {
    /// Result file of `turbid run` (.h5).
    pub result: PathBuf,
    /// Times of the profile panels, e.g. "0 s,2 min,10 min" (default: start, ¼, ½ and end).
    #[arg(long, value_delimiter = ',')]
    pub times: Vec<String>,
}

/// The figures of a run: settling curve, concentration map, profiles.
pub fn run_figures(data: &RunData, times: &[f64]) -> Vec<AnyFigure> {
    let title = if data.title.is_empty() {
        "run".to_string()
    } else {
        data.title.clone()
    };
    let nt = data.time.len();
    let t_end = data.time.last().copied().unwrap_or(0.0);
    let chosen: Vec<f64> = if times.is_empty() {
        vec![0.0, 0.25 * t_end, 0.5 * t_end, t_end]
    } else {
        times.to_vec()
    };
    let mut frames: Vec<usize> = chosen.iter().map(|&t| data.frame_at(t)).collect();
    frames.dedup();
    // A thickener's story is its blanket and outlets; a batch column's its
    // settling curve.
    let first = match &data.outlets {
        Some(o) => AnyFigure::Transients(TransientsFigure {
            title: format!("Thickener: {title}"),
            time: data.time.clone(),
            blanket: o.blanket.clone(),
            feed_level: Some(o.feed_level),
            overflow_level: Some(o.overflow_level),
            underflow: o.underflow.clone(),
            overflow: o.overflow.clone(),
        }),
        None => AnyFigure::Curve(SettlingCurveFigure {
            title: format!("Settling curve: {title}"),
            series: vec![
                Series {
                    label: "interface".into(),
                    time: data.time.clone(),
                    height: data.interface.clone(),
                    mark: Mark::Line,
                },
                Series {
                    label: "bed surface".into(),
                    time: data.time.clone(),
                    height: data.bed.clone(),
                    mark: Mark::Line,
                },
            ],
            marker: None,
        }),
    };
    let mut figures = vec![first];
    if nt > 0 {
        figures.push(AnyFigure::Map(HeatMapFigure {
            title: format!("Solids concentration: {title}"),
            time: data.time.clone(),
            z_edges: data.z_edges.clone(),
            values: data.total_concentration(),
            interface: match &data.outlets {
                Some(o) => o.blanket.clone(),
                None => data.interface.clone(),
            },
            line_label: if data.outlets.is_some() {
                "blanket level".into()
            } else {
                "interface".into()
            },
        }));
        figures.push(AnyFigure::Profiles(ProfilesFigure {
            title: format!("Concentration profiles by size class: {title}"),
            z: data.z.clone(),
            classes: data
                .class_diameter
                .iter()
                .map(|&d| diameter_label(d))
                .collect(),
            panels: frames
                .iter()
                .map(|&i| (data.time[i], data.class_concentration(i)))
                .collect(),
        }));
    }
    figures
}

/// `turbid plot` / `turbid report run`: the figures and numbers of a result file.
pub fn run_outcome(a: &RunPlotArgs) -> Result<Outcome, Failure> {
    let data = RunData::read(&a.result).map_err(|m| Failure::input(format!("error: {m}")))?;
    let mut times = Vec::new();
    for t in &a.times {
        times.push(quantity("times", t, Kind::Time)?);
    }
    let t_end = data.time.last().copied().unwrap_or(0.0);
    if let Some(t) = times.iter().find(|&&t| t < 0.0 || t > t_end * 1.0001) {
        return Err(Failure::input(format!(
            "error: --times: {t} s lies outside the run (0 … {t_end} s)"
        )));
    }
    let mut text = String::new();
    let _ = writeln!(
        text,
        "result   {}\n  title    {}\n  engine   {}\n  status   {}\n  frames   {} (0 … {:.4} min)\n  \
         slabs    {}\n  classes  {}",
        a.result.display(),
        data.title,
        data.engine,
        data.status,
        data.time.len(),
        t_end / 60.0,
        data.nz(),
        data.nclasses()
    );
    let mut key = vec![
        ("engine".to_string(), data.engine.clone()),
        ("status".into(), data.status.clone()),
        ("simulated time".into(), format!("{:.4} min", t_end / 60.0)),
    ];
    if let (Some(h0), Some(h1), None) =
        (data.interface.first(), data.interface.last(), &data.outlets)
    {
        let _ = writeln!(text, "  interface {h0:.4} m → {h1:.4} m");
        key.push(("interface".into(), format!("{h0:.4} m → {h1:.4} m")));
    }
    if let Some(o) = &data.outlets {
        if let (Some(b), Some(u), Some(v)) =
            (o.blanket.last(), o.underflow.last(), o.overflow.last())
        {
            let _ = writeln!(
                text,
                "  at the end: blanket {b:.3} m, underflow {u:.2} g/L, overflow {v:.4} g/L"
            );
            key.push(("final blanket level".into(), format!("{b:.3} m")));
            key.push(("final underflow".into(), format!("{u:.2} g/L")));
            key.push(("final overflow".into(), format!("{v:.4} g/L")));
        }
    } else if let Some(b) = data.bed.last() {
        key.push(("final bed height".into(), format!("{b:.4} m")));
    }
    let figures = run_figures(&data, &times);
    Ok(Outcome {
        title: format!("Run: {}", data.title),
        text,
        json: json!({
            "result": a.result,
            "title": data.title,
            "engine": data.engine,
            "status": data.status,
            "time_s": data.time,
            "interface_height_m": data.interface,
            "bed_height_m": data.bed,
        }),
        figures,
        key_numbers: key,
        inputs: vec![("scenario".into(), data.scenario_yaml.clone())],
        // A thickener's underflow and blanket are design predictions.
        design: data.outlets.is_some(),
    })
}
