//! Settling curves and what one batch test tells: the Kynch construction and
//! the compression point.
//!
//! # The Kynch construction
//!
//! In a batch test of initial height H0 and concentration C0 whose
//! interface stays sharp, the concentration C just below the interface
//! travels up from the floor along a straight characteristic, and the tangent
//! to the settling curve h(t) at time t meets the height axis at
//! h_I = h − t·h′. Kynch (1952) showed that then
//!
//! ```text
//!   C = C0·H0 / h_I,    v(C) = −h′(t),    G(C) = C·v(C)
//! ```
//!
//! (physics.md §5.2 item 5: on a fan characteristic t(f − φf′) = φ0 H and
//! h_I = t(f/φ − f′)). One test gives the batch flux over the concentrations
//! that reach the interface: C0 in the constant-rate period, then, after the
//! first critical time, the concentrations of the rarefaction fan. Across a
//! corner of the curve (the end of the constant-rate period when a shock
//! C0 → Ca meets the interface) the tangents turn about the corner point
//! and the construction gives points on the chord from (C0, G(C0)) to
//! (Ca, G(Ca)), i.e. on the lower convex envelope of G: a test cannot tell
//! more there. After the compression point the bed carries part of the
//! load and the construction no longer gives the batch flux, so it stops
//! there when a compression time is given.
//!
//! # Smoothing before differentiating
//!
//! Measured heights are noisy and the tangent is a derivative, so the curve is
//! first made **monotone** (an interface never rises in a batch test): the
//! pool-adjacent-violators algorithm gives the non-increasing sequence
//! closest to the data in least squares (Ayer et al. 1955; Barlow et al.
//! 1972 [M]). Then, with a half-window w > 0, each node's height and slope
//! come from a least-squares parabola through the 2w + 1 nodes around it
//! (a Savitzky–Golay (1964) filter on uneven times; exact for a parabola,
//! so a straight constant-rate period keeps its slope exactly), with the
//! slope capped at zero. With w = 0 the monotone heights are kept and the
//! slopes are the monotone piecewise-cubic ones of Fritsch & Carlson (1980)
//! (weighted harmonic means of the adjacent secants, Fritsch & Butland 1984
//! [M]), second-order accurate on smooth data. Between nodes the curve is the
//! cubic Hermite interpolant of those heights and slopes.
//!
//! # The compression point
//!
//! Two published rules, both documented on [`CompressionMethod`]:
//! the point of largest curvature of the curve drawn in a unit box, and
//! Roberts' (1949) plot of ln(h − h∞) against t, on which the compression
//! period is a straight line (first-order consolidation); the compression
//! point is where the data leave that line going back in time.

use super::AnalysisError;
use crate::record::RunRecord;
use crate::scenario::units::{self, Kind};
use serde::Serialize;
use std::io::Read;
use std::path::Path;

/// A settling curve: interface height over time in one batch test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SettlingCurve {
    /// Times, s, strictly increasing; the first may be 0.
    pub time: Vec<f64>,
    /// Interface heights above the floor, m.
    pub height: Vec<f64>,
    /// Initial (fill) height H0, m.
    pub initial_height: f64,
    /// Initial solids mass concentration C0, kg/m³.
    pub initial_concentration: f64,
    /// Where the curve comes from (file name, run title), for reports.
    pub source: String,
}

