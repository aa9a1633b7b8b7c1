//! Physical quantities at the edge of the program: a number with its unit,
//! written in the value (`"250 µm"`, `"20 °C"`, `"120 g/L"`), converted to SI on
//! the way in. A bare number is refused for a dimensional quantity, so that a
//! value is never silently read in the wrong unit.

use schemars::{JsonSchema, Schema, SchemaGenerator, json_schema};
use serde::de::{self, Deserializer, Visitor};
use serde::{Deserialize, Serialize, Serializer};
use std::borrow::Cow;
use std::fmt;

/// One accepted spelling of a unit and how to reach SI: `si = value·scale + offset`.
struct Unit {
    spellings: &'static [&'static str],
    scale: f64,
    offset: f64,
}

const fn u(spellings: &'static [&'static str], scale: f64) -> Unit {
    Unit {
        spellings,
        scale,
        offset: 0.0,
    }
}

/// What kind of quantity a value is; each kind has its own table of units.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Length,
    Area,
    Density,
    Viscosity,
    Temperature,
    Time,
    Velocity,
    MassConcentration,
    VolumeFlow,
    MassFlow,
    SpecificVolume,
    LinearDragCoefficient,
    QuadraticDragCoefficient,
    Diffusivity,
    Pressure,
}

const HOUR: f64 = 3600.0;
const DAY: f64 = 86400.0;

