//! What the plots and the report need from a run, taken from the record in
//! memory (`turbid run --plots`) or read back from a result file (netCDF-4 /
//! HDF5, pure-Rust reader) for `turbid plot` and `turbid report run`.

use std::path::Path;
use turbid_engine::analysis::AnalysisError;
use turbid_engine::analysis::curve::SettlingCurve;
use turbid_engine::record::RunRecord;

/// A run's frames, SI, classes and slabs as in the result file.
#[derive(Debug, Clone)]
pub struct RunData {
    pub title: String,
    pub scenario_yaml: String,
    pub engine: String,
    pub status: String,
    /// Frame times, s.
    pub time: Vec<f64>,
    /// Slab centres and boundaries, m.
    pub z: Vec<f64>,
    pub z_edges: Vec<f64>,
    /// Representative diameter per class, m; species index per class.
    pub class_diameter: Vec<f64>,
    pub class_species: Vec<usize>,
    pub species_density: Vec<f64>,
    /// Volume fraction, frame × class × slab.
    pub phi_class: Vec<f64>,
    /// Interface and bed heights per frame, m.
    pub interface: Vec<f64>,
    pub bed: Vec<f64>,
    /// A continuous thickener's outlets, one sample per frame.
    pub outlets: Option<Outlets>,
}

/// The outlets of a thickener run, SI, one sample per frame.
#[derive(Debug, Clone)]
pub struct Outlets {
    /// Blanket level, m; feed level and overflow lip, m.
    pub blanket: Vec<f64>,
    pub feed_level: f64,
    pub overflow_level: f64,
    /// Underflow and overflow solids concentration, kg/m³.
    pub underflow: Vec<f64>,
    pub overflow: Vec<f64>,
}

impl RunData {
    pub fn from_record(r: &RunRecord) -> RunData {
        let l = &r.layout;
        RunData {
            title: r.title.clone(),
            scenario_yaml: r.scenario_yaml.clone(),
            engine: r.engine.clone(),
            status: r.status.as_str().to_string(),
            time: r.frames.iter().map(|f| f.time).collect(),
            z: l.z.clone(),
            z_edges: l.z_edges.clone(),
            class_diameter: l.class_diameter.clone(),
            class_species: l.class_species.clone(),
            species_density: l.species_density.clone(),
            phi_class: r.frames.iter().flat_map(|f| f.phi_class.clone()).collect(),
            interface: r.frames.iter().map(|f| f.interface_height).collect(),
            bed: r.frames.iter().map(|f| f.bed_height).collect(),
            outlets: r.outlets.as_ref().map(|o| Outlets {
                blanket: o.samples.iter().map(|s| s.blanket_level).collect(),
                feed_level: o.feed_level,
                overflow_level: o.overflow_level,
                underflow: o
                    .samples
                    .iter()
                    .map(|s| s.underflow_concentration)
                    .collect(),
                overflow: o.samples.iter().map(|s| s.overflow_concentration).collect(),
            }),
        }
    }