impl SettlingCurve {
    /// A checked curve. Refuses: unequal lengths, fewer than 3 points,
    /// non-finite values, times not strictly increasing or negative, heights
    /// not positive or above the initial height (1 % reading tolerance),
    /// a non-positive initial height or concentration.
    pub fn new(
        time: Vec<f64>,
        height: Vec<f64>,
        initial_height: f64,
        initial_concentration: f64,
        source: impl Into<String>,
    ) -> Result<Self, AnalysisError> {
        let source = source.into();
        if !(initial_height.is_finite() && initial_height > 0.0) {
            return Err(AnalysisError::invalid(
                "initial height",
                format!("must be a positive length, got {initial_height} m"),
                "give the fill height of the test, e.g. \"0.5 m\"",
            ));
        }
        if !(initial_concentration.is_finite() && initial_concentration > 0.0) {
            return Err(AnalysisError::invalid(
                "initial concentration",
                format!("must be a positive mass concentration, got {initial_concentration} kg/m³"),
                "give the loading of the test, e.g. \"120 g/L\"",
            ));
        }
        if time.len() != height.len() {
            return Err(AnalysisError::invalid(
                "settling curve",
                format!("{} times but {} heights", time.len(), height.len()),
                "every time needs one interface height",
            ));
        }
        if time.len() < 3 {
            return Err(AnalysisError::invalid(
                "settling curve",
                format!("{} points; at least 3 are needed for a slope", time.len()),
                "record the interface height at more times",
            ));
        }
        for (i, (&t, &h)) in time.iter().zip(&height).enumerate() {
            if !t.is_finite() || t < 0.0 {
                return Err(AnalysisError::invalid(
                    "settling curve",
                    format!(
                        "point {}: time {t} s is not a finite non-negative number",
                        i + 1
                    ),
                    "times are counted from the start of the test",
                ));
            }
            if i > 0 && t <= time[i - 1] {
                return Err(AnalysisError::invalid(
                    "settling curve",
                    format!(
                        "point {}: time {t} s does not come after {} s",
                        i + 1,
                        time[i - 1]
                    ),
                    "sort the readings by time and remove repeated times",
                ));
            }
            if !h.is_finite() || h <= 0.0 || h > initial_height * 1.01 {
                return Err(AnalysisError::invalid(
                    "settling curve",
                    format!(
                        "point {}: height {h} m is not between 0 and the initial height {initial_height} m",
                        i + 1
                    ),
                    "heights are measured from the floor of the column, in the unit of the column header",
                ));
            }
        }
        Ok(SettlingCurve {
            time,
            height,
            initial_height,
            initial_concentration,
            source,
        })
    }

    /// The settling curve of a run: frame times and interface heights. H0 is
    /// the top of the record's grid; C0 is the solids mass in the first frame
    /// (Σ over classes of the mean volume fraction × the species density).
    pub fn from_record(record: &RunRecord) -> Result<Self, AnalysisError> {
        let layout = &record.layout;
        let first = record.frames.first().ok_or_else(|| {
            AnalysisError::invalid(
                "run record",
                "has no frames",
                "run the scenario first; a record holds at least the state at t = 0",
            )
        })?;
        let nz = layout.nz();
        let height = *layout.z_edges.last().unwrap_or(&0.0);
        let mut c0 = 0.0;
        for (class, &species) in layout.class_species.iter().enumerate() {
            let slabs = &first.phi_class[class * nz..(class + 1) * nz];
            let mean: f64 = slabs
                .iter()
                .zip(layout.z_edges.windows(2))
                .map(|(p, e)| p * (e[1] - e[0]))
                .sum::<f64>()
                / height;
            c0 += mean * layout.species_density[species];
        }
        SettlingCurve::new(
            record.frames.iter().map(|f| f.time).collect(),
            record.frames.iter().map(|f| f.interface_height).collect(),
            height,
            c0,
            if record.title.is_empty() {
                format!("{} run", record.engine)
            } else {
                record.title.clone()
            },
        )
    }

    /// Read a settling curve from a CSV file; see [`from_csv_reader`](Self::from_csv_reader).
    pub fn from_csv_path(
        path: &Path,
        initial_height: f64,
        initial_concentration: f64,
    ) -> Result<Self, AnalysisError> {
        let name = path.display().to_string();
        let file = std::fs::File::open(path).map_err(|e| AnalysisError::Io {
            file: name.clone(),
            message: format!("cannot open the file: {e}"),
            hint: "check the path and the file's permissions".into(),
        })?;
        Self::from_csv_reader(file, &name, initial_height, initial_concentration)
    }