impl Kind {
    fn units(self) -> &'static [Unit] {
        match self {
            Kind::Length => {
                const {
                    &[
                        u(&["m"], 1.0),
                        u(&["cm"], 1e-2),
                        u(&["mm"], 1e-3),
                        u(&["µm", "μm", "um", "micron", "microns"], 1e-6),
                        u(&["nm"], 1e-9),
                    ]
                }
            }
            Kind::Area => {
                const {
                    &[
                        u(&["m²", "m2"], 1.0),
                        u(&["cm²", "cm2"], 1e-4),
                        u(&["mm²", "mm2"], 1e-6),
                        u(&["ha"], 1e4),
                    ]
                }
            }
            Kind::Density => {
                const {
                    &[
                        u(&["kg/m³", "kg/m3", "g/L", "g/l"], 1.0),
                        u(
                            &[
                                "g/cm³", "g/cm3", "g/mL", "g/ml", "t/m³", "t/m3", "kg/L", "kg/l",
                            ],
                            1e3,
                        ),
                    ]
                }
            }
            Kind::Viscosity => {
                const {
                    &[
                        u(&["Pa·s", "Pa s", "Pa*s", "Pa.s"], 1.0),
                        u(&["mPa·s", "mPa s", "mPa*s", "mPa.s", "cP", "cp"], 1e-3),
                    ]
                }
            }
            Kind::Temperature => {
                const {
                    &[
                        Unit {
                            spellings: &["°C", "degC", "C"],
                            scale: 1.0,
                            offset: 273.15,
                        },
                        u(&["K"], 1.0),
                    ]
                }
            }
            Kind::Time => {
                const {
                    &[
                        u(&["s"], 1.0),
                        u(&["min"], 60.0),
                        u(&["h"], HOUR),
                        u(&["d", "day", "days"], DAY),
                    ]
                }
            }
            Kind::Velocity => {
                const {
                    &[
                        u(&["m/s"], 1.0),
                        u(&["cm/s"], 1e-2),
                        u(&["mm/s"], 1e-3),
                        u(&["µm/s", "μm/s", "um/s"], 1e-6),
                        u(&["m/h"], 1.0 / HOUR),
                        u(&["m/d"], 1.0 / DAY),
                    ]
                }
            }
            Kind::MassConcentration => {
                const {
                    &[
                        u(&["kg/m³", "kg/m3", "g/L", "g/l"], 1.0),
                        u(&["mg/L", "mg/l"], 1e-3),
                        u(&["t/m³", "t/m3", "kg/L", "kg/l"], 1e3),
                    ]
                }
            }
            Kind::VolumeFlow => {
                const {
                    &[
                        u(&["m³/s", "m3/s"], 1.0),
                        u(&["m³/h", "m3/h"], 1.0 / HOUR),
                        u(&["m³/d", "m3/d"], 1.0 / DAY),
                        u(&["L/s", "l/s"], 1e-3),
                        u(&["L/min", "l/min"], 1e-3 / 60.0),
                    ]
                }
            }
            Kind::MassFlow => {
                const {
                    &[
                        u(&["kg/s"], 1.0),
                        u(&["kg/h"], 1.0 / HOUR),
                        u(&["t/h"], 1e3 / HOUR),
                        u(&["t/d"], 1e3 / DAY),
                    ]
                }
            }
            Kind::SpecificVolume => const { &[u(&["m³/kg", "m3/kg", "L/g", "l/g"], 1.0)] },
            Kind::Pressure => const { &[u(&["Pa"], 1.0), u(&["kPa"], 1e3), u(&["MPa"], 1e6)] },
            Kind::Diffusivity => {
                const {
                    &[
                        u(&["m²/s", "m2/s"], 1.0),
                        u(&["cm²/s", "cm2/s"], 1e-4),
                        u(&["mm²/s", "mm2/s"], 1e-6),
                    ]
                }
            }
            Kind::LinearDragCoefficient => {
                const { &[u(&["N·s/m", "N s/m", "N*s/m", "kg/s"], 1.0)] }
            }
            Kind::QuadraticDragCoefficient => {
                const {
                    &[u(
                        &["N·s²/m²", "N s2/m2", "N*s^2/m^2", "N·s2/m2", "kg/m"],
                        1.0,
                    )]
                }
            }
        }
    }

    /// Name of the kind for messages.
    pub fn describe(self) -> &'static str {
        match self {
            Kind::Length => "a length",
            Kind::Area => "an area",
            Kind::Density => "a density",
            Kind::Viscosity => "a dynamic viscosity",
            Kind::Temperature => "a temperature",
            Kind::Time => "a time",
            Kind::Velocity => "a velocity",
            Kind::MassConcentration => "a mass concentration",
            Kind::VolumeFlow => "a volume flow",
            Kind::MassFlow => "a mass flow",
            Kind::SpecificVolume => "a specific volume",
            Kind::LinearDragCoefficient => "a linear drag coefficient",
            Kind::QuadraticDragCoefficient => "a quadratic drag coefficient",
            Kind::Diffusivity => "a diffusivity",
            Kind::Pressure => "a pressure (stress)",
        }
    }

    /// The SI unit, for messages and output attributes.
    pub fn si_unit(self) -> &'static str {
        self.units()
            .iter()
            .find(|u| u.scale == 1.0 && u.offset == 0.0)
            .map(|u| u.spellings[0])
            .unwrap_or("SI")
    }

    /// The main spelling of every accepted unit, e.g. `m, cm, mm, µm, nm`.
    pub fn accepted(self) -> String {
        self.units()
            .iter()
            .map(|u| u.spellings[0])
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// A typical value, used in hints.
    pub fn example(self) -> &'static str {
        match self {
            Kind::Length => "\"250 µm\"",
            Kind::Area => "\"350 m²\"",
            Kind::Density => "\"2650 kg/m³\"",
            Kind::Viscosity => "\"1.0 mPa·s\"",
            Kind::Temperature => "\"20 °C\"",
            Kind::Time => "\"30 min\"",
            Kind::Velocity => "\"2.5 m/h\"",
            Kind::MassConcentration => "\"120 g/L\"",
            Kind::VolumeFlow => "\"450 m³/h\"",
            Kind::MassFlow => "\"250 t/h\"",
            Kind::SpecificVolume => "\"0.45 L/g\"",
            Kind::LinearDragCoefficient => "\"2.8e-6 N·s/m\"",
            Kind::QuadraticDragCoefficient => "\"1.7e-5 N·s²/m²\"",
            Kind::Diffusivity => "\"1.0e-7 m²/s\"",
            Kind::Pressure => "\"2.5 Pa\"",
        }
    }

    /// A regular expression that matches the accepted spellings (for the JSON Schema).
    fn pattern(self) -> String {
        let mut alts: Vec<String> = self
            .units()
            .iter()
            .flat_map(|u| u.spellings.iter())
            .map(|s| regex_escape(s))
            .collect();
        // Longest first so that e.g. `mPa s` is tried before `Pa s` by simple engines.
        alts.sort_by_key(|s| std::cmp::Reverse(s.len()));
        format!(
            r"^\s*[-+]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][-+]?[0-9]+)?\s*({})\s*$",
            alts.join("|")
        )
    }
}

