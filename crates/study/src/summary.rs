//! Summary of a study's records: yield, statistics of every figure, and the
//! worst variant for each requirement.
//!
//! * Yield = (variants that ran and passed every requirement) / (all
//!   variants summarised). A failed variant counts as not passing. With no
//!   requirements at all, yield is the fraction of variants that ran.
//! * For every figure: count, min, median, max, mean and the requested
//!   percentiles over the variants that have it. Percentiles use linear
//!   interpolation between order statistics, the definition numpy's
//!   `percentile(..., method="linear")` uses (Hyndman and Fan, "Sample
//!   quantiles in statistical packages", The American Statistician 50(4),
//!   1996, definition 7): for sorted x₀ ≤ … ≤ x_{n−1} and p in [0, 100],
//!   h = (n − 1)·p/100, and the value is x_⌊h⌋ + (h − ⌊h⌋)·(x_⌊h⌋+1 − x_⌊h⌋).
//! * For every requirement: how many variants passed, and the variant with
//!   the smallest margin (the first such index on ties).
//! * For every figure and every requirement's margin: the swept values and
//!   tolerance factors that drive it, by rank correlation
//!   ([`crate::sensitivity`]).

use std::collections::BTreeMap;

use crate::record::{Record, RecordSink};
use crate::sensitivity::{Drivers, SensitivityBuilder};
use crate::StudyError;

/// Statistics of one figure.
#[derive(Debug, Clone, PartialEq)]
pub struct FigureStats {
    /// Variants that have the figure.
    pub count: u64,
    /// Smallest value.
    pub min: f64,
    /// Median (the 50th percentile, same method).
    pub median: f64,
    /// Largest value.
    pub max: f64,
    /// Arithmetic mean.
    pub mean: f64,
    /// (p, value) for each requested percentile, in the order asked.
    pub percentiles: Vec<(f64, f64)>,
}

/// A requirement over the whole study.
#[derive(Debug, Clone, PartialEq)]
pub struct RequirementStats {
    /// Variants where it was evaluated.
    pub evaluated: u64,
    /// Variants where it passed.
    pub passed: u64,
    /// The variant with the smallest margin.
    pub worst_index: u64,
    /// That margin.
    pub worst_margin: f64,
    /// The worst variant's swept values and tolerance factors (its record's
    /// `values`), so that it can be named by what makes it, not only by number.
    pub worst_values: BTreeMap<String, f64>,
}

/// The summary of a set of records.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Summary {
    /// Records summarised.
    pub variants: u64,
    /// Records with an error.
    pub failed: u64,
    /// Records that ran and passed every requirement.
    pub passed_all: u64,
    /// passed_all / variants (0 with no variants).
    pub yield_fraction: f64,
    /// Statistics of every figure, by name.
    pub figures: BTreeMap<String, FigureStats>,
    /// Statistics of every requirement, by its text.
    pub requirements: BTreeMap<String, RequirementStats>,
    /// The inputs that drive each figure, by figure name (only figures
    /// with a driver above the noise level).
    pub figure_drivers: BTreeMap<String, Drivers>,
    /// The inputs that drive each requirement's margin, by requirement text.
    pub requirement_drivers: BTreeMap<String, Drivers>,
}

/// The `p`-th percentile (0..=100) of `sorted` (ascending, non-empty) by
/// linear interpolation (numpy's default `method="linear"`; see the module overview).
pub fn percentile_sorted(sorted: &[f64], p: f64) -> Result<f64, StudyError> {
    if !(0.0..=100.0).contains(&p) {
        return Err(StudyError::BadPercentile { p });
    }
    let n = sorted.len();
    let (Some(&first), Some(&last)) = (sorted.first(), sorted.last()) else {
        return Err(StudyError::BadPercentile { p });
    };
    if n == 1 {
        return Ok(first);
    }
    let h = (n - 1) as f64 * p / 100.0;
    let lo = h.floor() as usize;
    match (sorted.get(lo), sorted.get(lo + 1)) {
        (Some(&a), Some(&b)) => Ok(a + (h - lo as f64) * (b - a)),
        _ => Ok(last),
    }
}

/// Builds a [`Summary`] one record at a time (e.g. straight from a
/// [`crate::RecordReader`]), keeping only the figures' values, the inputs
/// and the margins (8 bytes each per variant), never the records.
#[derive(Debug, Clone, Default)]
pub struct SummaryBuilder {
    summary: Summary,
    values: BTreeMap<String, Vec<f64>>,
    figure_drivers: SensitivityBuilder,
    requirement_drivers: SensitivityBuilder,
}

impl SummaryBuilder {
    /// An empty builder.
    pub fn new() -> Self {
        Self::default()
    }

    /// Add one record.
    pub fn add(&mut self, r: &Record) {
        let s = &mut self.summary;
        s.variants += 1;
        if r.error.is_some() {
            s.failed += 1;
            return;
        }
        if r.passes_all() {
            s.passed_all += 1;
        }
        for (k, &v) in &r.metrics {
            if v.is_finite() {
                self.values.entry(k.clone()).or_default().push(v);
            }
        }
        self.figure_drivers.add(&r.values, &r.metrics);
        let margins: BTreeMap<String, f64> = r
            .verdicts
            .iter()
            .map(|(k, v)| (k.clone(), v.margin))
            .collect();
        self.requirement_drivers.add(&r.values, &margins);
        for (k, v) in &r.verdicts {
            if !v.margin.is_finite() {
                continue;
            }
            let e = s.requirements.entry(k.clone()).or_insert(RequirementStats {
                evaluated: 0,
                passed: 0,
                worst_index: r.index,
                worst_margin: v.margin,
                worst_values: r.values.clone(),
            });
            e.evaluated += 1;
            if v.pass {
                e.passed += 1;
            }
            if v.margin < e.worst_margin || (v.margin == e.worst_margin && r.index < e.worst_index)
            {
                e.worst_margin = v.margin;
                e.worst_index = r.index;
                e.worst_values = r.values.clone();
            }
        }
    }