    /// Read a settling curve from CSV text. Lines starting with `#` are
    /// comments. The first other line names the columns; the time column is
    /// the first whose name starts with `time`, the height column the first
    /// that contains `height` (an `interface` one preferred). Each of the two
    /// names carries its unit, after an underscore or in brackets:
    /// `time_s`, `time [min]`, `interface_height_m`, `height (mm)`. turbid's own
    /// `<name>.settling.csv` reads as is. `file` is used in messages.
    pub fn from_csv_reader<R: Read>(
        reader: R,
        file: &str,
        initial_height: f64,
        initial_concentration: f64,
    ) -> Result<Self, AnalysisError> {
        let err = |line: u64, column: u64, message: String, hint: &str| AnalysisError::Csv {
            file: file.to_string(),
            line,
            column,
            message,
            hint: hint.to_string(),
        };
        let mut rdr = csv::ReaderBuilder::new()
            .comment(Some(b'#'))
            .has_headers(false)
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(reader);
        let mut records = rdr.records();
        let header = loop {
            match records.next() {
                None => {
                    return Err(err(
                        1,
                        1,
                        "no header line with column names".into(),
                        "start with a line such as `time_s,interface_height_m`",
                    ));
                }
                Some(Err(e)) => return Err(csv_error(file, &e)),
                Some(Ok(r)) if r.iter().all(|f| f.is_empty()) => continue,
                Some(Ok(r)) => break r,
            }
        };
        let header_line = header.position().map_or(1, |p| p.line());
        let names: Vec<String> = header.iter().map(|s| s.to_lowercase()).collect();
        let time_col = names.iter().position(|n| n.starts_with("time"));
        let height_col = names
            .iter()
            .position(|n| n.contains("interface") && n.contains("height"))
            .or_else(|| names.iter().position(|n| n.contains("height")));
        let (Some(tc), Some(hc)) = (time_col, height_col) else {
            return Err(err(
                header_line,
                1,
                format!(
                    "the header `{}` has no time and height columns",
                    header.iter().collect::<Vec<_>>().join(",")
                ),
                "name them e.g. `time_s,interface_height_m` or `time [min],height [mm]`",
            ));
        };
        let scale = |col: usize, kind: Kind| -> Result<f64, AnalysisError> {
            let name = &header[col];
            let unit = column_unit(name).ok_or_else(|| {
                err(
                    header_line,
                    col as u64 + 1,
                    format!("column `{name}` does not say its unit"),
                    &format!(
                        "write the unit after an underscore or in brackets, e.g. `{}`; accepted: {}",
                        if kind == Kind::Time { "time [min]" } else { "height [mm]" },
                        kind.accepted()
                    ),
                )
            })?;
            units::parse(&format!("1 {unit}"), kind).map_err(|m| {
                err(
                    header_line,
                    col as u64 + 1,
                    format!("column `{name}`: {m}"),
                    "use one of the accepted units",
                )
            })
        };
        let t_scale = scale(tc, Kind::Time)?;
        let h_scale = scale(hc, Kind::Length)?;
        let (mut time, mut height) = (Vec::new(), Vec::new());
        let mut lines = Vec::new();
        for rec in records {
            let rec = rec.map_err(|e| csv_error(file, &e))?;
            if rec.iter().all(|f| f.is_empty()) {
                continue;
            }
            let line = rec.position().map_or(0, |p| p.line());
            let cell = |col: usize, what: &str| -> Result<f64, AnalysisError> {
                let text = rec.get(col).unwrap_or("");
                let v: f64 = text.parse().map_err(|_| {
                    err(
                        line,
                        col as u64 + 1,
                        format!("{what} `{text}` is not a number"),
                        "write plain numbers in the unit of the column header",
                    )
                })?;
                if !v.is_finite() {
                    return Err(err(
                        line,
                        col as u64 + 1,
                        format!("{what} `{text}` is not finite"),
                        "remove the row or give a measured value",
                    ));
                }
                Ok(v)
            };
            let t = cell(tc, "time")? * t_scale;
            let h = cell(hc, "height")? * h_scale;
            if t < 0.0 {
                return Err(err(
                    line,
                    tc as u64 + 1,
                    format!("time {t} s is negative"),
                    "count times from the start of the test",
                ));
            }
            if let Some(&prev) = time.last()
                && t <= prev
            {
                return Err(err(
                    line,
                    tc as u64 + 1,
                    format!("time {t} s does not come after the previous row's {prev} s"),
                    "sort the rows by time and remove repeated times",
                ));
            }
            if h <= 0.0 || h > initial_height * 1.01 {
                return Err(err(
                    line,
                    hc as u64 + 1,
                    format!(
                        "height {h} m is not between 0 and the initial height {initial_height} m"
                    ),
                    "heights are measured from the floor; check the unit in the header",
                ));
            }
            time.push(t);
            height.push(h);
            lines.push(line);
        }
        if time.len() < 3 {
            return Err(err(
                lines.last().copied().unwrap_or(header_line),
                1,
                format!("{} data rows; at least 3 are needed", time.len()),
                "record the interface height at more times",
            ));
        }
        SettlingCurve::new(
            time,
            height,
            initial_height,
            initial_concentration,
            file.to_string(),
        )
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.time.len()
    }