fn regex_escape(s: &str) -> String {
    let mut out = String::new();
    for c in s.chars() {
        if "\\.+*?()|[]{}^$/".contains(c) {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

/// Split `"  2.5e-3 mm "` into (2.5e-3, "mm"): the longest leading part that
/// reads as a number, then the rest as the unit.
fn split_number(text: &str) -> Option<(f64, &str)> {
    let t = text.trim();
    let mut best = None;
    for (i, _) in t.char_indices().chain(std::iter::once((t.len(), ' '))) {
        if i == 0 {
            continue;
        }
        let head = &t[..i];
        // `f64::from_str` accepts "inf", "NaN" and "infinity"; a leading letter is never a number here.
        if head.starts_with(|c: char| c.is_ascii_digit() || "+-.".contains(c))
            && let Ok(v) = head.trim().parse::<f64>()
        {
            best = Some((v, t[i..].trim()));
        }
    }
    best
}

/// Parse `text` as a quantity of `kind`; returns the SI value or a message
/// saying what was expected.
pub fn parse(text: &str, kind: Kind) -> Result<f64, String> {
    let Some((value, unit)) = split_number(text) else {
        return Err(format!(
            "expected {} such as {}, found \"{}\"",
            kind.describe(),
            kind.example(),
            text
        ));
    };
    if !value.is_finite() {
        return Err(format!("\"{text}\" is not a finite number"));
    }
    if unit.is_empty() {
        return Err(format!(
            "{} needs a unit, e.g. {} (accepted: {})",
            kind.describe(),
            kind.example(),
            kind.accepted()
        ));
    }
    for cand in kind.units() {
        if cand.spellings.contains(&unit) {
            return Ok(value * cand.scale + cand.offset);
        }
    }
    Err(format!(
        "unknown unit \"{unit}\" for {}; accepted: {}",
        kind.describe(),
        kind.accepted()
    ))
}

/// Format an SI value back into `unit` of `kind` (used by reports).
pub fn format_in(si: f64, kind: Kind, unit: &str) -> Option<f64> {
    kind.units()
        .iter()
        .find(|u| u.spellings.contains(&unit))
        .map(|u| (si - u.offset) / u.scale)
}

/// Deserialize a quantity string; a plain YAML number is refused with a hint.
fn deserialize_quantity<'de, D: Deserializer<'de>>(d: D, kind: Kind) -> Result<f64, D::Error> {
    struct V(Kind);
    impl<'de> Visitor<'de> for V {
        type Value = f64;
        fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
            write!(
                f,
                "{} with its unit, e.g. {}",
                self.0.describe(),
                self.0.example()
            )
        }
        fn visit_str<E: de::Error>(self, s: &str) -> Result<f64, E> {
            parse(s, self.0).map_err(E::custom)
        }
        fn visit_f64<E: de::Error>(self, v: f64) -> Result<f64, E> {
            Err(E::custom(format!(
                "{} needs a unit: write \"{v} {}\" or another accepted unit ({})",
                self.0.describe(),
                self.0.si_unit(),
                self.0.accepted()
            )))
        }
        fn visit_i64<E: de::Error>(self, v: i64) -> Result<f64, E> {
            self.visit_f64(v as f64)
        }
        fn visit_u64<E: de::Error>(self, v: u64) -> Result<f64, E> {
            self.visit_f64(v as f64)
        }
    }
    d.deserialize_any(V(kind))
}

fn quantity_schema(kind: Kind) -> Schema {
    json_schema!({
        "type": "string",
        "pattern": kind.pattern(),
        "description": format!(
            "{} with its unit, e.g. {}; accepted units: {}",
            kind.describe(),
            kind.example(),
            kind.accepted()
        ),
    })
}

macro_rules! quantity {
    ($(#[$doc:meta])* $name:ident, $kind:expr) => {
        $(#[$doc])*
        #[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
        pub struct $name(pub f64);

        impl $name {
            pub const KIND: Kind = $kind;
            /// Value in SI units.
            pub fn si(self) -> f64 {
                self.0
            }
        }

        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
                deserialize_quantity(d, $kind).map($name)
            }
        }

        impl Serialize for $name {
            fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
                s.serialize_str(&format!("{} {}", self.0, $kind.si_unit()))
            }
        }

        impl JsonSchema for $name {
            fn schema_name() -> Cow<'static, str> {
                stringify!($name).into()
            }
            fn json_schema(_: &mut SchemaGenerator) -> Schema {
                quantity_schema($kind)
            }
        }
    };
}

