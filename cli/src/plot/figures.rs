//! The figures, each plain data in display units plus its drawing.

use super::{FAMILY, Figure, TimeUnit, err, series_colour};
use plotters::coord::Shift;
use plotters::prelude::*;

const CAPTION: u32 = 24;
const LABEL: u32 = 16;

/// How a settling-curve series is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// Measured readings: circles.
    Points,
    /// A simulated or fitted curve: a line.
    Line,
}

/// One series of (time s, height m).
#[derive(Debug, Clone)]
pub struct Series {
    pub label: String,
    pub time: Vec<f64>,
    pub height: Vec<f64>,
    pub mark: Mark,
}

/// Interface height against time, measured points and model lines.
pub struct SettlingCurveFigure {
    pub title: String,
    pub series: Vec<Series>,
    /// A marked point (the compression point), (time s, height m).
    pub marker: Option<(String, f64, f64)>,
}

impl Figure for SettlingCurveFigure {
    fn name(&self) -> &str {
        "settling-curve"
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let t_max = self
            .series
            .iter()
            .flat_map(|s| s.time.iter().copied())
            .fold(0.0, f64::max);
        let h_max = self
            .series
            .iter()
            .flat_map(|s| s.height.iter().copied())
            .fold(0.0, f64::max);
        let tu = TimeUnit::for_span(t_max);
        let mut chart = ChartBuilder::on(root)
            .caption(
                &self.title,
                (FAMILY, caption_size(&self.title, root.dim_in_pixel().0)),
            )
            .margin(15)
            .x_label_area_size(50)
            .y_label_area_size(70)
            .build_cartesian_2d(
                0.0..(t_max / tu.seconds).max(1e-9) * 1.02,
                0.0..h_max.max(1e-9) * 1.05,
            )
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc(format!("time [{}]", tu.label))
            .y_desc("interface height [m]")
            .label_style((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        for (i, s) in self.series.iter().enumerate() {
            let colour = series_colour(i);
            let pts = s
                .time
                .iter()
                .zip(&s.height)
                .map(|(&t, &h)| (t / tu.seconds, h));
            match s.mark {
                Mark::Points => chart
                    .draw_series(pts.map(|p| Circle::new(p, 4, colour.stroke_width(2))))
                    .map_err(err)?
                    .label(s.label.clone())
                    .legend(move |(x, y)| Circle::new((x + 10, y), 4, colour.stroke_width(2))),
                Mark::Line => chart
                    .draw_series(LineSeries::new(pts, colour.stroke_width(2)))
                    .map_err(err)?
                    .label(s.label.clone())
                    .legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2))
                    }),
            };
        }
        if let Some((label, t, h)) = &self.marker {
            chart
                .draw_series(std::iter::once(TriangleMarker::new(
                    (t / tu.seconds, *h),
                    8,
                    BLACK.filled(),
                )))
                .map_err(err)?
                .label(label.clone())
                .legend(|(x, y)| TriangleMarker::new((x + 10, y), 6, BLACK.filled()));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        Ok(())
    }
}

/// Solids concentration over height and time, with a colour bar.
pub struct HeatMapFigure {
    pub title: String,
    /// Frame times, s.
    pub time: Vec<f64>,
    /// Slab boundaries, m (nz + 1).
    pub z_edges: Vec<f64>,
    /// Concentration per frame and slab, g/L, frame-major (nt × nz).
    pub values: Vec<f64>,
    /// A level per frame, m, drawn over the map (the interface of a batch
    /// test, the blanket of a thickener), and its legend label.
    pub interface: Vec<f64>,
    pub line_label: String,
}

