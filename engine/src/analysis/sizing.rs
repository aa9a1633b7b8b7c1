//! Thickener sizing from a batch flux curve or a settling curve, and the
//! state-point check of a given tank (physics.md §7.1).
//!
//! Notation: C mass concentration (kg/m³), G_b(C) = C·v(C) the batch solids
//! flux (kg/(m²·s)), C_f the feed and C_u the target underflow concentration,
//! u = Q_u/A the underflow bulk velocity. Below the feed the solids flux is
//! G(C) = G_b(C) + u·C; the thickening zone passes at most
//! G_L = min over C_f ≤ C ≤ C_u of G(C), and with all solids leaving in the
//! underflow u·C_u = G_L, so
//!
//! ```text
//!   u = min over C of G_b(C)/(C_u − C),   G_L = u·C_u,   A = Q_f C_f / G_L.
//! ```
//!
//! * **Yoshioka** et al. (1957) (Kagaku Kogaku 21, 66–74 [M]): the line from
//!   (C_u, 0) tangent to G_b touches it at C_L, where
//!   G_b′(C_L)(C_u − C_L) + G_b(C_L) = 0; its intercept on the flux axis is
//!   G_L. [`yoshioka`] finds the tangent points as roots of that condition.
//! * **Coe & Clevenger** (1916) (Trans. AIME 55, 356–384 [M]): the unit area
//!   A/(Q_f C_f) = max over C of (1/C − 1/C_u)/v(C); the same number as
//!   1/G_L (the maximand is (C_u − C)/(C_u G_b)). [`coe_clevenger`] maximises
//!   it directly, without derivatives, so the two are independent routes.
//! * **Talmage & Fitch** (1955) (Ind. Eng. Chem. 47(1), 38–41 [M]) and the
//!   **Oltmann** construction [P] work on one settling curve of a test at
//!   (C0, H0): H_u = C0 H0/C_u; t_u where the tangent at the compression point
//!   (Talmage–Fitch) or the line from (0, H0) through it (Oltmann) reaches
//!   H_u; unit area t_u/(C0 H0), i.e. A = Q0 t_u/H0 for the feed volume flow
//!   Q0 at C0.
//!
//! Every design result carries [`super::CAUTION`].

use super::curve::{CompressionPoint, KynchAnalysis, SettlingCurve, SmoothCurve};
use super::{AnalysisError, CAUTION, unit_area_m2_day_per_tonne};
use crate::physics::hindered::HinderedLaw;
use serde::Serialize;

/// A batch flux curve G_b(C), tabulated or from a law.
#[derive(Debug, Clone, PartialEq)]
pub enum BatchFluxCurve {
    /// Strictly increasing concentrations (kg/m³) and fluxes (kg/(m²·s)),
    /// interpolated by a monotone piecewise cubic (Fritsch–Carlson), so the
    /// tangent construction sees a smooth curve with no new extrema.
    Table {
        concentration: Vec<f64>,
        flux: Vec<f64>,
        slope: Vec<f64>,
    },
    /// A hindered-settling law: G_b(C) = C·v(C/ρs) with `v_terminal` (m/s),
    /// `phi_max` and the solid density `solid_density` (kg/m³).
    Law {
        law: HinderedLaw,
        v_terminal: f64,
        phi_max: f64,
        solid_density: f64,
    },
}

impl BatchFluxCurve {
    /// A tabulated curve; refuses fewer than 2 points, concentrations that are
    /// not positive and strictly increasing, and negative or non-finite fluxes.
    pub fn table(concentration: Vec<f64>, flux: Vec<f64>) -> Result<Self, AnalysisError> {
        if concentration.len() != flux.len() || concentration.len() < 2 {
            return Err(AnalysisError::invalid(
                "batch flux table",
                format!(
                    "{} concentrations and {} fluxes; at least 2 pairs are needed",
                    concentration.len(),
                    flux.len()
                ),
                "give one flux per concentration",
            ));
        }
        for (i, (&c, &g)) in concentration.iter().zip(&flux).enumerate() {
            if !(c.is_finite() && c > 0.0 && g.is_finite() && g >= 0.0) {
                return Err(AnalysisError::invalid(
                    "batch flux table",
                    format!(
                        "row {}: C = {c} kg/m³, G = {g} kg/(m²·s) is not physical",
                        i + 1
                    ),
                    "concentrations must be positive and fluxes non-negative",
                ));
            }
            if i > 0 && c <= concentration[i - 1] {
                return Err(AnalysisError::invalid(
                    "batch flux table",
                    format!("row {}: concentrations must increase strictly", i + 1),
                    "sort the table by concentration and merge repeated rows",
                ));
            }
        }
        let slope = pchip_slopes(&concentration, &flux);
        Ok(BatchFluxCurve::Table {
            concentration,
            flux,
            slope,
        })
    }