    /// Always false for a checked curve (at least 3 points).
    pub fn is_empty(&self) -> bool {
        self.time.is_empty()
    }

    /// Points after t = 0 (the point at t = 0 carries no information: it is
    /// the initial height).
    pub fn informative_points(&self) -> usize {
        self.time.iter().filter(|&&t| t > 0.0).count()
    }
}

fn csv_error(file: &str, e: &csv::Error) -> AnalysisError {
    let line = e.position().map_or(0, |p| p.line());
    AnalysisError::Csv {
        file: file.to_string(),
        line,
        column: 1,
        message: format!("unreadable CSV: {e}"),
        hint: "the file must be comma-separated text with one reading per line".into(),
    }
}

/// Unit of a column name: `time_s` → `s`, `time [min]` / `time (min)` → `min`.
fn column_unit(name: &str) -> Option<&str> {
    let name = name.trim();
    for (open, close) in [('[', ']'), ('(', ')')] {
        if let (Some(a), Some(b)) = (name.rfind(open), name.rfind(close))
            && a < b
        {
            return Some(name[a + 1..b].trim());
        }
    }
    let (_, unit) = name.rsplit_once('_')?;
    Some(unit)
}

/// How a curve is smoothed before it is differentiated (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Smoothing {
    /// Half-width w of the local-parabola window in nodes; 0 for no smoothing
    /// beyond the monotone fit (monotone cubic slopes).
    pub half_window: usize,
}

impl Default for Smoothing {
    /// w = 3 (7-point parabolas): removes reading noise of a hand-read test
    /// while a curve of 30 or more readings keeps its shape (common practice
    /// for Savitzky–Golay filters: a window well below the feature width).
    fn default() -> Self {
        Smoothing { half_window: 3 }
    }
}

/// A monotone, smoothed settling curve with slopes, and its cubic Hermite
/// interpolant.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SmoothCurve {
    /// Node times, s (those of the data).
    pub time: Vec<f64>,
    /// Smoothed heights, m (non-increasing).
    pub height: Vec<f64>,
    /// Slopes dh/dt at the nodes, m/s (≤ 0).
    pub slope: Vec<f64>,
}

impl SmoothCurve {
    /// Monotone fit, then local parabolas (see the module docs).
    pub fn new(curve: &SettlingCurve, smoothing: Smoothing) -> SmoothCurve {
        let t = &curve.time;
        let mono = monotone_nonincreasing(&curve.height);
        let n = t.len();
        let w = smoothing.half_window;
        let (height, slope) = if w == 0 {
            (mono.clone(), monotone_slopes(t, &mono))
        } else {
            let mut h = Vec::with_capacity(n);
            let mut s = Vec::with_capacity(n);
            for i in 0..n {
                // Window of 2w + 1 nodes, shifted inwards at the ends.
                let width = (2 * w + 1).min(n);
                let lo = i.saturating_sub(w).min(n - width);
                let (a, b) = local_parabola(&t[lo..lo + width], &mono[lo..lo + width], t[i]);
                h.push(a);
                s.push(b.min(0.0));
            }
            // Keep the heights non-increasing after smoothing too.
            (monotone_nonincreasing(&h), s)
        };
        SmoothCurve {
            time: t.clone(),
            height,
            slope,
        }
    }

    fn segment(&self, t: f64) -> usize {
        let n = self.time.len();
        match self.time.partition_point(|&x| x <= t) {
            0 => 0,
            k if k >= n => n - 2,
            k => k - 1,
        }
    }

    /// Height at time `t`, m (cubic Hermite between nodes, linear beyond the
    /// ends with the end slope).
    pub fn value(&self, t: f64) -> f64 {
        let n = self.time.len();
        if t <= self.time[0] {
            return self.height[0] + self.slope[0] * (t - self.time[0]);
        }
        if t >= self.time[n - 1] {
            return self.height[n - 1] + self.slope[n - 1] * (t - self.time[n - 1]);
        }
        let k = self.segment(t);
        let (t0, t1) = (self.time[k], self.time[k + 1]);
        let dt = t1 - t0;
        let s = (t - t0) / dt;
        let (h00, h10, h01, h11) = (
            (1.0 + 2.0 * s) * (1.0 - s) * (1.0 - s),
            s * (1.0 - s) * (1.0 - s),
            s * s * (3.0 - 2.0 * s),
            s * s * (s - 1.0),
        );
        h00 * self.height[k]
            + h10 * dt * self.slope[k]
            + h01 * self.height[k + 1]
            + h11 * dt * self.slope[k + 1]
    }

