//! Thread threshold of the dense LU (run: `cargo bench -p tankwave-solve
//! --bench threads`): for each order n, the time of one factorisation and
//! one solve on the calling thread against faer's parallel kernels on every
//! thread (its default), as a ratio in one run (median of repeats). The
//! order from which the parallel kernels win is
//! [`tankwave_solve::linalg::PARALLEL_FROM`] (docs/performance.md).
//!
//! Then, for small orders, one thread each: nalgebra's unblocked LU against
//! faer's blocked one (factor and one solve, as a ratio in one run): the
//! order below which the first wins is
//! [`tankwave_solve::linalg::SMALL_DENSE_BELOW`].

use std::time::Instant;
use tankwave_solve::linalg::DenseLu;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

fn main() {
    // fixed-seed matrices (64-bit LCG, Knuth's MMIX constants, from memory)
    let mut seed = 0x7417_u64;
    let mut next = move || {
        seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((seed >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    };
    let threads = faer::get_global_parallelism();
    println!("dense LU + one solve: one thread vs faer's default ({threads:?})");
    println!(
        "{:>6} {:>12} {:>12} {:>8}",
        "n", "1 thread s", "parallel s", "par/seq"
    );
    for n in [32usize, 64, 128, 256, 512, 768, 1024, 1536, 2048] {
        let a =
            faer::Mat::<f64>::from_fn(n, n, |i, j| next() + if i == j { n as f64 } else { 0.0 });
        let repeats = if n <= 256 {
            21
        } else if n <= 1024 {
            7
        } else {
            3
        };
        let run = |par: faer::Par| {
            median(
                (0..repeats)
                    .map(|_| {
                        let s = Instant::now();
                        let lu = DenseLu::with_par(a.clone(), par);
                        let mut b = faer::Mat::<f64>::from_fn(n, 1, |i, _| i as f64);
                        lu.solve_in_place(b.as_mut());
                        std::hint::black_box(&b);
                        s.elapsed().as_secs_f64()
                    })
                    .collect(),
            )
        };
        let seq = run(faer::Par::Seq);
        let par = run(threads);
        println!("{n:>6} {seq:>12.6} {par:>12.6} {:>8.2}", par / seq);
    }
    println!("small dense LU + one solve, one thread: nalgebra (unblocked) vs faer (blocked)");
    println!(
        "{:>6} {:>12} {:>12} {:>8}",
        "n", "nalgebra µs", "faer µs", "faer/nal"
    );
    for n in [8usize, 14, 20, 32, 48, 64, 128] {
        let a: Vec<f64> = (0..n * n)
            .map(|k| next() + if k % (n + 1) == 0 { n as f64 } else { 0.0 })
            .collect();
        // each sample times `inner` factorisations (microseconds each)
        let inner = (200_000 / (n * n)).max(4);
        let sample = |f: &dyn Fn()| {
            median(
                (0..21)
                    .map(|_| {
                        let s = Instant::now();
                        for _ in 0..inner {
                            f();
                        }
                        s.elapsed().as_secs_f64() / inner as f64
                    })
                    .collect(),
            )
        };
        let nal = sample(&|| {
            let lu = nalgebra::DMatrix::from_row_slice(n, n, &a).lu();
            let mut b = nalgebra::DVector::from_fn(n, |i, _| i as f64);
            lu.solve_mut(&mut b);
            std::hint::black_box(&b);
        });
        let fa = sample(&|| {
            let m = faer::Mat::<f64>::from_fn(n, n, |i, j| a[i * n + j]);
            let lu = DenseLu::with_par(m, faer::Par::Seq);
            let mut b = faer::Mat::<f64>::from_fn(n, 1, |i, _| i as f64);
            lu.solve_in_place(b.as_mut());
            std::hint::black_box(&b);
        });
        println!(
            "{n:>6} {:>12.2} {:>12.2} {:>8.2}",
            nal * 1e6,
            fa * 1e6,
            fa / nal
        );
    }
}
