//! Plots as PNG and SVG, pure Rust: plotters with its bitmap and SVG
//! backends, and text drawn through ab_glyph from the DejaVu Sans bundled in
//! `cli/assets/` (so no fontconfig or freetype is linked).
//!
//! Each plot is a [`Figure`]: plain data in display units plus a `draw` that
//! works on any plotters backend, so one figure gives the PNG, the SVG file
//! and the inline SVG of the HTML report. The figures live in [`figures`].

pub mod figures;

use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::{Path, PathBuf};
use std::sync::Once;

/// The bundled font (Bitstream Vera licence, `assets/LICENSE-DejaVu.txt`).
static FONT: &[u8] = include_bytes!("../../assets/DejaVuSans.ttf");
/// The family name every figure asks for.
pub const FAMILY: &str = "sans-serif";

/// Register the bundled font once, before any text is drawn.
fn register_font() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The font is compiled in and known good; a failure here is a bug.
        plotters::style::register_font(FAMILY, FontStyle::Normal, FONT)
            .unwrap_or_else(|_| panic!("the bundled DejaVu Sans does not load"));
    });
}

/// A drawing error as text (plotters' errors are generic over the backend).
pub fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// Something that can draw itself on any plotters backend.
pub trait Figure {
    /// File name without extension, e.g. `settling-curve`.
    fn name(&self) -> &str;
    /// Pixel size of the PNG (and the SVG's width and height).
    fn size(&self) -> (u32, u32) {
        (900, 600)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String>;
}

/// Output formats of `write`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    Png,
    Svg,
}

/// Write `figure` into `dir` in each of `formats`; returns the files written.
pub fn write<F: Figure>(
    figure: &F,
    dir: &Path,
    formats: &[Format],
) -> Result<Vec<PathBuf>, String> {
    register_font();
    let mut written = Vec::new();
    for format in formats {
        let path = dir.join(format!(
            "{}.{}",
            figure.name(),
            match format {
                Format::Png => "png",
                Format::Svg => "svg",
            }
        ));
        match format {
            Format::Png => {
                let root = BitMapBackend::new(&path, figure.size()).into_drawing_area();
                root.fill(&WHITE).map_err(err)?;
                figure.draw(&root)?;
                root.present()
                    .map_err(|e| format!("cannot write {}: {e}", path.display()))?;
            }
            Format::Svg => {
                let svg = svg_string(figure)?;
                std::fs::write(&path, svg)
                    .map_err(|e| format!("cannot write {}: {e}", path.display()))?;
            }
        }
        written.push(path);
    }
    Ok(written)
}

/// The figure as SVG text (for files and for inlining in the HTML report).
pub fn svg_string<F: Figure>(figure: &F) -> Result<String, String> {
    register_font();
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, figure.size()).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        figure.draw(&root)?;
        root.present().map_err(err)?;
    }
    Ok(buf)
}

/// A time axis in a unit that suits its span: s, min or h.
#[derive(Debug, Clone, Copy)]
pub struct TimeUnit {
    pub label: &'static str,
    pub seconds: f64,
}

impl TimeUnit {
    pub fn for_span(t_max: f64) -> TimeUnit {
        if t_max > 3.0 * 3600.0 {
            TimeUnit {
                label: "h",
                seconds: 3600.0,
            }
        } else if t_max > 300.0 {
            TimeUnit {
                label: "min",
                seconds: 60.0,
            }
        } else {
            TimeUnit {
                label: "s",
                seconds: 1.0,
            }
        }
    }
}

/// Line colours, distinguishable and printable.
pub fn series_colour(i: usize) -> RGBColor {
    const COLOURS: [RGBColor; 8] = [
        RGBColor(31, 119, 180),
        RGBColor(214, 39, 40),
        RGBColor(44, 160, 44),
        RGBColor(148, 103, 189),
        RGBColor(255, 127, 14),
        RGBColor(140, 86, 75),
        RGBColor(227, 119, 194),
        RGBColor(23, 190, 207),
    ];
    COLOURS[i % COLOURS.len()]
}
