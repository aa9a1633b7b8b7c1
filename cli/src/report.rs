//! `turbid report`: one run, curve analysis, sizing or fit as a single
//! self-contained HTML file: the plots as inline SVG, the key numbers, the
//! full text output, the inputs and, for design outputs, the caution. No
//! external resources (no scripts, fonts or style sheets from elsewhere).

use crate::design::{Failure, Outcome};
use std::fmt::Write as _;
use std::path::Path;
use turbid_engine::analysis::CAUTION;

/// Escape text for HTML element content and attribute values.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

const STYLE: &str = "body{font-family:sans-serif;max-width:1100px;margin:2em auto;padding:0 1em;\
color:#222;line-height:1.4}h1{font-size:1.6em}h2{font-size:1.25em;margin-top:1.8em;\
border-bottom:1px solid #ccc}table{border-collapse:collapse}td,th{padding:.25em .8em;\
border-bottom:1px solid #e4e4e4;text-align:left;vertical-align:top}pre{background:#f6f6f6;\
padding:.8em;overflow-x:auto;white-space:pre-wrap;font-size:.85em}figure{margin:1em 0}figure svg{max-width:100%;\
height:auto;border:1px solid #eee}.caution{border:2px solid #b35900;background:#fff4e6;\
padding:.8em 1em;margin:1.5em 0}footer{margin-top:3em;font-size:.8em;color:#666}";

/// The report as HTML text.
pub fn render(outcome: &Outcome, command: &str) -> Result<String, Failure> {
    let mut h = String::new();
    let title = escape(&outcome.title);
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{title}</title>\n\
         <style>{STYLE}</style>\n</head>\n<body>\n<h1>{title}</h1>\n"
    );
    if outcome.design {
        let _ = writeln!(
            h,
            "<div class=\"caution\" id=\"caution\"><strong>Caution.</strong> {}</div>",
            escape(CAUTION)
        );
    }
    h.push_str("<h2>Key numbers</h2>\n<table id=\"key-numbers\">\n");
    for (k, v) in &outcome.key_numbers {
        let _ = writeln!(h, "<tr><th>{}</th><td>{}</td></tr>", escape(k), escape(v));
    }
    h.push_str("</table>\n<h2>Plots</h2>\n");
    for f in &outcome.figures {
        let svg = f
            .svg()
            .map_err(|e| Failure::output(format!("error: plot {}: {e}", f.name())))?;
        let _ = writeln!(
            h,
            "<figure id=\"{}\">\n{}\n</figure>",
            escape(f.name()),
            svg.trim()
        );
    }
    let _ = writeln!(
        h,
        "<h2>Results</h2>\n<pre id=\"results\">{}</pre>",
        escape(&outcome.text)
    );
    h.push_str("<h2>Inputs</h2>\n");
    let _ = writeln!(h, "<p>Command: <code>{}</code></p>", escape(command));
    for (what, text) in &outcome.inputs {
        let _ = writeln!(
            h,
            "<h3>{}</h3>\n<pre class=\"input\">{}</pre>",
            escape(what),
            escape(text)
        );
    }
    let _ = writeln!(
        h,
        "<footer>Written by turbid {} (self-contained: no external resources).</footer>\n</body>\n</html>",
        env!("CARGO_PKG_VERSION")
    );
    Ok(h)
}

/// Write the report to `path` (atomically).
pub fn write(outcome: &Outcome, command: &str, path: &Path) -> Result<(), Failure> {
    let html = render(outcome, command)?;
    crate::atomic::write(path, html.as_bytes())
        .map_err(|e| Failure::output(format!("error: cannot write {}: {e}", path.display())))
}