    /// Read a result file written by `turbid run`.
    pub fn read(path: &Path) -> Result<RunData, String> {
        let name = path.display();
        let f = netcdf_reader::NcFile::open(path).map_err(|e| {
            format!(
                "{name}: cannot read as a turbid result file (netCDF-4/HDF5): {e}\n  hint: give the \
                 .h5 file `turbid run` wrote (see its -o option)"
            )
        })?;
        let var = |v: &str| -> Result<Vec<f64>, String> {
            f.read_variable::<f64>(v)
                .map(|a| a.iter().copied().collect())
                .map_err(|e| {
                    format!(
                        "{name}: variable `{v}` missing or unreadable: {e}\n  hint: is this a \
                         result file of turbid run?"
                    )
                })
        };
        let text = |a: &str| {
            f.global_attribute(a)
                .ok()
                .and_then(|a| a.value.as_string())
                .unwrap_or_default()
        };
        let z = var("z")?;
        let bounds = var("z_bounds")?;
        let mut z_edges: Vec<f64> = bounds.chunks(2).map(|b| b[0]).collect();
        if let Some(last) = bounds.last() {
            z_edges.push(*last);
        }
        let species: Vec<usize> = f
            .read_variable::<i32>("class_species")
            .map(|a| a.iter().map(|&s| s.max(0) as usize).collect())
            .map_err(|e| format!("{name}: variable `class_species`: {e}"))?;
        let data = RunData {
            title: text("title"),
            scenario_yaml: text("scenario_yaml"),
            engine: text("engine"),
            status: text("run_status"),
            time: var("time")?,
            z_edges,
            class_diameter: var("size_class")?,
            class_species: species,
            species_density: var("species_density")?,
            phi_class: var("volume_fraction_by_class")?,
            interface: var("interface_height")?,
            bed: var("bed_height")?,
            z,
            outlets: None,
        };
        // A thickener run adds its outlets (`blanket_level` marks one).
        let mut data = data;
        if f.variable("blanket_level").is_ok() {
            let scalar = |v: &str| var(v).map(|x| x.first().copied().unwrap_or(f64::NAN));
            data.outlets = Some(Outlets {
                blanket: var("blanket_level")?,
                feed_level: scalar("feed_level")?,
                overflow_level: scalar("overflow_level")?,
                underflow: var("underflow_solids_concentration")?,
                overflow: var("overflow_solids_concentration")?,
            });
        }
        let (nt, nc, nz) = (data.time.len(), data.class_diameter.len(), data.z.len());
        if nt == 0 || data.phi_class.len() != nt * nc * nz || data.z_edges.len() != nz + 1 {
            return Err(format!(
                "{name}: inconsistent result file ({nt} frames, {nc} classes, {nz} slabs, {} \
                 volume fractions)\n  hint: the run may have been stopped before its first record",
                data.phi_class.len()
            ));
        }
        Ok(data)
    }

    pub fn nz(&self) -> usize {
        self.z.len()
    }
    pub fn nclasses(&self) -> usize {
        self.class_diameter.len()
    }

    /// Mass concentration per class at frame `i`, kg/m³ (= g/L), class-major.
    pub fn class_concentration(&self, i: usize) -> Vec<Vec<f64>> {
        let (nc, nz) = (self.nclasses(), self.nz());
        (0..nc)
            .map(|c| {
                let rho = self.species_density[self.class_species[c]];
                let start = (i * nc + c) * nz;
                self.phi_class[start..start + nz]
                    .iter()
                    .map(|p| p * rho)
                    .collect()
            })
            .collect()
    }

    /// Total mass concentration, frame × slab, kg/m³.
    pub fn total_concentration(&self) -> Vec<f64> {
        let nz = self.nz();
        let mut out = vec![0.0; self.time.len() * nz];
        for i in 0..self.time.len() {
            for profile in self.class_concentration(i) {
                for (k, c) in profile.iter().enumerate() {
                    out[i * nz + k] += c;
                }
            }
        }
        out
    }

    /// The settling curve: H0 the top of the grid, C0 the mean solids
    /// concentration of the first frame (as `SettlingCurve::from_record`).
    pub fn settling_curve(&self) -> Result<SettlingCurve, AnalysisError> {
        let nz = self.nz();
        let top = *self.z_edges.last().unwrap_or(&0.0);
        let total = self.total_concentration();
        let c0: f64 = total[..nz]
            .iter()
            .zip(self.z_edges.windows(2))
            .map(|(c, e)| c * (e[1] - e[0]))
            .sum::<f64>()
            / top;
        SettlingCurve::new(
            self.time.clone(),
            self.interface.clone(),
            top,
            c0,
            if self.title.is_empty() {
                format!("{} run", self.engine)
            } else {
                self.title.clone()
            },
        )
    }

    /// Frame index nearest to `t`.
    pub fn frame_at(&self, t: f64) -> usize {
        let mut best = 0;
        for (i, &ti) in self.time.iter().enumerate() {
            if (ti - t).abs() < (self.time[best] - t).abs() {
                best = i;
            }
        }
        best
    }
}

/// A diameter as a short label, e.g. "98 µm".
pub fn diameter_label(d: f64) -> String {
    let um = d * 1e6;
    if um >= 1000.0 {
        format!("{:.3} mm", d * 1e3)
    } else if um >= 10.0 {
        format!("{um:.0} µm")
    } else {
        format!("{um:.2} µm")
    }
}