    /// Finish with the given percentiles (each in 0..=100, e.g. `&[5.0, 95.0]`).
    pub fn finish(self, percentiles: &[f64]) -> Result<Summary, StudyError> {
        if let Some(&p) = percentiles.iter().find(|p| !(0.0..=100.0).contains(*p)) {
            return Err(StudyError::BadPercentile { p });
        }
        let mut s = self.summary;
        s.figure_drivers = self.figure_drivers.finish();
        s.requirement_drivers = self.requirement_drivers.finish();
        if s.variants > 0 {
            s.yield_fraction = s.passed_all as f64 / s.variants as f64;
        }
        for (k, mut v) in self.values {
            v.sort_by(f64::total_cmp);
            let (Some(&min), Some(&max)) = (v.first(), v.last()) else {
                continue;
            };
            let n = v.len() as f64;
            let mean = v.iter().map(|x| x / n).sum::<f64>();
            let median = percentile_sorted(&v, 50.0)?;
            let mut pct = Vec::with_capacity(percentiles.len());
            for &p in percentiles {
                pct.push((p, percentile_sorted(&v, p)?));
            }
            s.figures.insert(
                k,
                FigureStats {
                    count: v.len() as u64,
                    min,
                    median,
                    max,
                    mean,
                    percentiles: pct,
                },
            );
        }
        Ok(s)
    }
}

/// A [`RecordSink`] that adds every record to a [`SummaryBuilder`] as the
/// records stream by and, when asked to, keeps them as well (histograms
/// need every value). Tee it with a file sink to write and summarise in
/// one run; `&mut SummarySink` is a sink too, so it can be teed and read
/// afterwards.
#[derive(Debug, Clone, Default)]
pub struct SummarySink {
    builder: SummaryBuilder,
    keep: bool,
    kept: Vec<Record>,
}

impl SummarySink {
    /// A sink that summarises, and keeps the records if `keep`.
    pub fn new(keep: bool) -> Self {
        SummarySink {
            keep,
            ..SummarySink::default()
        }
    }

    /// The records kept so far (empty unless made with `keep`).
    pub fn kept(&self) -> &[Record] {
        &self.kept
    }

    /// Finish the summary with the given percentiles (see
    /// [`SummaryBuilder::finish`]) and hand back the kept records.
    pub fn finish(self, percentiles: &[f64]) -> Result<(Summary, Vec<Record>), StudyError> {
        Ok((self.builder.finish(percentiles)?, self.kept))
    }
}

impl RecordSink for SummarySink {
    fn record(&mut self, r: &Record) -> Result<(), StudyError> {
        self.builder.add(r);
        if self.keep {
            self.kept.push(r.clone());
        }
        Ok(())
    }
}

impl RecordSink for &mut SummarySink {
    fn record(&mut self, r: &Record) -> Result<(), StudyError> {
        (**self).record(r)
    }
}

impl Summary {
    /// Summarise `records` with the given percentiles (e.g. `&[5.0, 95.0]`).
    pub fn from_records<'a>(
        records: impl IntoIterator<Item = &'a Record>,
        percentiles: &[f64],
    ) -> Result<Summary, StudyError> {
        let mut b = SummaryBuilder::new();
        for r in records {
            b.add(r);
        }
        b.finish(percentiles)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::record::Verdict;

    fn rec(index: u64, pout: f64, pass: bool) -> Record {
        Record {
            index,
            values: BTreeMap::new(),
            metrics: [("pout_w".to_string(), pout)].into_iter().collect(),
            verdicts: [(
                "pout >= 1W".to_string(),
                Verdict {
                    pass,
                    margin: pout - 1.0,
                },
            )]
            .into_iter()
            .collect(),
            error: None,
        }
    }

    /// The sink's summary equals the summary of the same records taken at
    /// once; records are kept only when asked.
    #[test]
    fn sink_summarises_and_keeps_on_request() {
        let records = [rec(0, 0.5, false), rec(1, 2.0, true), rec(2, 1.5, true)];
        let mut keeping = SummarySink::new(true);
        let mut plain = SummarySink::new(false);
        for r in &records {
            keeping.record(r).expect("memory sink");
            // teed by reference, as a run that also writes a file uses it
            let mut tee = crate::record::TeeSink(crate::record::MemorySink::default(), &mut plain);
            tee.record(r).expect("memory sinks");
        }
        assert_eq!(keeping.kept().len(), 3);
        assert!(plain.kept().is_empty());
        let (s, kept) = keeping.finish(&[50.0]).expect("valid percentile");
        assert_eq!(kept, records.to_vec());
        assert_eq!(
            s,
            Summary::from_records(&records, &[50.0]).expect("same data")
        );
        assert_eq!(s.passed_all, 2);
        assert!(plain.finish(&[101.0]).is_err());
    }
}