    /// The flux curve a Kynch construction gives (over the range it covers).
    pub fn from_kynch(analysis: &KynchAnalysis) -> Result<Self, AnalysisError> {
        let (c, g) = analysis.flux_table();
        Self::table(c, g)
    }

    /// The flux curve of a law.
    pub fn law(law: HinderedLaw, v_terminal: f64, phi_max: f64, solid_density: f64) -> Self {
        BatchFluxCurve::Law {
            law,
            v_terminal,
            phi_max,
            solid_density,
        }
    }

    /// Concentrations the curve describes, kg/m³: the table's range, or from
    /// 0 to the packing limit ρs·φmax for a law.
    pub fn range(&self) -> (f64, f64) {
        match self {
            BatchFluxCurve::Table { concentration, .. } => {
                (concentration[0], concentration[concentration.len() - 1])
            }
            BatchFluxCurve::Law {
                phi_max,
                solid_density,
                ..
            } => (0.0, phi_max * solid_density),
        }
    }

    /// Batch flux G_b(C), kg/(m²·s).
    pub fn flux(&self, c: f64) -> f64 {
        match self {
            BatchFluxCurve::Table {
                concentration,
                flux,
                slope,
            } => hermite(concentration, flux, slope, c).0,
            BatchFluxCurve::Law {
                law,
                v_terminal,
                phi_max,
                solid_density,
            } => c * law.velocity(*v_terminal, c / solid_density, *phi_max),
        }
    }

    /// Settling velocity v(C) = G_b/C, m/s.
    pub fn settling_velocity(&self, c: f64) -> f64 {
        self.flux(c) / c
    }

    /// dG_b/dC, m/s (analytic for a table, central differences for a law).
    pub fn derivative(&self, c: f64) -> f64 {
        match self {
            BatchFluxCurve::Table {
                concentration,
                flux,
                slope,
            } => hermite(concentration, flux, slope, c).1,
            BatchFluxCurve::Law { .. } => {
                let (lo, hi) = self.range();
                let h = 1e-6 * hi;
                let (a, b) = ((c - h).max(lo), (c + h).min(hi));
                (self.flux(b) - self.flux(a)) / (b - a)
            }
        }
    }
}

fn pchip_slopes(x: &[f64], y: &[f64]) -> Vec<f64> {
    let n = x.len();
    let h: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    let d: Vec<f64> = (0..n - 1).map(|k| (y[k + 1] - y[k]) / h[k]).collect();
    if n == 2 {
        return vec![d[0], d[0]];
    }
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
    m[0] = end(h[0], h[1], d[0], d[1]);
    m[n - 1] = end(h[n - 2], h[n - 3], d[n - 2], d[n - 3]);
    m
}

/// Cubic Hermite value and derivative at `c` (clamped to the table).
fn hermite(x: &[f64], y: &[f64], m: &[f64], c: f64) -> (f64, f64) {
    let n = x.len();
    let c = c.clamp(x[0], x[n - 1]);
    let k = x.partition_point(|&v| v <= c).clamp(1, n - 1) - 1;
    let dx = x[k + 1] - x[k];
    let s = (c - x[k]) / dx;
    let value = (1.0 + 2.0 * s) * (1.0 - s) * (1.0 - s) * y[k]
        + s * (1.0 - s) * (1.0 - s) * dx * m[k]
        + s * s * (3.0 - 2.0 * s) * y[k + 1]
        + s * s * (s - 1.0) * dx * m[k + 1];
    let deriv = ((6.0 * s * s - 6.0 * s) * y[k] + (-6.0 * s * s + 6.0 * s) * y[k + 1]) / dx
        + (3.0 * s * s - 4.0 * s + 1.0) * m[k]
        + (3.0 * s * s - 2.0 * s) * m[k + 1];
    (value, deriv)
}