impl Figure for HeatMapFigure {
    fn name(&self) -> &str {
        "concentration-map"
    }
    fn size(&self) -> (u32, u32) {
        (1000, 600)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let nt = self.time.len();
        let nz = self.z_edges.len().saturating_sub(1);
        if nt == 0 || nz == 0 {
            return Err("no frames to draw".into());
        }
        let t_max = self.time[nt - 1];
        let tu = TimeUnit::for_span(t_max);
        let vmax = self.values.iter().copied().fold(0.0, f64::max).max(1e-12);
        let root = root
            .titled(
                &self.title,
                (FAMILY, caption_size(&self.title, root.dim_in_pixel().0)),
            )
            .map_err(err)?;
        let (main, bar) = root.split_horizontally(root.dim_in_pixel().0 - 130);
        let mut chart = ChartBuilder::on(&main)
            .margin(15)
            .x_label_area_size(50)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..(t_max / tu.seconds).max(1e-9), 0.0..self.z_edges[nz])
            .map_err(err)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc(format!("time [{}]", tu.label))
            .y_desc("height [m]")
            .label_style((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        // Each frame holds until the next; the last one gets the mean width.
        let dt_last = if nt > 1 {
            (self.time[nt - 1] - self.time[0]) / (nt - 1) as f64
        } else {
            1.0
        };
        let cells = (0..nt).flat_map(|i| (0..nz).map(move |k| (i, k)));
        chart
            .draw_series(cells.map(|(i, k)| {
                let t0 = self.time[i] / tu.seconds;
                let t1 = if i + 1 < nt {
                    self.time[i + 1]
                } else {
                    (self.time[i] + dt_last).min(t_max)
                } / tu.seconds;
                let v = self.values[i * nz + k];
                Rectangle::new(
                    [(t0, self.z_edges[k]), (t1.max(t0), self.z_edges[k + 1])],
                    ViridisRGB::get_color_normalized(v, 0.0, vmax).filled(),
                )
            }))
            .map_err(err)?;
        if self.interface.len() == nt {
            chart
                .draw_series(LineSeries::new(
                    self.time
                        .iter()
                        .zip(&self.interface)
                        .map(|(&t, &h)| (t / tu.seconds, h)),
                    WHITE.stroke_width(2),
                ))
                .map_err(err)?
                .label(self.line_label.clone())
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], WHITE.stroke_width(2))
                });
            chart
                .configure_series_labels()
                .position(SeriesLabelPosition::UpperRight)
                .background_style(BLACK.mix(0.5))
                .label_font((FAMILY, LABEL).into_font().color(&WHITE))
                .draw()
                .map_err(err)?;
        }
        // Colour bar.
        let mut cb = ChartBuilder::on(&bar)
            .margin_top(15)
            .margin_bottom(65)
            .margin_right(10)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..1.0, 0.0..vmax)
            .map_err(err)?;
        cb.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_desc("solids [g/L]")
            .label_style((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        let steps = 100;
        cb.draw_series((0..steps).map(|j| {
            let (a, b) = (
                vmax * j as f64 / steps as f64,
                vmax * (j + 1) as f64 / steps as f64,
            );
            Rectangle::new(
                [(0.0, a), (1.0, b)],
                ViridisRGB::get_color_normalized(0.5 * (a + b), 0.0, vmax).filled(),
            )
        }))
        .map_err(err)?;
        Ok(())
    }
}

/// Per-class concentration profiles at chosen times, one panel per time.
pub struct ProfilesFigure {
    pub title: String,
    /// Slab centres, m.
    pub z: Vec<f64>,
    /// Class labels (e.g. "98 µm").
    pub classes: Vec<String>,
    /// For each chosen time: (time s, per class the profile in g/L).
    pub panels: Vec<(f64, Vec<Vec<f64>>)>,
}

impl Figure for ProfilesFigure {
    fn name(&self) -> &str {
        "profiles"
    }
    fn size(&self) -> (u32, u32) {
        (320 * self.panels.len().max(1) as u32 + 80, 600)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let size = caption_size(&self.title, root.dim_in_pixel().0);
        let root = root.titled(&self.title, (FAMILY, size)).map_err(err)?;
        let cmax = self
            .panels
            .iter()
            .flat_map(|(_, p)| p.iter().flatten().copied())
            .fold(0.0, f64::max)
            .max(1e-12);
        let z_top = self.z.last().copied().unwrap_or(1.0) + self.z.first().copied().unwrap_or(0.0);
        let areas = root.split_evenly((1, self.panels.len().max(1)));
        let t_max = self.panels.iter().map(|p| p.0).fold(0.0, f64::max);
        let tu = TimeUnit::for_span(t_max);
        for (n, ((t, profiles), area)) in self.panels.iter().zip(&areas).enumerate() {
            let mut chart = ChartBuilder::on(area)
                .caption(
                    format!("t = {} {}", trimmed(t / tu.seconds), tu.label),
                    (FAMILY, LABEL + 2),
                )
                .margin(10)
                .x_label_area_size(45)
                .y_label_area_size(if n == 0 { 65 } else { 40 })
                .build_cartesian_2d(0.0..cmax * 1.05, 0.0..z_top)
                .map_err(err)?;
            let mut mesh = chart.configure_mesh();
            mesh.x_desc("solids [g/L]")
                .label_style((FAMILY, LABEL - 2))
                .x_labels(4);
            if n == 0 {
                mesh.y_desc("height [m]");
            }
            mesh.draw().map_err(err)?;
            for (i, (profile, label)) in profiles.iter().zip(&self.classes).enumerate() {
                let colour = series_colour(i);
                let s = chart
                    .draw_series(LineSeries::new(
                        profile.iter().zip(&self.z).map(|(&c, &z)| (c, z)),
                        colour.stroke_width(2),
                    ))
                    .map_err(err)?;
                if n == 0 {
                    s.label(label.clone()).legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2))
                    });
                }
            }
            if n == 0 {
                chart
                    .configure_series_labels()
                    .position(SeriesLabelPosition::UpperRight)
                    .background_style(WHITE.mix(0.85))
                    .border_style(BLACK)
                    .label_font((FAMILY, LABEL - 2))
                    .draw()
                    .map_err(err)?;
            }
        }
        Ok(())
    }
}

