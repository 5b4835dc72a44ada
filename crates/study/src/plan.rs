//! Variants: the numbered list of circuits a study runs.
//!
//! Numbering. The `vary` statements span a full grid, the first statement
//! outermost: with sweeps of lengths n₀, n₁, …, n_{m−1}, grid point
//! `g = ((k₀·n₁ + k₁)·n₂ + k₂)…` for sweep positions k. With `montecarlo
//! runs=R`, every grid point gets R samples and variant `i = g·R + j`
//! (j = sample, innermost). Without `vary` there is one grid point; without
//! `montecarlo` R = 1 and tolerances are not applied (the nominal values
//! are used). So a study has `(∏ nₖ)·R` variants numbered 0..N.
//!
//! Sample j draws the same tolerance factors at every grid point (common
//! random numbers: the same population of parts is measured at each sweep
//! value, so differences along a sweep are not sampling noise). The draws
//! depend only on (seed, j, tolerance position): see [`crate::sample`].
//!
//! Segments. The variants of a grid line (all sweep positions fixed except
//! the innermost, and a fixed sample j) are cut into segments of at most
//! `chain` consecutive innermost positions. A segment is run in order by one
//! worker, each variant receiving the warm-start payload of the one before;
//! segments are the unit of parallel work and of sharding. Because segments
//! depend only on the plan and `chain`, every variant sees the same warm start
//! whatever the number of threads, shards or resumes.
//!
//! The plan never holds the variants: [`Plan::variant`] builds variant i on
//! demand, so memory does not grow with the number of variants.

use std::collections::BTreeMap;

use tankwave_circuit::{
    Circuit, Distribution, MonteCarlo, Overrides, StudySpec, Sweep, VaryTarget,
};

use crate::sample::tolerance_factor;
use crate::StudyError;

/// What a sweep axis changes.
#[derive(Debug, Clone, PartialEq)]
pub enum AxisTarget {
    /// A `let` parameter.
    Param(String),
    /// The main value of an element.
    Element(String),
}

impl AxisTarget {
    /// The name swept (parameter or element name).
    pub fn name(&self) -> &str {
        match self {
            AxisTarget::Param(s) | AxisTarget::Element(s) => s,
        }
    }
}

/// One `vary` statement with its values.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// What changes.
    pub target: AxisTarget,
    /// The values in sweep order.
    pub values: Vec<f64>,
}

/// One tolerance, with the element resolved to its name.
#[derive(Debug, Clone, PartialEq)]
pub struct TolSpec {
    /// Element name.
    pub element: String,
    /// Relative tolerance (0.05 for 5%).
    pub fraction: f64,
    /// Distribution.
    pub distribution: Distribution,
}

/// The record key under which a tolerance factor is stored: `"<element>.factor"`
/// (a dot cannot occur in a stage-file name, so this never collides with a swept name).
pub fn factor_key(element: &str) -> String {
    format!("{element}.factor")
}

/// One variant: its number, the overrides that make it, and its values for the record.
#[derive(Debug, Clone, PartialEq)]
pub struct Variant {
    /// Variant number, 0-based.
    pub index: u64,
    /// Grid point number (the variant without its Monte Carlo sample).
    pub grid_point: u64,
    /// Position along each sweep axis, outermost first.
    pub positions: Vec<usize>,
    /// Monte Carlo sample number, if the study has `montecarlo`.
    pub sample: Option<u64>,
    /// What the variant changes, by name: swept names → value, and
    /// `"<element>.factor"` → tolerance multiplier.
    pub values: BTreeMap<String, f64>,
    /// The overrides to elaborate this variant with.
    pub overrides: Overrides,
}

/// A planned study: the axes, the tolerances and the Monte Carlo settings.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    axes: Vec<Axis>,
    tolerances: Vec<TolSpec>,
    montecarlo: Option<MonteCarlo>,
    grid_points: u64,
    runs: u64,
    total: u64,
}

fn checked_values(target: &str, sweep: &Sweep) -> Result<Vec<f64>, StudyError> {
    match sweep {
        Sweep::Linear { points: 0, .. } | Sweep::Log { points: 0, .. } => {
            return Err(StudyError::EmptySweep {
                target: target.to_string(),
            })
        }
        Sweep::Log { from, to, .. } if !(*from > 0.0 && *to > 0.0) => {
            return Err(StudyError::LogSweepNotPositive {
                target: target.to_string(),
                from: *from,
                to: *to,
            })
        }
        _ => {}
    }
    let values = sweep.values();
    if values.is_empty() {
        return Err(StudyError::EmptySweep {
            target: target.to_string(),
        });
    }
    if let Some((position, &value)) = values.iter().enumerate().find(|(_, v)| !v.is_finite()) {
        return Err(StudyError::NonFiniteSweepValue {
            target: target.to_string(),
            position,
            value,
        });
    }
    Ok(values)
}