quantity!(
    /// A length in m (accepts m, cm, mm, µm, nm).
    Length,
    Kind::Length
);
quantity!(
    /// An area in m² (accepts m², cm², mm², ha).
    Area,
    Kind::Area
);
quantity!(
    /// A density in kg/m³ (accepts kg/m³, g/cm³, t/m³…).
    Density,
    Kind::Density
);
quantity!(
    /// A dynamic viscosity in Pa·s (accepts Pa·s, mPa·s, cP).
    Viscosity,
    Kind::Viscosity
);
quantity!(
    /// An absolute temperature in K (accepts °C and K).
    Temperature,
    Kind::Temperature
);
quantity!(
    /// A time in s (accepts s, min, h, d).
    Duration,
    Kind::Time
);
quantity!(
    /// A velocity in m/s (accepts m/s, mm/s, m/h, m/d…).
    Velocity,
    Kind::Velocity
);
quantity!(
    /// A solids mass concentration in kg/m³ (accepts g/L, mg/L, kg/m³, t/m³).
    Concentration,
    Kind::MassConcentration
);
quantity!(
    /// A volume flow in m³/s (accepts m³/h, m³/d, L/s…).
    VolumeFlow,
    Kind::VolumeFlow
);
quantity!(
    /// A mass flow in kg/s (accepts t/h, t/d, kg/h…).
    MassFlow,
    Kind::MassFlow
);
quantity!(
    /// A specific volume in m³/kg (accepts m³/kg, L/g).
    SpecificVolume,
    Kind::SpecificVolume
);
quantity!(
    /// A pressure or stress in Pa (accepts Pa, kPa, MPa).
    Pressure,
    Kind::Pressure
);
quantity!(
    /// A diffusivity in m²/s (accepts m²/s, cm²/s, mm²/s).
    Diffusivity,
    Kind::Diffusivity
);
quantity!(
    /// Linear drag coefficient k1 in N·s/m.
    LinearDragCoefficient,
    Kind::LinearDragCoefficient
);
quantity!(
    /// Quadratic drag coefficient k2 in N·s²/m².
    QuadraticDragCoefficient,
    Kind::QuadraticDragCoefficient
);

/// How much solid is in the suspension, in one of the ways practitioners say it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Loading {
    /// Solids volume fraction φ (dimensionless).
    VolumeFraction(f64),
    /// Mass of solids per volume of suspension, kg/m³ (g/L).
    MassConcentration(f64),
    /// Mass of solids per mass of suspension (wt %, as a fraction).
    MassFraction(f64),
}