/// The underflow operating line of a tank and its state point, in the
/// units of [`FluxFigure`].
pub struct OperatingLine {
    /// (0, applied flux): where the line meets the flux axis.
    pub start: (f64, f64),
    /// (C_u, 0): where it meets the concentration axis.
    pub end: (f64, f64),
    /// (C_f, overflow rate × C_f).
    pub state_point: (f64, f64),
    pub label: String,
}

/// The batch flux curve with the Kynch points, the underflow operating line,
/// the state point and the limiting flux.
pub struct FluxFigure {
    pub title: String,
    /// The flux curve: concentration g/L, flux kg/(m²·h).
    pub curve: Vec<(f64, f64)>,
    /// Kynch points (same units), drawn as circles.
    pub points: Vec<(f64, f64)>,
    pub operating: Option<OperatingLine>,
    /// The Yoshioka tangent: from (0, G_L) to (C_u, 0).
    pub tangent: Option<((f64, f64), (f64, f64))>,
}

impl Figure for FluxFigure {
    fn name(&self) -> &str {
        "flux-curve"
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let mut c_max = self.curve.iter().map(|p| p.0).fold(0.0, f64::max);
        let mut g_max = self.curve.iter().map(|p| p.1).fold(0.0, f64::max);
        for p in &self.points {
            c_max = c_max.max(p.0);
            g_max = g_max.max(p.1);
        }
        if let Some(op) = &self.operating {
            c_max = c_max.max(op.end.0);
            g_max = g_max.max(op.start.1).max(op.state_point.1);
        }
        if let Some((a, b)) = &self.tangent {
            c_max = c_max.max(b.0);
            g_max = g_max.max(a.1);
        }
        let mut chart = ChartBuilder::on(root)
            .caption(
                &self.title,
                (FAMILY, caption_size(&self.title, root.dim_in_pixel().0)),
            )
            .margin(15)
            .x_label_area_size(50)
            .y_label_area_size(75)
            .build_cartesian_2d(0.0..c_max.max(1e-9) * 1.05, 0.0..g_max.max(1e-9) * 1.1)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc("solids concentration [g/L]")
            .y_desc("solids flux [kg/(m²·h)]")
            .label_style((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        let blue = series_colour(0);
        chart
            .draw_series(LineSeries::new(
                self.curve.iter().copied(),
                blue.stroke_width(2),
            ))
            .map_err(err)?
            .label("batch flux curve")
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 20, y)], blue.stroke_width(2))
            });
        if !self.points.is_empty() {
            let grey = RGBColor(90, 90, 90);
            chart
                .draw_series(
                    self.points
                        .iter()
                        .map(|&p| Circle::new(p, 3, grey.stroke_width(1))),
                )
                .map_err(err)?
                .label("Kynch construction")
                .legend(move |(x, y)| Circle::new((x + 10, y), 3, grey.stroke_width(1)));
        }
        if let Some((a, b)) = self.tangent {
            let green = series_colour(2);
            chart
                .draw_series(LineSeries::new([a, b], green.stroke_width(2)))
                .map_err(err)?
                .label(format!("limiting flux {:.1} kg/(m²·h)", a.1))
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], green.stroke_width(2))
                });
        }
        if let Some(OperatingLine {
            start: a,
            end: b,
            state_point: s,
            label,
        }) = &self.operating
        {
            let red = series_colour(1);
            chart
                .draw_series(LineSeries::new([*a, *b], red.stroke_width(2)))
                .map_err(err)?
                .label("underflow operating line")
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], red.stroke_width(2))
                });
            chart
                .draw_series(LineSeries::new(
                    [(0.0, 0.0), *s],
                    red.mix(0.6).stroke_width(1),
                ))
                .map_err(err)?
                .label("overflow line")
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], red.mix(0.6).stroke_width(1))
                });
            chart
                .draw_series(std::iter::once(Circle::new(*s, 6, red.filled())))
                .map_err(err)?
                .label(label.clone())
                .legend(move |(x, y)| Circle::new((x + 10, y), 5, red.filled()));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        Ok(())
    }
}

