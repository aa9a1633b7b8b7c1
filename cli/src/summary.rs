//! The plain-text summary `turbid check` prints: what a practitioner wants to
//! see before a run, every number with its unit.

use std::fmt::Write;
use std::path::Path;
use turbid_engine::particles::geometry::Section;
use turbid_engine::particles::kernel::window_size;
use turbid_engine::scenario::Setup;
use turbid_engine::scenario::resolve::{HinderedChoice, Shape};

pub fn render(file: &Path, s: &Setup) -> String {
    let mut o = String::new();
    let phi0 = s.initial_volume_fraction;
    let rho_s = s.mean_solid_density();
    let conc = phi0 * rho_s;
    let wt = conc / (conc + (1.0 - phi0) * s.fluid.density);
    let _ = writeln!(o, "{}: valid scenario", file.display());
    if !s.title.is_empty() {
        let _ = writeln!(o, "  {}", s.title);
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "Fluid     {}", s.fluid_source);
    let _ = writeln!(
        o,
        "          density {:.3} kg/m³, viscosity {:.5} mPa·s, kinematic viscosity {:.5} mm²/s",
        s.fluid.density,
        s.fluid.viscosity * 1e3,
        s.fluid.kinematic_viscosity() * 1e6
    );
    match &s.thickener {
        None => {
            let _ = writeln!(
                o,
                "Vessel    batch column, fill height {:.3} m, {} (area {:.4e} m²)",
                s.column.height, s.column.description, s.column.area
            );
            let _ = writeln!(
                o,
                "Loading   φ0 = {:.4} ({:.2} vol%) = {:.1} g/L = {:.2} wt%; maximum packing {:.3}",
                phi0,
                phi0 * 100.0,
                conc,
                wt * 100.0,
                s.max_packing
            );
        }
        Some(op) => {
            let _ = writeln!(
                o,
                "Vessel    continuous thickener, {:.3} m floor to overflow lip, feed at {:.3} m, {} (area {:.4e} m²)",
                s.column.height, op.feed_level, s.column.description, s.column.area
            );
            let _ = writeln!(
                o,
                "Start     {:.1} g/L of solids in the tank; maximum packing {:.3}",
                conc, s.max_packing
            );
            let p = op.at(0.0);
            let _ = writeln!(
                o,
                "Feed      {:.2} m³/h at {:.3} g/L = {:.3} t/h of solids at t = 0{}",
                p.feed_flow * 3600.0,
                op.feed_concentration(0.0),
                p.feed_flow * op.feed_concentration(0.0) * 3.6,
                if op.next_change(-1.0).is_some() {
                    " (scheduled: changes during the run)"
                } else {
                    ""
                }
            );
            let _ = writeln!(
                o,
                "Outlets   underflow {:.2} m³/h (q_u = {:.4} m/h down), overflow {:.2} m³/h (q_e = {:.4} m/h up) at t = 0",
                p.underflow_flow * 3600.0,
                p.underflow_velocity() * 3600.0,
                p.overflow_flow * 3600.0,
                p.overflow_velocity() * 3600.0
            );
            let _ = writeln!(
                o,
                "Blanket   the highest level where the solids reach {:.3} g/L",
                op.blanket_threshold * op.mean_density()
            );
        }
    }
    let hindered = match s.hindered {
        HinderedChoice::RichardsonZaki => "Richardson–Zaki v = v_t (1 − φ)^n".to_string(),
        HinderedChoice::MichaelsBolger => "Michaels–Bolger type v = v_t (1 − φ/φmax)^n".to_string(),
        HinderedChoice::Vesilind { v0, k } => format!(
            "Vesilind v = v0 exp(−k C), v0 = {:.3} m/h, k = {:.4} m³/kg",
            v0 * 3600.0,
            k
        ),
        HinderedChoice::Takacs {
            v0_max,
            v0,
            r_hindered,
            r_flocculant,
            min_concentration,
        } => format!(
            "Takács v = min(v0′, v0[e^(−r_h(C − C_min)) − e^(−r_p(C − C_min))]), v0′ = {:.1} m/d, \
             v0 = {:.1} m/d, r_h = {:.3e} m³/kg, r_p = {:.3e} m³/kg, C_min = {:.3} kg/m³",
            v0_max * 86400.0,
            v0 * 86400.0,
            r_hindered,
            r_flocculant,
            min_concentration
        ),
    };
    let _ = writeln!(o, "Hindered  {hindered}");
    for (i, sp) in s.species.iter().enumerate() {
        let shape = match sp.shape {
            Shape::Sphere => "spheres".to_string(),
            Shape::NonSpherical { sphericity } => format!("sphericity {sphericity}"),
            Shape::NaturalGrains => "natural grains".to_string(),
        };
        let n = s.classes.iter().filter(|c| c.species == i).count();
        let law = s
            .classes
            .iter()
            .find(|c| c.species == i)
            .map(|c| c.drag.name())
            .unwrap_or("-");
        let _ = writeln!(
            o,
            "Species   {}: {:.0} kg/m³, {shape}, {:.2} % of solids volume, {n} size class{}, drag {law}",
            sp.name,
            sp.density,
            sp.volume_share * 100.0,
            if n == 1 { "" } else { "es" }
        );
    }
    let _ = writeln!(o);
    let w = s
        .species
        .iter()
        .map(|sp| sp.name.chars().count())
        .max()
        .unwrap_or(7)
        .clamp(7, 28);
    let _ = writeln!(
        o,
        "{:>5}  {:<w$} {:>10} {:>9} {:>11} {:>10} {:>10} {:>6} {:>15}",
        "class",
        "species",
        "d [µm]",
        "vol [%]",
        "v_t [mm/s]",
        "Re_t [-]",
        "τ_p [ms]",
        "n [-]",
        "v_h(φ0) [mm/s]"
    );
    for (i, c) in s.classes.iter().enumerate() {
        let name: String = s.species[c.species].name.chars().take(w).collect();
        let _ = writeln!(
            o,
            "{:>5}  {:<w$} {:>10} {:>9} {:>11} {:>10} {:>10} {:>6.3} {:>15}",
            i + 1,
            name,
            sig(c.diameter * 1e6),
            sig(c.volume_share * 100.0),
            sig(c.terminal.velocity * 1e3),
            sig(c.terminal.reynolds),
            sig(c.relaxation_time * 1e3),
            c.exponent,
            sig(s.initial_hindered_velocity(c) * 1e3)
        );
    }
    let _ = writeln!(o);
    // What the particle engine starts with: the concentration window and the
    // Courant limit on it for the fastest class.
    let section = Section::of_column(&s.column);
    let (a, b) = window_size(
        &section,
        s.column.height,
        s.run.parcels,
        s.numerics.neighbours,
        s.numerics.kernel_aspect,
    );
    let vmax = s
        .classes
        .iter()
        .map(|c| c.terminal.velocity)
        .fold(0.0, f64::max);
    let _ = writeln!(
        o,
        "Time step {} s to start (Courant {} on a {:.2} mm window, {:.1} mm across, fastest class)",
        sig((s.numerics.courant * b / vmax).min(s.run.output_interval)),
        s.numerics.courant,
        b * 1e3,
        2.0 * a * 1e3
    );
    // Records at t = 0, every interval, and at the end time.
    let records = (s.run.end_time / s.run.output_interval - 1e-9).ceil() as u64 + 1;
    let _ = writeln!(
        o,
        "Run       end time {:.1} s, a record every {:.2} s ({records} records), {} parcels, seed {}",
        s.run.end_time, s.run.output_interval, s.run.parcels, s.run.seed
    );
    let _ = writeln!(
        o,
        "Output    {} ({} height bins)",
        s.output.file.display(),
        s.output.height_bins
    );
    for w in &s.warnings {
        let loc = match (w.line, w.column) {
            (Some(l), Some(c)) => format!("{}:{l}:{c}: ", file.display()),
            _ => String::new(),
        };
        let _ = writeln!(o, "warning: {loc}`{}`: {}", w.key, w.message);
    }
    o
}

/// Four significant digits: fixed notation for ordinary magnitudes, scientific
/// for very small or large ones, so no value prints as 0.00000.
fn sig(v: f64) -> String {
    let a = v.abs();
    if v == 0.0 {
        "0".to_string()
    } else if (1e-3..1e5).contains(&a) {
        let decimals = (3 - a.log10().floor() as i32).max(0) as usize;
        format!("{v:.decimals$}")
    } else {
        format!("{v:.3e}")
    }
}