    /// Slope dh/dt at time `t`, m/s.
    pub fn derivative(&self, t: f64) -> f64 {
        let n = self.time.len();
        if t <= self.time[0] {
            return self.slope[0];
        }
        if t >= self.time[n - 1] {
            return self.slope[n - 1];
        }
        let k = self.segment(t);
        let (t0, t1) = (self.time[k], self.time[k + 1]);
        let dt = t1 - t0;
        let s = (t - t0) / dt;
        let (d00, d10, d01, d11) = (
            6.0 * s * s - 6.0 * s,
            3.0 * s * s - 4.0 * s + 1.0,
            -6.0 * s * s + 6.0 * s,
            3.0 * s * s - 2.0 * s,
        );
        (d00 * self.height[k] + d01 * self.height[k + 1]) / dt
            + d10 * self.slope[k]
            + d11 * self.slope[k + 1]
    }
}

/// Pool-adjacent-violators: the non-increasing sequence closest to `y` in
/// least squares (equal weights).
pub fn monotone_nonincreasing(y: &[f64]) -> Vec<f64> {
    // Blocks of (sum, count); merge while a block's mean exceeds the previous one's.
    let mut blocks: Vec<(f64, usize)> = Vec::with_capacity(y.len());
    for &v in y {
        blocks.push((v, 1));
        while blocks.len() > 1 {
            let (s1, n1) = blocks[blocks.len() - 1];
            let (s0, n0) = blocks[blocks.len() - 2];
            if s1 / n1 as f64 > s0 / n0 as f64 {
                blocks.pop();
                let last = blocks.len() - 1;
                blocks[last] = (s0 + s1, n0 + n1);
            } else {
                break;
            }
        }
    }
    blocks
        .iter()
        .flat_map(|&(s, n)| std::iter::repeat_n(s / n as f64, n))
        .collect()
}

/// Fritsch–Carlson monotone slopes of a monotone sequence: zero where the
/// adjacent secants differ in sign or one is zero, else their weighted
/// harmonic mean; one-sided three-point slopes at the ends, limited.
fn monotone_slopes(t: &[f64], y: &[f64]) -> Vec<f64> {
    let n = t.len();
    let h: Vec<f64> = t.windows(2).map(|w| w[1] - w[0]).collect();
    let d: Vec<f64> = (0..n - 1).map(|k| (y[k + 1] - y[k]) / h[k]).collect();
    let mut m = vec![0.0; n];
    for k in 1..n - 1 {
        if d[k - 1] * d[k] > 0.0 {
            let (w1, w2) = (2.0 * h[k] + h[k - 1], h[k] + 2.0 * h[k - 1]);
            m[k] = (w1 + w2) / (w1 / d[k - 1] + w2 / d[k]);
        }
    }
    let end = |h0: f64, h1: f64, d0: f64, d1: f64| {
        let s = ((2.0 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
        if s * d0 <= 0.0 {
            0.0
        } else if d0 * d1 <= 0.0 && s.abs() > 3.0 * d0.abs() {
            3.0 * d0
        } else {
            s
        }
    };
    if n == 2 {
        m[0] = d[0];
        m[1] = d[0];
    } else {
        m[0] = end(h[0], h[1], d[0], d[1]);
        m[n - 1] = end(h[n - 2], h[n - 3], d[n - 2], d[n - 3]);
    }
    m
}

/// Least-squares parabola through (t, y), evaluated at `at`: (value, slope).
fn local_parabola(t: &[f64], y: &[f64], at: f64) -> (f64, f64) {
    // Centre and scale the abscissa for conditioning.
    let scale = t
        .iter()
        .map(|x| (x - at).abs())
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let mut m = [[0.0f64; 3]; 3];
    let mut r = [0.0f64; 3];
    for (&x, &v) in t.iter().zip(y) {
        let u = (x - at) / scale;
        let p = [1.0, u, u * u];
        for i in 0..3 {
            for j in 0..3 {
                m[i][j] += p[i] * p[j];
            }
            r[i] += p[i] * v;
        }
    }
    let k = if t.len() >= 3 { 3 } else { 2 };
    match solve_small(&m, &r, k) {
        Some(c) => (c[0], c[1] / scale),
        None => (y[0], 0.0),
    }
}

/// Gaussian elimination with partial pivoting on the leading k×k block.
fn solve_small(m: &[[f64; 3]; 3], r: &[f64; 3], k: usize) -> Option<[f64; 3]> {
    let mut a = *m;
    let mut b = *r;
    for c in 0..k {
        let p = (c..k).max_by(|&i, &j| a[i][c].abs().total_cmp(&a[j][c].abs()))?;
        if a[p][c].abs() < 1e-300 {
            return None;
        }
        a.swap(c, p);
        b.swap(c, p);
        let pivot = a[c];
        for i in c + 1..k {
            let f = a[i][c] / pivot[c];
            for (x, p) in a[i][c..k].iter_mut().zip(&pivot[c..k]) {
                *x -= f * p;
            }
            b[i] -= f * b[c];
        }
    }
    let mut x = [0.0; 3];
    for c in (0..k).rev() {
        let s: f64 = (c + 1..k).map(|j| a[c][j] * x[j]).sum();
        x[c] = (b[c] - s) / a[c][c];
    }
    Some(x)
}

/// One point of the Kynch construction.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct KynchPoint {
    /// Time on the curve, s.
    pub time: f64,
    /// Smoothed interface height, m.
    pub height: f64,
    /// Intercept of the tangent on the height axis h_I, m.
    pub intercept: f64,
    /// Concentration just below the interface C = C0 H0/h_I, kg/m³.
    pub concentration: f64,
    /// Settling velocity −dh/dt, m/s.
    pub settling_velocity: f64,
    /// Batch solids flux G = C·v, kg/(m²·s).
    pub flux: f64,
}

/// The Kynch construction of one settling curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KynchAnalysis {
    /// One point per node with a positive settling velocity, up to the
    /// compression time if one was given, in time order; with a smoothing
    /// half-window w the last w nodes are left out (one-sided windows).
    pub points: Vec<KynchPoint>,
    /// The smoothed curve the tangents were taken on.
    pub smooth: SmoothCurve,
    /// Initial concentration C0, kg/m³, and height H0, m.
    pub initial_concentration: f64,
    pub initial_height: f64,
}