impl Loading {
    pub fn parse(text: &str) -> Result<Loading, String> {
        let t = text.trim();
        for suffix in ["vol%", "vol %", "% v/v"] {
            if let Some(num) = t.strip_suffix(suffix) {
                return parse_plain(num, text).map(|v| Loading::VolumeFraction(v / 100.0));
            }
        }
        for suffix in ["wt%", "wt %", "% w/w"] {
            if let Some(num) = t.strip_suffix(suffix) {
                return parse_plain(num, text).map(|v| Loading::MassFraction(v / 100.0));
            }
        }
        if let Some(num) = t.strip_suffix('%') {
            return Err(format!(
                "\"{text}\" is ambiguous: write \"{num}vol%\" for a volume fraction or \"{num}wt%\" for a mass fraction"
            ));
        }
        match parse(t, Kind::MassConcentration) {
            Ok(c) => Ok(Loading::MassConcentration(c)),
            Err(_) => Err(format!(
                "expected a solids loading such as \"8 vol%\", \"25 wt%\", \"120 g/L\" or a plain volume fraction like 0.08; found \"{text}\""
            )),
        }
    }
}

fn parse_plain(num: &str, whole: &str) -> Result<f64, String> {
    match num.trim().parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        _ => Err(format!("\"{whole}\" does not start with a number")),
    }
}

