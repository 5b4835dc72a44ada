//! Property tests: numbering, segments and shards over random study shapes.

mod common;

use common::*;
use proptest::prelude::*;
use tankwave_circuit::{MonteCarlo, StudySpec, Sweep};
use tankwave_study::{percentile_sorted, shard_indices, Plan, Shard};

fn spec(sizes: &[usize], runs: Option<usize>) -> StudySpec {
    StudySpec {
        vary: sizes
            .iter()
            .enumerate()
            .map(|(k, &n)| {
                vary_param(
                    &format!("p{k}"),
                    Sweep::Linear {
                        from: 1.0,
                        to: 2.0,
                        points: n,
                    },
                )
            })
            .collect(),
        montecarlo: runs.map(|runs| MonteCarlo { runs, seed: 3 }),
        ..Default::default()
    }
}

proptest! {
    /// Decoding the positions of variant i and re-encoding them gives i back,
    /// and the variant count is the product of the sweep lengths and runs.
    #[test]
    fn numbering_round_trips(sizes in prop::collection::vec(1usize..5, 0..4), runs in prop::option::of(1usize..4)) {
        let plan = Plan::new(&spec(&sizes, runs), &ELEMENTS).unwrap();
        let r = runs.unwrap_or(1) as u64;
        prop_assert_eq!(plan.len(), sizes.iter().map(|&n| n as u64).product::<u64>() * r);
        for i in 0..plan.len() {
            let v = plan.variant(i).unwrap();
            let g = v.positions.iter().zip(&sizes).fold(0u64, |g, (&k, &n)| g * n as u64 + k as u64);
            prop_assert_eq!(g * r + v.sample.unwrap_or(0), i);
        }
    }

    /// For any chain length and shard count, the shards partition 0..N.
    #[test]
    fn shards_partition(sizes in prop::collection::vec(1usize..6, 0..3), runs in prop::option::of(0usize..4),
                        chain in 1u64..6, count in 1u64..5) {
        let plan = Plan::new(&spec(&sizes, runs), &ELEMENTS).unwrap();
        let mut all = Vec::new();
        for i in 0..count {
            all.extend(shard_indices(&plan, chain, Some(Shard::new(i, count).unwrap())).unwrap());
        }
        all.sort_unstable();
        prop_assert_eq!(all, (0..plan.len()).collect::<Vec<_>>());
    }

    /// Percentiles are non-decreasing in p and lie between min and max.
    #[test]
    fn percentiles_are_monotone(mut data in prop::collection::vec(-1e6f64..1e6, 1..50)) {
        data.sort_by(f64::total_cmp);
        let mut last = f64::NEG_INFINITY;
        for k in 0..=100 {
            let v = percentile_sorted(&data, k as f64).unwrap();
            prop_assert!(v >= last && v >= data[0] && v <= data[data.len() - 1]);
            last = v;
        }
    }
}
