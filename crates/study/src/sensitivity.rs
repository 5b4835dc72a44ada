//! Which sampled parameters drive each figure and each requirement's margin.
//!
//! For every pair (input, target) — an input being a swept value or a
//! tolerance factor of the variants, a target a measured figure or a
//! requirement's margin — the study reports Spearman's rank correlation
//! ρ: the Pearson correlation of the ranks, tied values given their
//! average rank (C. Spearman, "The proof and measurement of association
//! between two things", Am. J. Psychol. 15(1), 1904; the tie rule is the
//! one `scipy.stats.spearmanr` uses, checked against it in the tests, see
//! docs/check-values.md). A rank correlation is used rather than a linear
//! regression because figures against part values are monotone but seldom
//! linear (output power against a tank capacitor peaks, efficiency
//! saturates), and ranks are not pulled by a few extreme variants.
//!
//! Under independence ρ is about normal with variance 1/(n − 1) for n
//! variants (large-sample approximation, from memory), so |ρ| below
//! 1.96/√(n − 1) is indistinguishable from chance at the two-sided 5 %
//! level; [`noise_level`] gives that bound and the summary lists only the
//! inputs above it, strongest first.

use std::collections::BTreeMap;

/// Ranks of `v` (1-based), ties given the average of the ranks they span.
fn ranks(v: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..v.len()).collect();
    idx.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut r = vec![0.0; v.len()];
    let mut i = 0;
    while i < idx.len() {
        let mut j = i + 1;
        while j < idx.len() && v[idx[j]] == v[idx[i]] {
            j += 1;
        }
        // Positions i..j (0-based) hold equal values: ranks i+1..=j.
        let avg = (i + 1 + j) as f64 / 2.0;
        for &k in &idx[i..j] {
            r[k] = avg;
        }
        i = j;
    }
    r
}

/// Spearman's rank correlation of the pairs of `x` and `y` where both are
/// finite. `None` with fewer than 3 such pairs, or when either side is
/// constant over them (the correlation is undefined).
pub fn spearman(x: &[f64], y: &[f64]) -> Option<f64> {
    let (xs, ys): (Vec<f64>, Vec<f64>) = x
        .iter()
        .zip(y)
        .filter(|(a, b)| a.is_finite() && b.is_finite())
        .map(|(a, b)| (*a, *b))
        .unzip();
    if xs.len() < 3 {
        return None;
    }
    let (rx, ry) = (ranks(&xs), ranks(&ys));
    let n = rx.len() as f64;
    let (mx, my) = (rx.iter().sum::<f64>() / n, ry.iter().sum::<f64>() / n);
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in rx.iter().zip(&ry) {
        sxy += (a - mx) * (b - my);
        sxx += (a - mx) * (a - mx);
        syy += (b - my) * (b - my);
    }
    if sxx <= 0.0 || syy <= 0.0 {
        return None;
    }
    Some((sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0))
}

/// The |ρ| below which a rank correlation over `n` variants cannot be told
/// from chance at the two-sided 5 % level: 1.96/√(n − 1) (see the module
/// overview). Infinite for n < 3.
pub fn noise_level(n: usize) -> f64 {
    if n < 3 {
        f64::INFINITY
    } else {
        1.96 / ((n - 1) as f64).sqrt()
    }
}

/// The inputs that drive one target, strongest first.
#[derive(Debug, Clone, PartialEq)]
pub struct Drivers {
    /// Variants that had both the target and the inputs.
    pub variants: u64,
    /// [`noise_level`] for that many variants.
    pub noise_level: f64,
    /// (input name, ρ) for every input with |ρ| at or above the noise
    /// level, by decreasing |ρ| (ties by name).
    pub inputs: Vec<(String, f64)>,
}

/// Collects aligned columns of inputs and targets, one row per variant that
/// ran, and ranks the inputs of every target. 8 bytes per variant per
/// input and per target.
#[derive(Debug, Clone, Default)]
pub struct SensitivityBuilder {
    rows: usize,
    inputs: BTreeMap<String, Vec<f64>>,
    targets: BTreeMap<String, Vec<f64>>,
}

fn push_row(cols: &mut BTreeMap<String, Vec<f64>>, rows: usize, row: &BTreeMap<String, f64>) {
    for (k, &v) in row {
        cols.entry(k.clone())
            .or_insert_with(|| vec![f64::NAN; rows])
            .push(v);
    }
    for col in cols.values_mut() {
        if col.len() < rows + 1 {
            col.push(f64::NAN);
        }
    }
}

impl SensitivityBuilder {
    /// Add one variant: its inputs and its targets (missing ones are gaps).
    pub fn add(&mut self, inputs: &BTreeMap<String, f64>, targets: &BTreeMap<String, f64>) {
        push_row(&mut self.inputs, self.rows, inputs);
        push_row(&mut self.targets, self.rows, targets);
        self.rows += 1;
    }

    /// The drivers of every target that has at least one.
    pub fn finish(&self) -> BTreeMap<String, Drivers> {
        let mut out = BTreeMap::new();
        for (t, y) in &self.targets {
            let mut n_max = 0usize;
            let mut found = Vec::new();
            for (i, x) in &self.inputs {
                let n = x
                    .iter()
                    .zip(y)
                    .filter(|(a, b)| a.is_finite() && b.is_finite())
                    .count();
                n_max = n_max.max(n);
                if let Some(rho) = spearman(x, y) {
                    if rho.abs() >= noise_level(n) {
                        found.push((i.clone(), rho));
                    }
                }
            }
            if found.is_empty() {
                continue;
            }
            found.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()).then(a.0.cmp(&b.0)));
            out.insert(
                t.clone(),
                Drivers {
                    variants: n_max as u64,
                    noise_level: noise_level(n_max),
                    inputs: found,
                },
            );
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranks_average_ties() {
        assert_eq!(ranks(&[3.0, 1.0, 2.0, 2.0]), vec![4.0, 1.0, 2.5, 2.5]);
    }

    #[test]
    fn undefined_cases_give_none() {
        assert_eq!(spearman(&[1.0, 2.0], &[1.0, 2.0]), None);
        assert_eq!(spearman(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]), None);
        assert_eq!(
            spearman(&[1.0, f64::NAN, 2.0, 3.0], &[1.0, 5.0, 2.0, 3.0]),
            Some(1.0)
        );
    }

    #[test]
    fn a_strong_driver_is_listed_and_noise_is_not() {
        let mut b = SensitivityBuilder::default();
        for i in 0..50 {
            let c = i as f64;
            // A deterministic "unrelated" input: a permutation with no trend.
            let other = ((i * 37) % 50) as f64;
            let inputs = BTreeMap::from([("c1".to_string(), c), ("r9".to_string(), other)]);
            let targets = BTreeMap::from([("pout".to_string(), -(c * c))]);
            b.add(&inputs, &targets);
        }
        let d = b.finish();
        let pout = &d["pout"];
        assert_eq!(pout.inputs[0].0, "c1");
        assert!((pout.inputs[0].1 + 1.0).abs() < 1e-12);
        assert!(pout.inputs.iter().all(|(n, _)| n != "r9"), "{pout:?}");
    }
}