/// What the thickener must do.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DesignBasis {
    /// Dry solids fed, kg/s (t/h ÷ 3.6).
    pub feed_solids: f64,
    /// Feed concentration C_f, kg/m³.
    pub feed_concentration: f64,
    /// Target underflow concentration C_u, kg/m³.
    pub underflow_concentration: f64,
}

impl DesignBasis {
    fn check(&self) -> Result<(), AnalysisError> {
        let positive = |what: &str, v: f64, hint: &str| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err(AnalysisError::invalid(
                    what,
                    format!("must be positive, got {v}"),
                    hint,
                ))
            }
        };
        positive(
            "feed solids",
            self.feed_solids,
            "give the dry solids rate, e.g. 50 t/h",
        )?;
        positive("feed concentration", self.feed_concentration, "e.g. 80 g/L")?;
        positive(
            "underflow concentration",
            self.underflow_concentration,
            "e.g. 600 g/L",
        )?;
        if self.underflow_concentration <= self.feed_concentration {
            return Err(AnalysisError::invalid(
                "underflow concentration",
                format!(
                    "{} kg/m³ is not above the feed concentration {} kg/m³",
                    self.underflow_concentration, self.feed_concentration
                ),
                "a thickener concentrates: the target underflow must be thicker than the feed",
            ));
        }
        Ok(())
    }
}

/// Which construction gave an area.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SizingMethod {
    Yoshioka,
    CoeClevenger,
    TalmageFitch,
    Oltmann,
}

impl SizingMethod {
    pub fn name(self) -> &'static str {
        match self {
            SizingMethod::Yoshioka => "limiting flux (Yoshioka tangent)",
            SizingMethod::CoeClevenger => "Coe-Clevenger",
            SizingMethod::TalmageFitch => "Talmage-Fitch",
            SizingMethod::Oltmann => "Oltmann",
        }
    }
}

/// A thickener area, SI.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ThickenerArea {
    pub method: SizingMethod,
    /// Unit area A/(Q_f C_f), m²·s/kg (see [`Self::unit_area_m2_day_per_tonne`]).
    pub unit_area: f64,
    /// Area for the design basis's feed, m².
    pub area: f64,
    /// Limiting solids flux 1/unit area, kg/(m²·s).
    pub limiting_flux: f64,
    /// Concentration at which the flux limits (tangent point, maximiser, or
    /// the compression-point concentration), kg/m³.
    pub limiting_concentration: f64,
    /// Underflow bulk velocity u = G_L/C_u, m/s (flux methods).
    pub underflow_velocity: Option<f64>,
    /// Time t_u at which a test reaches the underflow height, s (curve methods).
    pub underflow_time: Option<f64>,
    pub basis: DesignBasis,
    /// Things the user should know about this result.
    pub notes: Vec<String>,
    /// The caution to print with any design number.
    pub caution: String,
}

impl ThickenerArea {
    /// Unit area in m²·d/t.
    pub fn unit_area_m2_day_per_tonne(&self) -> f64 {
        unit_area_m2_day_per_tonne(self.unit_area)
    }

    fn new(
        method: SizingMethod,
        unit_area: f64,
        limiting_concentration: f64,
        basis: &DesignBasis,
        notes: Vec<String>,
    ) -> Self {
        ThickenerArea {
            method,
            unit_area,
            area: unit_area * basis.feed_solids,
            limiting_flux: 1.0 / unit_area,
            limiting_concentration,
            underflow_velocity: None,
            underflow_time: None,
            basis: *basis,
            notes,
            caution: CAUTION.to_string(),
        }
    }
}