impl KynchAnalysis {
    /// The batch flux curve as a table of strictly increasing concentrations
    /// (points whose concentration does not exceed every earlier one are
    /// left out: the first point at C0 stands for the constant-rate period).
    pub fn flux_table(&self) -> (Vec<f64>, Vec<f64>) {
        let (mut c, mut g) = (Vec::new(), Vec::new());
        for p in &self.points {
            if c.last()
                .is_none_or(|&last: &f64| p.concentration > last * (1.0 + 1e-9))
            {
                c.push(p.concentration);
                g.push(p.flux);
            }
        }
        (c, g)
    }

    /// The range of concentrations the test covers, kg/m³.
    pub fn covered_range(&self) -> Option<(f64, f64)> {
        let (c, _) = self.flux_table();
        Some((*c.first()?, *c.last()?))
    }
}

/// The Kynch construction on `curve`, smoothed as `smoothing` says, over the
/// whole curve or up to the time `until` (the compression point).
pub fn kynch(
    curve: &SettlingCurve,
    smoothing: Smoothing,
    until: Option<f64>,
) -> Result<KynchAnalysis, AnalysisError> {
    let smooth = SmoothCurve::new(curve, smoothing);
    let (c0, h0) = (curve.initial_concentration, curve.initial_height);
    let mut points = Vec::new();
    // The last w nodes have one-sided windows, whose slopes are the least
    // accurate; at the start a batch curve is a straight line, where a
    // one-sided parabola is exact, so the first ones are kept.
    let n = smooth.time.len().saturating_sub(smoothing.half_window);
    for i in 0..n {
        let (t, h, s) = (smooth.time[i], smooth.height[i], smooth.slope[i]);
        if until.is_some_and(|u| t > u) {
            break;
        }
        if s >= 0.0 {
            continue;
        }
        let intercept = h - s * t;
        let concentration = c0 * h0 / intercept;
        points.push(KynchPoint {
            time: t,
            height: h,
            intercept,
            concentration,
            settling_velocity: -s,
            flux: concentration * -s,
        });
    }
    if points.len() < 2 {
        return Err(AnalysisError::NotCovered {
            what: "settling curve".into(),
            message: "fewer than two points with a falling interface".into(),
            hint: "the curve must show the interface settling; check the readings and units".into(),
        });
    }
    Ok(KynchAnalysis {
        points,
        smooth,
        initial_concentration: c0,
        initial_height: h0,
    })
}