impl Plan {
    /// Plan the study of `circuit` (its `study` block; element ids resolved to names).
    pub fn from_circuit(circuit: &Circuit) -> Result<Plan, StudyError> {
        let names: Vec<&str> = circuit.elements.iter().map(|e| e.name.as_str()).collect();
        Plan::new(&circuit.study, &names)
    }

    /// Plan from a study block and the circuit's element names (indexed by element id).
    pub fn new(spec: &StudySpec, element_names: &[&str]) -> Result<Plan, StudyError> {
        let mut keys: Vec<String> = Vec::new();
        let mut claim = |k: String| -> Result<(), StudyError> {
            if keys.contains(&k) {
                return Err(StudyError::DuplicateName { name: k });
            }
            keys.push(k);
            Ok(())
        };
        let mut axes = Vec::with_capacity(spec.vary.len());
        for v in &spec.vary {
            let target = match &v.target {
                VaryTarget::Param(p) => AxisTarget::Param(p.clone()),
                VaryTarget::Element(e) => AxisTarget::Element(e.clone()),
            };
            claim(target.name().to_string())?;
            let values = checked_values(target.name(), &v.sweep)?;
            axes.push(Axis { target, values });
        }
        let mut tolerances = Vec::with_capacity(spec.tolerances.len());
        for (position, t) in spec.tolerances.iter().enumerate() {
            let element = element_names
                .get(t.element.index())
                .ok_or(StudyError::UnknownElement {
                    position,
                    element: t.element.index(),
                    count: element_names.len(),
                })?
                .to_string();
            if !(t.fraction >= 0.0 && t.fraction < 1.0) {
                return Err(StudyError::BadTolerance {
                    element,
                    fraction: t.fraction,
                });
            }
            claim(factor_key(&element))?;
            tolerances.push(TolSpec {
                element,
                fraction: t.fraction,
                distribution: t.distribution,
            });
        }
        Plan::from_parts(axes, tolerances, spec.montecarlo)
    }

    /// Plan from already-resolved parts (axes must be non-empty and finite;
    /// checked again here).
    pub fn from_parts(
        axes: Vec<Axis>,
        tolerances: Vec<TolSpec>,
        montecarlo: Option<MonteCarlo>,
    ) -> Result<Plan, StudyError> {
        let mut grid: u64 = 1;
        let mut overflow = false;
        for a in &axes {
            let n = checked_values(a.target.name(), &Sweep::List(a.values.clone()))?.len();
            match grid.checked_mul(n as u64) {
                Some(g) => grid = g,
                None => {
                    overflow = true;
                    grid = u64::MAX;
                }
            }
        }
        for t in &tolerances {
            if !(t.fraction >= 0.0 && t.fraction < 1.0) {
                return Err(StudyError::BadTolerance {
                    element: t.element.clone(),
                    fraction: t.fraction,
                });
            }
        }
        let runs = montecarlo.map(|m| m.runs as u64).unwrap_or(1);
        let total = grid.checked_mul(runs);
        match total {
            Some(total) if !overflow => Ok(Plan {
                axes,
                tolerances,
                montecarlo,
                grid_points: grid,
                runs,
                total,
            }),
            _ => Err(StudyError::TooManyVariants { grid, runs }),
        }
    }

    /// Number of variants.
    pub fn len(&self) -> u64 {
        self.total
    }

    /// True if the plan has no variants (`montecarlo runs=0`).
    pub fn is_empty(&self) -> bool {
        self.total == 0
    }

    /// Number of grid points (∏ sweep lengths; 1 without `vary`).
    pub fn grid_points(&self) -> u64 {
        self.grid_points
    }

    /// Monte Carlo samples per grid point (1 without `montecarlo`).
    pub fn runs(&self) -> u64 {
        self.runs
    }

    /// The sweep axes, outermost first.
    pub fn axes(&self) -> &[Axis] {
        &self.axes
    }

    /// The tolerances.
    pub fn tolerances(&self) -> &[TolSpec] {
        &self.tolerances
    }

    /// The Monte Carlo settings.
    pub fn montecarlo(&self) -> Option<MonteCarlo> {
        self.montecarlo
    }