/// Concentration interval searched by the flux methods, with notes on what
/// the curve does not cover.
fn search_interval(
    flux: &BatchFluxCurve,
    basis: &DesignBasis,
) -> Result<(f64, f64, Vec<String>), AnalysisError> {
    basis.check()?;
    let (lo_r, hi_r) = flux.range();
    let mut notes = Vec::new();
    let (cf, cu) = (basis.feed_concentration, basis.underflow_concentration);
    if matches!(flux, BatchFluxCurve::Law { .. }) && cu >= hi_r {
        return Err(AnalysisError::invalid(
            "underflow concentration",
            format!("{cu} kg/m³ is at or above the packing limit ρs·φmax = {hi_r} kg/m³"),
            "choose an underflow the bed can reach without compression",
        ));
    }
    if cf >= hi_r {
        return Err(AnalysisError::NotCovered {
            what: "batch flux curve".into(),
            message: format!("ends at {hi_r} kg/m³, below the feed concentration {cf} kg/m³"),
            hint: "test at the feed concentration or use a fitted law".into(),
        });
    }
    let lo = if cf < lo_r {
        notes.push(format!(
            "the flux curve starts at {lo_r:.4} kg/m³, above the feed concentration {cf:.4} kg/m³; \
             concentrations below it are not checked"
        ));
        lo_r
    } else {
        cf
    };
    let hi = if cu > hi_r {
        notes.push(format!(
            "the flux curve ends at {hi_r:.4} kg/m³, below the target underflow {cu:.4} kg/m³; \
             the limit is sought over the covered range only and may be optimistic"
        ));
        hi_r
    } else {
        cu
    };
    Ok((lo, hi, notes))
}

/// ψ(C) = G_b(C)/(C_u − C): its minimum is the underflow velocity u.
fn psi(flux: &BatchFluxCurve, cu: f64, c: f64) -> f64 {
    flux.flux(c) / (cu - c)
}

const SCAN: usize = 4000;