/// How the compression point is found.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "method", rename_all = "snake_case")]
pub enum CompressionMethod {
    /// The point of largest curvature κ = h″/(1 + h′²)^{3/2} of the smoothed
    /// curve drawn in a unit box (t/t_last, h/H0): where the falling curve
    /// turns most sharply towards the horizontal. This is the graphical
    /// practice of bisecting the angle between the tangents to the hindered
    /// and compression branches [P]; it depends on the box, which is fixed
    /// here so the answer does not depend on units.
    MaxCurvature,
    /// Roberts (1949) (Mining Engineering 1, 61–64 [M]): in compression
    /// h − h∞ decays like e^(−K t), a straight line on a plot of ln(h − h∞)
    /// against t. A line is fitted to the last fifth of the points (at least
    /// 4) and extended back while each earlier point lies within
    /// `tolerance` (in ln units) of the line refitted through the points
    /// accepted so far; the earliest point on it is the compression point.
    /// `final_height` is h∞ (m); without it the last height less 1 % of the
    /// settled depth is used.
    Roberts {
        final_height: Option<f64>,
        tolerance: f64,
    },
}

/// The compression point of a settling curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CompressionPoint {
    /// Time t_c, s, and smoothed height h_c, m.
    pub time: f64,
    pub height: f64,
    /// Slope of the curve there, m/s.
    pub slope: f64,
    /// Kynch concentration of the tangent there, kg/m³.
    pub concentration: f64,
}

impl CompressionPoint {
    /// The point at time `t` on a smoothed curve (for a compression time read
    /// off a plot or given by the user).
    pub fn at_time(curve: &SettlingCurve, smooth: &SmoothCurve, t: f64) -> CompressionPoint {
        let (h, s) = (smooth.value(t), smooth.derivative(t).min(0.0));
        CompressionPoint {
            time: t,
            height: h,
            slope: s,
            concentration: curve.initial_concentration * curve.initial_height / (h - s * t),
        }
    }
}

/// Find the compression point of `curve` (smoothed as `smooth`).
pub fn compression_point(
    curve: &SettlingCurve,
    smooth: &SmoothCurve,
    method: CompressionMethod,
) -> Result<CompressionPoint, AnalysisError> {
    let n = smooth.time.len();
    let t_last = smooth.time[n - 1];
    let h0 = curve.initial_height;
    match method {
        CompressionMethod::MaxCurvature => {
            let mut best: Option<(f64, usize)> = None;
            for i in 1..n - 1 {
                let d2 = (smooth.slope[i + 1] - smooth.slope[i - 1])
                    / (smooth.time[i + 1] - smooth.time[i - 1]);
                let d1 = smooth.slope[i] * t_last / h0;
                let kappa = d2 * t_last * t_last / h0 / (1.0 + d1 * d1).powf(1.5);
                if kappa > 0.0 && best.is_none_or(|(k, _)| kappa > k) {
                    best = Some((kappa, i));
                }
            }
            let (_, i) = best.ok_or_else(|| AnalysisError::NotCovered {
                what: "compression point".into(),
                message: "the curve never bends towards the horizontal".into(),
                hint:
                    "continue the test until the interface slows down, or give the compression time"
                        .into(),
            })?;
            Ok(CompressionPoint::at_time(curve, smooth, smooth.time[i]))
        }
        CompressionMethod::Roberts {
            final_height,
            tolerance,
        } => {
            let h_last = smooth.height[n - 1];
            let h_inf = final_height.unwrap_or(h_last - 0.01 * (h0 - h_last));
            if !(h_inf > 0.0 && h_inf < h0) {
                return Err(AnalysisError::invalid(
                    "final height",
                    format!("h∞ = {h_inf} m must lie between 0 and the initial height {h0} m"),
                    "give the height the sediment reaches after a long time",
                ));
            }
            // (t, ln(h − h∞)) of the points above h∞, in time order.
            let pts: Vec<(f64, f64)> = (0..n)
                .filter(|&i| smooth.height[i] > h_inf)
                .map(|i| (smooth.time[i], (smooth.height[i] - h_inf).ln()))
                .collect();
            let tail = (pts.len() / 5).max(4);
            if pts.len() < tail + 2 {
                return Err(AnalysisError::NotCovered {
                    what: "compression point".into(),
                    message: format!(
                        "only {} points lie above the final height h∞ = {h_inf} m",
                        pts.len()
                    ),
                    hint: "the Roberts plot needs a long compression period; continue the test or give h∞".into(),
                });
            }
            let mut start = pts.len() - tail;
            while start > 0 {
                let (a, b) = line_fit(&pts[start..]);
                let (t, y) = pts[start - 1];
                if (y - (a + b * t)).abs() > tolerance {
                    break;
                }
                start -= 1;
            }
            Ok(CompressionPoint::at_time(curve, smooth, pts[start].0))
        }
    }
}