    /// Build variant `index`.
    pub fn variant(&self, index: u64) -> Result<Variant, StudyError> {
        if index >= self.total {
            return Err(StudyError::IndexOutOfRange {
                index,
                total: self.total,
            });
        }
        let grid_point = index / self.runs;
        let sample = index % self.runs;
        let mut positions = vec![0usize; self.axes.len()];
        let mut rest = grid_point;
        for (slot, axis) in positions.iter_mut().zip(&self.axes).rev() {
            let n = axis.values.len() as u64;
            *slot = (rest % n) as usize;
            rest /= n;
        }
        let mut values = BTreeMap::new();
        let mut overrides = Overrides::default();
        for (axis, &k) in self.axes.iter().zip(&positions) {
            let Some(&v) = axis.values.get(k) else {
                return Err(StudyError::IndexOutOfRange {
                    index,
                    total: self.total,
                });
            };
            values.insert(axis.target.name().to_string(), v);
            match &axis.target {
                AxisTarget::Param(p) => {
                    overrides.params.insert(p.clone(), v);
                }
                AxisTarget::Element(e) => {
                    overrides.element_values.insert(e.clone(), v);
                }
            }
        }
        if let Some(mc) = self.montecarlo {
            for (t, tol) in self.tolerances.iter().enumerate() {
                let f = tolerance_factor(mc.seed, sample, t, tol.fraction, tol.distribution);
                values.insert(factor_key(&tol.element), f);
                overrides.element_factors.insert(tol.element.clone(), f);
            }
        }
        Ok(Variant {
            index,
            grid_point,
            positions,
            sample: self.montecarlo.map(|_| sample),
            values,
            overrides,
        })
    }

    /// The keys every variant's `values` has, in sorted order: swept names,
    /// and `<element>.factor` for each tolerance when the study has `montecarlo`.
    pub fn value_keys(&self) -> Vec<String> {
        let mut keys: Vec<String> = self
            .axes
            .iter()
            .map(|a| a.target.name().to_string())
            .collect();
        if self.montecarlo.is_some() {
            keys.extend(self.tolerances.iter().map(|t| factor_key(&t.element)));
        }
        keys.sort();
        keys
    }

    /// Every variant in index order, built one at a time.
    pub fn iter(&self) -> impl Iterator<Item = Result<Variant, StudyError>> + '_ {
        (0..self.total).map(|i| self.variant(i))
    }

    /// Length of the innermost sweep (1 without `vary`).
    fn line_len(&self) -> u64 {
        self.axes.last().map(|a| a.values.len() as u64).unwrap_or(1)
    }

    /// Number of segments when grid lines are cut into chains of at most `chain` variants.
    pub fn segment_count(&self, chain: u64) -> Result<u64, StudyError> {
        if chain == 0 {
            return Err(StudyError::BadChain { chain });
        }
        let n = self.line_len();
        let lines = (self.grid_points / n) * self.runs;
        Ok(lines * n.div_ceil(chain))
    }

    /// The variant indices of segment `segment`, in chain order (an empty
    /// iterator for a segment beyond the plan).
    pub fn segment(
        &self,
        segment: u64,
        chain: u64,
    ) -> Result<impl Iterator<Item = u64> + use<>, StudyError> {
        let count = self.segment_count(chain)?;
        let n = self.line_len();
        let per_line = n.div_ceil(chain).max(1);
        let runs = self.runs.max(1);
        // Beyond the plan (including a plan with no variants): an empty range.
        let segment = segment.min(count);
        let (line, part) = (segment / per_line, segment % per_line);
        let (outer, sample) = (line / runs, line % runs);
        let start = part.saturating_mul(chain);
        let end = if segment < count {
            start.saturating_add(chain).min(n)
        } else {
            start
        };
        Ok((start..end).map(move |k| (outer * n + k) * runs + sample))
    }

    /// A 64-bit fingerprint (FNV-1a over the exact bits of everything that
    /// defines the variants), written in record-file headers so that resume
    /// and merge refuse records made for another plan.
    pub fn fingerprint(&self) -> u64 {
        let mut h = Fnv::new();
        h.u64(self.axes.len() as u64);
        for a in &self.axes {
            match &a.target {
                AxisTarget::Param(p) => {
                    h.u64(0);
                    h.str(p);
                }
                AxisTarget::Element(e) => {
                    h.u64(1);
                    h.str(e);
                }
            }
            h.u64(a.values.len() as u64);
            for v in &a.values {
                h.u64(v.to_bits());
            }
        }
        h.u64(self.tolerances.len() as u64);
        for t in &self.tolerances {
            h.str(&t.element);
            h.u64(t.fraction.to_bits());
            h.u64(match t.distribution {
                Distribution::Uniform => 0,
                Distribution::Gaussian => 1,
            });
        }
        match self.montecarlo {
            None => h.u64(0),
            Some(m) => {
                h.u64(1);
                h.u64(m.runs as u64);
                h.u64(m.seed);
            }
        }
        h.0
    }
}

/// FNV-1a, 64-bit (Fowler–Noll–Vo; offset basis 0xcbf29ce484222325, prime 0x100000001b3).
pub(crate) struct Fnv(pub(crate) u64);

impl Fnv {
    pub(crate) fn new() -> Self {
        Fnv(0xcbf2_9ce4_8422_2325)
    }
    pub(crate) fn bytes(&mut self, b: &[u8]) {
        for &x in b {
            self.0 ^= u64::from(x);
            self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        }
    }
    fn u64(&mut self, v: u64) {
        self.bytes(&v.to_le_bytes());
    }
    fn str(&mut self, s: &str) {
        self.u64(s.len() as u64);
        self.bytes(s.as_bytes());
    }
}