/// Limiting flux by the Yoshioka tangent from (C_u, 0).
pub fn yoshioka(
    flux: &BatchFluxCurve,
    basis: &DesignBasis,
) -> Result<ThickenerArea, AnalysisError> {
    let (lo, hi, mut notes) = search_interval(flux, basis)?;
    let cu = basis.underflow_concentration;
    // Tangency: τ(C) = G_b′(C)(C_u − C) + G_b(C) = 0 with τ going from − to +
    // (a minimum of ψ). The ends of the interval are candidates too.
    let top = if hi >= cu { hi - 1e-9 * cu } else { hi };
    let tau = |c: f64| flux.derivative(c) * (cu - c) + flux.flux(c);
    let mut candidates = vec![lo, top];
    let mut prev = (lo, tau(lo));
    for i in 1..=SCAN {
        let c = lo + (top - lo) * i as f64 / SCAN as f64;
        let t = tau(c);
        if prev.1 < 0.0 && t >= 0.0 {
            let (mut a, mut b) = (prev.0, c);
            for _ in 0..200 {
                let m = 0.5 * (a + b);
                if tau(m) < 0.0 {
                    a = m
                } else {
                    b = m
                }
                if b - a <= 1e-15 * cu {
                    break;
                }
            }
            candidates.push(0.5 * (a + b));
        }
        prev = (c, t);
    }
    let (c_l, u) = candidates
        .iter()
        .map(|&c| (c, psi(flux, cu, c)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .expect("two candidates at least");
    if !(u > 0.0 && u.is_finite()) {
        return Err(AnalysisError::NotCovered {
            what: "batch flux curve".into(),
            message: format!("the flux is zero at {c_l:.4} kg/m³ inside the design range"),
            hint: "the solids do not settle there; check the curve or the target underflow".into(),
        });
    }
    if c_l == lo && lo > basis.feed_concentration {
        notes.push("the limit lies at the low end of the flux curve".into());
    } else if c_l == lo {
        notes.push(
            "the feed concentration itself limits the flux (no tangent point above it)".into(),
        );
    }
    if c_l == top && hi < cu {
        notes.push("the limit lies at the high end of the tested range".into());
    }
    let g_l = u * cu;
    let mut area = ThickenerArea::new(SizingMethod::Yoshioka, 1.0 / g_l, c_l, basis, notes);
    area.underflow_velocity = Some(u);
    Ok(area)
}

/// Unit area by Coe–Clevenger: the largest (1/C − 1/C_u)/v(C).
pub fn coe_clevenger(
    flux: &BatchFluxCurve,
    basis: &DesignBasis,
) -> Result<ThickenerArea, AnalysisError> {
    let (lo, hi, notes) = search_interval(flux, basis)?;
    let cu = basis.underflow_concentration;
    let top = if hi >= cu { hi - 1e-9 * cu } else { hi };
    let unit = |c: f64| (1.0 / c - 1.0 / cu) / flux.settling_velocity(c);
    let mut best = (lo, unit(lo));
    for i in 1..=SCAN {
        let c = lo + (top - lo) * i as f64 / SCAN as f64;
        let v = unit(c);
        if v > best.1 {
            best = (c, v);
        }
    }
    // Golden-section refinement in the two grid cells around the best node.
    let step = (top - lo) / SCAN as f64;
    let (mut a, mut b) = ((best.0 - step).max(lo), (best.0 + step).min(top));
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let (mut x1, mut x2) = (b - r * (b - a), a + r * (b - a));
    let (mut f1, mut f2) = (unit(x1), unit(x2));
    for _ in 0..200 {
        if f1 > f2 {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - r * (b - a);
            f1 = unit(x1);
        } else {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + r * (b - a);
            f2 = unit(x2);
        }
        if b - a <= 1e-14 * cu {
            break;
        }
    }
    let c = 0.5 * (a + b);
    if unit(c) > best.1 {
        best = (c, unit(c));
    }
    if !(best.1.is_finite() && best.1 > 0.0) {
        return Err(AnalysisError::NotCovered {
            what: "batch flux curve".into(),
            message: format!("the settling velocity is zero at {:.4} kg/m³", best.0),
            hint: "the solids do not settle there; check the curve or the target underflow".into(),
        });
    }
    Ok(ThickenerArea::new(
        SizingMethod::CoeClevenger,
        best.1,
        best.0,
        basis,
        notes,
    ))
}

/// Height H_u = C0 H0/C_u and checks shared by the curve methods.
fn underflow_height(curve: &SettlingCurve, basis: &DesignBasis) -> Result<f64, AnalysisError> {
    basis.check()?;
    let c0 = curve.initial_concentration;
    if basis.underflow_concentration <= c0 {
        return Err(AnalysisError::invalid(
            "underflow concentration",
            format!(
                "{} kg/m³ is not above the test's initial concentration {c0} kg/m³",
                basis.underflow_concentration
            ),
            "the target underflow must be thicker than the tested slurry",
        ));
    }
    Ok(c0 * curve.initial_height / basis.underflow_concentration)
}

fn curve_notes(curve: &SettlingCurve, basis: &DesignBasis) -> Vec<String> {
    let mut notes = Vec::new();
    let c0 = curve.initial_concentration;
    if (basis.feed_concentration - c0).abs() > 0.01 * c0 {
        notes.push(format!(
            "the method assumes the feed at the test's concentration {c0:.4} kg/m³, not {:.4} kg/m³",
            basis.feed_concentration
        ));
    }
    notes
}

/// Talmage–Fitch: the tangent at the compression point meets H_u at t_u.
/// If H_u lies above the compression point the curve itself reaches it
/// first, and t_u is read off the smoothed curve.
pub fn talmage_fitch(
    curve: &SettlingCurve,
    smooth: &SmoothCurve,
    compression: &CompressionPoint,
    basis: &DesignBasis,
) -> Result<ThickenerArea, AnalysisError> {
    let h_u = underflow_height(curve, basis)?;
    let mut notes = curve_notes(curve, basis);
    let t_u = if h_u >= compression.height {
        notes.push(
            "the underflow height lies above the compression point: t_u is read off the curve"
                .into(),
        );
        time_at_height(smooth, h_u)?
    } else {
        if compression.slope >= 0.0 {
            return Err(AnalysisError::NotCovered {
                what: "compression point".into(),
                message:
                    "the curve is flat there, so its tangent never reaches the underflow height"
                        .into(),
                hint: "choose an earlier compression point".into(),
            });
        }
        compression.time + (h_u - compression.height) / compression.slope
    };
    let unit = t_u / (curve.initial_concentration * curve.initial_height);
    let mut area = ThickenerArea::new(
        SizingMethod::TalmageFitch,
        unit,
        compression.concentration,
        basis,
        notes,
    );
    area.underflow_time = Some(t_u);
    Ok(area)
}

/// Oltmann: the line from (0, H0) through the compression point meets H_u
/// at t_u = t_c (H0 − H_u)/(H0 − h_c). Empirical; usually used with a
/// safety factor (common practice).
pub fn oltmann(
    curve: &SettlingCurve,
    compression: &CompressionPoint,
    basis: &DesignBasis,
) -> Result<ThickenerArea, AnalysisError> {
    let h_u = underflow_height(curve, basis)?;
    let h0 = curve.initial_height;
    if compression.height >= h0 || compression.time <= 0.0 {
        return Err(AnalysisError::invalid(
            "compression point",
            "must lie below the initial height, after t = 0",
            "check the compression point",
        ));
    }
    let t_u = compression.time * (h0 - h_u) / (h0 - compression.height);
    let mut notes = curve_notes(curve, basis);
    notes.push("the Oltmann construction is empirical; apply a safety factor".into());
    let unit = t_u / (curve.initial_concentration * h0);
    let mut area = ThickenerArea::new(
        SizingMethod::Oltmann,
        unit,
        compression.concentration,
        basis,
        notes,
    );
    area.underflow_time = Some(t_u);
    Ok(area)
}

/// First time the smoothed curve is at or below `h`, s (bisection on the
/// monotone interpolant).
fn time_at_height(smooth: &SmoothCurve, h: f64) -> Result<f64, AnalysisError> {
    let n = smooth.time.len();
    let k =
        smooth
            .height
            .iter()
            .position(|&y| y <= h)
            .ok_or_else(|| AnalysisError::NotCovered {
                what: "settling curve".into(),
                message: format!("never reaches the underflow height {h:.4} m"),
                hint: "continue the test longer or lower the target underflow concentration".into(),
            })?;
    if k == 0 {
        return Ok(smooth.time[0]);
    }
    let (mut a, mut b) = (smooth.time[k - 1], smooth.time[k.min(n - 1)]);
    for _ in 0..100 {
        let m = 0.5 * (a + b);
        if smooth.value(m) > h { a = m } else { b = m }
    }
    Ok(0.5 * (a + b))
}

/// A tank in operation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TankOperation {
    /// Cross-section area, m².
    pub area: f64,
    /// Feed volume flow Q_f, m³/s.
    pub feed_flow: f64,
    /// Underflow volume flow Q_u, m³/s (below Q_f).
    pub underflow_flow: f64,
    /// Feed concentration C_f, kg/m³.
    pub feed_concentration: f64,
}

/// Loading of the thickening zone.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LoadingVerdict {
    Underloaded,
    CriticallyLoaded,
    Overloaded,
}