/// A number with at most three decimals and no trailing zeros ("2.5", "10").
fn trimmed(x: f64) -> String {
    let s = format!("{x:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s.is_empty() || s == "-" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// A caption font size that fits `title` into `width` pixels (DejaVu Sans
/// runs up to about 0.62 em per character in mixed text, as measured on
/// the demo's titles), at most [`CAPTION`].
fn caption_size(title: &str, width: u32) -> u32 {
    let chars = title.chars().count().max(1) as f64;
    ((0.92 * width as f64 / (0.62 * chars)) as u32).clamp(12, CAPTION)
}

/// Thickener transients: blanket level (top panel) and the outlet
/// concentrations (bottom panel) against time.
pub struct TransientsFigure {
    pub title: String,
    /// Sample times, s.
    pub time: Vec<f64>,
    /// Blanket level, m, and the feed level and overflow lip (drawn as
    /// reference lines), m.
    pub blanket: Vec<f64>,
    pub feed_level: Option<f64>,
    pub overflow_level: Option<f64>,
    /// Underflow and overflow solids concentration, g/L.
    pub underflow: Vec<f64>,
    pub overflow: Vec<f64>,
}

impl Figure for TransientsFigure {
    fn name(&self) -> &str {
        "thickener-transients"
    }
    fn size(&self) -> (u32, u32) {
        (900, 800)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let root = root
            .titled(
                &self.title,
                (FAMILY, caption_size(&self.title, root.dim_in_pixel().0)),
            )
            .map_err(err)?;
        let (top, bottom) = root.split_vertically(root.dim_in_pixel().1 / 2);
        let t_max = self.time.last().copied().unwrap_or(1.0);
        let tu = TimeUnit::for_span(t_max);
        let x = 0.0..(t_max / tu.seconds).max(1e-9);
        let h_max = self
            .blanket
            .iter()
            .copied()
            .chain(self.overflow_level)
            .chain(self.feed_level)
            .fold(0.0, f64::max)
            .max(1e-9);
        let mut up = ChartBuilder::on(&top)
            .margin(15)
            .x_label_area_size(45)
            .y_label_area_size(70)
            .build_cartesian_2d(x.clone(), 0.0..h_max * 1.08)
            .map_err(err)?;
        up.configure_mesh()
            .x_desc(format!("time [{}]", tu.label))
            .y_desc("blanket level [m]")
            .label_style((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        let t = |i: usize| self.time[i] / tu.seconds;
        let c0 = series_colour(0);
        up.draw_series(LineSeries::new(
            self.blanket.iter().enumerate().map(|(i, &h)| (t(i), h)),
            c0.stroke_width(2),
        ))
        .map_err(err)?
        .label("blanket level")
        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], c0.stroke_width(2)));
        for (level, label, colour) in [
            (self.feed_level, "feed level", RGBColor(120, 120, 120)),
            (self.overflow_level, "overflow lip", BLACK),
        ] {
            if let Some(l) = level {
                up.draw_series(DashedLineSeries::new(
                    [(x.start, l), (x.end, l)],
                    6,
                    4,
                    colour.stroke_width(1),
                ))
                .map_err(err)?
                .label(label)
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(1))
                });
            }
        }
        up.configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        let c_max = self
            .underflow
            .iter()
            .chain(&self.overflow)
            .copied()
            .fold(0.0, f64::max)
            .max(1e-9);
        let mut down = ChartBuilder::on(&bottom)
            .margin(15)
            .x_label_area_size(45)
            .y_label_area_size(70)
            .build_cartesian_2d(x, 0.0..c_max * 1.08)
            .map_err(err)?;
        down.configure_mesh()
            .x_desc(format!("time [{}]", tu.label))
            .y_desc("solids [g/L]")
            .label_style((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        for (values, label, colour) in [
            (&self.underflow, "underflow", series_colour(1)),
            (&self.overflow, "overflow", series_colour(2)),
        ] {
            down.draw_series(LineSeries::new(
                values.iter().enumerate().map(|(i, &c)| (t(i), c)),
                colour.stroke_width(2),
            ))
            .map_err(err)?
            .label(label)
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2))
            });
        }
        down.configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font((FAMILY, LABEL))
            .draw()
            .map_err(err)?;
        Ok(())
    }
}