impl<'de> Deserialize<'de> for Loading {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = Loading;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a solids loading such as \"8 vol%\", \"25 wt%\", \"120 g/L\" or a volume fraction like 0.08")
            }
            fn visit_str<E: de::Error>(self, s: &str) -> Result<Loading, E> {
                Loading::parse(s).map_err(E::custom)
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Loading, E> {
                Ok(Loading::VolumeFraction(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Loading, E> {
                Ok(Loading::VolumeFraction(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Loading, E> {
                Ok(Loading::VolumeFraction(v as f64))
            }
        }
        d.deserialize_any(V)
    }
}

impl JsonSchema for Loading {
    fn schema_name() -> Cow<'static, str> {
        "Loading".into()
    }
    fn json_schema(_: &mut SchemaGenerator) -> Schema {
        let mc = Kind::MassConcentration.pattern();
        json_schema!({
            "description": "Solids loading: \"8 vol%\" (volume), \"25 wt%\" (mass of solids per mass of slurry), \"120 g/L\" (mass per volume; also kg/m³, mg/L), or a plain number = volume fraction",
            "oneOf": [
                { "type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1 },
                { "type": "string", "pattern": r"^\s*[-+]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][-+]?[0-9]+)?\s*(vol\s?%|wt\s?%|% v/v|% w/w)\s*$" },
                { "type": "string", "pattern": mc }
            ]
        })
    }
}

/// A fraction written either as a number in [0, 1] or as a percentage string ("35 %").
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fraction(pub f64);

impl<'de> Deserialize<'de> for Fraction {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = Fraction;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a fraction such as 0.35 or a percentage such as \"35 %\"")
            }
            fn visit_str<E: de::Error>(self, s: &str) -> Result<Fraction, E> {
                let t = s.trim();
                let num = t
                    .strip_suffix("wt%")
                    .or_else(|| t.strip_suffix('%'))
                    .ok_or_else(|| {
                        E::custom(format!(
                            "expected a percentage such as \"35 %\", found \"{s}\""
                        ))
                    })?;
                parse_plain(num, s)
                    .map(|v| Fraction(v / 100.0))
                    .map_err(E::custom)
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Fraction, E> {
                Ok(Fraction(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Fraction, E> {
                Ok(Fraction(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Fraction, E> {
                Ok(Fraction(v as f64))
            }
        }
        d.deserialize_any(V)
    }
}

impl JsonSchema for Fraction {
    fn schema_name() -> Cow<'static, str> {
        "Fraction".into()
    }
    fn json_schema(_: &mut SchemaGenerator) -> Schema {
        json_schema!({
            "description": "A fraction between 0 and 1, or a percentage string such as \"35 %\"",
            "oneOf": [
                { "type": "number", "minimum": 0, "maximum": 1 },
                { "type": "string", "pattern": r"^\s*[-+]?([0-9]+\.?[0-9]*|\.[0-9]+)\s*(wt)?\s*%\s*$" }
            ]
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Conversion factors are exact by definition of the units (SI brochure, 9th ed.).
    #[test]
    fn converts_practitioner_units_to_si() {
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs().max(1e-300);
        assert!(close(parse("250 µm", Kind::Length).unwrap(), 250e-6));
        assert!(close(parse("250 μm", Kind::Length).unwrap(), 250e-6)); // Greek mu
        assert!(close(parse("250um", Kind::Length).unwrap(), 250e-6));
        assert!(close(parse("1.5e1 mm", Kind::Length).unwrap(), 0.015));
        assert!(close(parse("20 °C", Kind::Temperature).unwrap(), 293.15));
        assert!(close(parse("2.65 g/cm³", Kind::Density).unwrap(), 2650.0));
        assert!(close(parse("1 cP", Kind::Viscosity).unwrap(), 1e-3));
        assert!(close(parse("1.2 mPa·s", Kind::Viscosity).unwrap(), 1.2e-3));
        assert!(close(parse("90 min", Kind::Time).unwrap(), 5400.0));
        assert!(close(parse("3.6 m/h", Kind::Velocity).unwrap(), 1e-3));
        assert!(close(parse("360 m³/h", Kind::VolumeFlow).unwrap(), 0.1));
        assert!(close(parse("2.5 ha", Kind::Area).unwrap(), 25000.0));
        assert!(close(parse("300 m2", Kind::Area).unwrap(), 300.0));
        assert!(close(parse("36 t/h", Kind::MassFlow).unwrap(), 10.0));
        assert!(close(
            parse("120 g/L", Kind::MassConcentration).unwrap(),
            120.0
        ));
        assert!(close(
            parse("0.45 L/g", Kind::SpecificVolume).unwrap(),
            0.45
        ));
    }

    #[test]
    fn refuses_missing_wrong_or_nonfinite_units() {
        assert!(
            parse("250", Kind::Length)
                .unwrap_err()
                .contains("needs a unit")
        );
        assert!(
            parse("250 kg", Kind::Length)
                .unwrap_err()
                .contains("unknown unit")
        );
        assert!(
            parse("abc", Kind::Length)
                .unwrap_err()
                .contains("expected a length")
        );
        assert!(parse("inf m", Kind::Length).is_err());
        assert!(parse("NaN m", Kind::Length).is_err());
    }

    #[test]
    fn loading_forms() {
        assert_eq!(
            Loading::parse("8 vol%").unwrap(),
            Loading::VolumeFraction(0.08)
        );
        assert_eq!(
            Loading::parse("25 wt%").unwrap(),
            Loading::MassFraction(0.25)
        );
        assert_eq!(
            Loading::parse("120 g/L").unwrap(),
            Loading::MassConcentration(120.0)
        );
        assert!(Loading::parse("8 %").unwrap_err().contains("ambiguous"));
    }

    #[test]
    fn schema_pattern_accepts_what_the_parser_accepts() {
        // The pattern is what editors check; it must agree with `parse` on the spellings.
        for kind in [
            Kind::Length,
            Kind::Viscosity,
            Kind::Temperature,
            Kind::Density,
        ] {
            let p = kind.pattern();
            for unit in kind.units() {
                for s in unit.spellings {
                    assert!(p.contains(&regex_escape(s)), "{s} missing from {p}");
                }
            }
        }
    }
}