impl LoadingVerdict {
    pub fn name(self) -> &'static str {
        match self {
            LoadingVerdict::Underloaded => "underloaded",
            LoadingVerdict::CriticallyLoaded => "critically loaded",
            LoadingVerdict::Overloaded => "overloaded",
        }
    }
}

/// State-point check of a tank.
///
/// The state point is (C_f, Q_e C_f/A), on the overflow line G = (Q_e/A)·C.
/// The underflow operating line G = (Q_f C_f − Q_u C)/A passes through it
/// and meets the C axis at the underflow concentration C_u = Q_f C_f/Q_u.
/// The thickening zone carries the applied flux Q_f C_f/A if G_b(C) + u·C
/// stays at or above it for C_f ≤ C ≤ C_u (the operating line stays on or
/// below the batch flux curve); its smallest value is the capacity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StatePoint {
    pub tank: TankOperation,
    /// Applied solids flux Q_f C_f/A, kg/(m²·s).
    pub applied_flux: f64,
    /// Overflow rate Q_e/A, m/s, with Q_e = Q_f − Q_u.
    pub overflow_rate: f64,
    /// Underflow bulk velocity u = Q_u/A, m/s.
    pub underflow_velocity: f64,
    /// Underflow concentration if all solids leave by the underflow, kg/m³.
    pub underflow_concentration: f64,
    /// Smallest G_b(C) + u·C over C_f ≤ C ≤ C_u, kg/(m²·s), and where.
    pub capacity: f64,
    pub limiting_concentration: f64,
    /// applied flux / capacity.
    pub loading_ratio: f64,
    /// Relative band around 1 read as critically loaded.
    pub critical_band: f64,
    pub verdict: LoadingVerdict,
    /// Settling velocity at the feed concentration v(C_f), m/s.
    pub settling_velocity_at_feed: f64,
    /// Overflow rate / v(C_f): clarification holds below 1.
    pub clarification_ratio: f64,
    pub clarification_ok: bool,
    pub notes: Vec<String>,
    pub caution: String,
}