/// Least-squares line y = a + b t.
fn line_fit(p: &[(f64, f64)]) -> (f64, f64) {
    let n = p.len() as f64;
    let (mt, my) = (
        p.iter().map(|q| q.0).sum::<f64>() / n,
        p.iter().map(|q| q.1).sum::<f64>() / n,
    );
    let sxy: f64 = p.iter().map(|q| (q.0 - mt) * (q.1 - my)).sum();
    let sxx: f64 = p.iter().map(|q| (q.0 - mt).powi(2)).sum();
    let b = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    (my - b * mt, b)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pava_gives_the_closest_non_increasing_sequence() {
        // A rise of 0.2 between two equal-weight points pools them at their mean.
        assert_eq!(
            monotone_nonincreasing(&[1.0, 0.8, 1.0, 0.5]),
            vec![1.0, 0.9, 0.9, 0.5]
        );
        assert_eq!(
            monotone_nonincreasing(&[3.0, 2.0, 1.0]),
            vec![3.0, 2.0, 1.0]
        );
    }

    #[test]
    fn local_parabola_is_exact_for_a_parabola() {
        let t = [0.0, 1.0, 2.5, 4.0, 7.0];
        let y: Vec<f64> = t.iter().map(|x| 2.0 - 0.3 * x + 0.01 * x * x).collect();
        let (v, s) = local_parabola(&t, &y, 2.5);
        assert!((v - (2.0 - 0.75 + 0.0625)).abs() < 1e-12);
        assert!((s - (-0.3 + 0.05)).abs() < 1e-12);
    }

    #[test]
    fn csv_rows_are_read_with_units_and_bad_rows_located() {
        let text = "# invented test\ntime [min],height [mm]\n0,500\n1,450\n2,400\n";
        let c = SettlingCurve::from_csv_reader(text.as_bytes(), "t.csv", 0.5, 100.0).unwrap();
        assert_eq!(c.time, vec![0.0, 60.0, 120.0]);
        assert!((c.height[2] - 0.4).abs() < 1e-15);
        let bad = "time_s,interface_height_m\n0,0.5\n10,0.45\nx,0.4\n";
        let e = SettlingCurve::from_csv_reader(bad.as_bytes(), "t.csv", 0.5, 100.0).unwrap_err();
        let msg = e.to_string();
        assert!(
            msg.starts_with("t.csv:4:1: time `x` is not a number"),
            "{msg}"
        );
        let no_unit = "time,height\n0,1\n";
        let e = SettlingCurve::from_csv_reader(no_unit.as_bytes(), "u.csv", 0.5, 100.0)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("u.csv:1:1") && e.contains("does not say its unit"),
            "{e}"
        );
        let back = "time_s,height_m\n0,0.5\n10,0.45\n5,0.4\n";
        let e = SettlingCurve::from_csv_reader(back.as_bytes(), "b.csv", 0.5, 100.0)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("b.csv:4:1") && e.contains("does not come after"),
            "{e}"
        );
        let e = SettlingCurve::from_csv_path(Path::new("/nonexistent/lab.csv"), 0.5, 100.0)
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("/nonexistent/lab.csv: cannot open the file"),
            "{e}"
        );
        // Comment lines count in the line numbers.
        let commented = "# invented\n# second comment\ntime_s,height_m\n0,0.5\n10,x\n";
        let e = SettlingCurve::from_csv_reader(commented.as_bytes(), "c.csv", 0.5, 100.0)
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("c.csv:5:2: height `x`"), "{e}");
        let high = "time_s,height_cm\n0,50\n10,70\n20,40\n";
        let e = SettlingCurve::from_csv_reader(high.as_bytes(), "h.csv", 0.5, 100.0)
            .unwrap_err()
            .to_string();
        assert!(e.contains("h.csv:3:2"), "{e}");
    }
}