/// Check a tank against a batch flux curve. `critical_band` is the relative
/// distance from the capacity still read as critically loaded (e.g. 0.02).
pub fn state_point(
    flux: &BatchFluxCurve,
    tank: &TankOperation,
    critical_band: f64,
) -> Result<StatePoint, AnalysisError> {
    let TankOperation {
        area,
        feed_flow,
        underflow_flow,
        feed_concentration: cf,
    } = *tank;
    for (what, v) in [
        ("tank area", area),
        ("feed flow", feed_flow),
        ("underflow flow", underflow_flow),
        ("feed concentration", cf),
    ] {
        if !(v.is_finite() && v > 0.0) {
            return Err(AnalysisError::invalid(
                what,
                format!("must be positive, got {v}"),
                "check the tank data",
            ));
        }
    }
    if underflow_flow >= feed_flow {
        return Err(AnalysisError::invalid(
            "underflow flow",
            format!("{underflow_flow} m³/s is not below the feed flow {feed_flow} m³/s"),
            "some liquid must leave by the overflow",
        ));
    }
    if !(critical_band.is_finite() && (0.0..0.5).contains(&critical_band)) {
        return Err(AnalysisError::invalid(
            "critical band",
            format!("{critical_band} is not in [0, 0.5)"),
            "e.g. 0.02 for ±2 %",
        ));
    }
    let applied = feed_flow * cf / area;
    let u = underflow_flow / area;
    let overflow_rate = (feed_flow - underflow_flow) / area;
    let c_u = feed_flow * cf / underflow_flow;
    let (lo_r, hi_r) = flux.range();
    let mut notes = Vec::new();
    if cf < lo_r || cf > hi_r {
        return Err(AnalysisError::NotCovered {
            what: "batch flux curve".into(),
            message: format!(
                "covers {lo_r:.4}–{hi_r:.4} kg/m³, not the feed concentration {cf:.4} kg/m³"
            ),
            hint: "test at the feed concentration or use a fitted law".into(),
        });
    }
    let hi = if c_u > hi_r {
        notes.push(format!(
            "the underflow concentration {c_u:.4} kg/m³ lies beyond the flux curve (ends at {hi_r:.4} kg/m³): checked up to its end only"
        ));
        hi_r
    } else {
        c_u
    };
    let total = |c: f64| flux.flux(c) + u * c;
    let mut best = (cf, total(cf));
    for i in 1..=SCAN {
        let c = cf + (hi - cf) * i as f64 / SCAN as f64;
        let g = total(c);
        if g < best.1 {
            best = (c, g);
        }
    }
    let step = (hi - cf) / SCAN as f64;
    let (mut a, mut b) = ((best.0 - step).max(cf), (best.0 + step).min(hi));
    for _ in 0..200 {
        let (m1, m2) = (a + (b - a) / 3.0, b - (b - a) / 3.0);
        if total(m1) < total(m2) {
            b = m2
        } else {
            a = m1
        }
    }
    let c = 0.5 * (a + b);
    if total(c) < best.1 {
        best = (c, total(c));
    }
    let ratio = applied / best.1;
    let verdict = if ratio > 1.0 + critical_band {
        LoadingVerdict::Overloaded
    } else if ratio >= 1.0 - critical_band {
        LoadingVerdict::CriticallyLoaded
    } else {
        LoadingVerdict::Underloaded
    };
    let v_f = flux.settling_velocity(cf);
    let clarification_ratio = overflow_rate / v_f;
    Ok(StatePoint {
        tank: *tank,
        applied_flux: applied,
        overflow_rate,
        underflow_velocity: u,
        underflow_concentration: c_u,
        capacity: best.1,
        limiting_concentration: best.0,
        loading_ratio: ratio,
        critical_band,
        verdict,
        settling_velocity_at_feed: v_f,
        clarification_ratio,
        clarification_ok: clarification_ratio < 1.0,
        notes,
        caution: CAUTION.to_string(),
    })
}
