//! Times the product-correlation probabilities and critical values behind comparisons
//! with a control (Dunnett) and with the best (Hsu) for 20 conditions of unequal sizes,
//! as in the assessment benchmark. Run in release:
//! `cargo run --release -p sidecar --example dunnett_timing`

use std::time::Instant;

use engine::stats::dunnett::{
    dunnett_lambdas, mcb_critical_values, product_correlation_cdf, product_correlation_quantile, Sides,
};

fn main() {
    // Sizes proportional to c + 1 for c = 0..20, 1,000,000 values in all (invented layout).
    let ns: Vec<f64> = (0..20)
        .map(|c| (1_000_000.0 * (c as f64 + 1.0) / 210.0).round())
        .collect();
    let total: f64 = ns.iter().sum();
    for &df in &[total - 20.0, 200.0, 30.0, 8.0, f64::INFINITY] {
        let lambdas = dunnett_lambdas(ns[0], &ns[1..]).expect("sizes");
        for sides in [Sides::Two, Sides::One] {
            let started = Instant::now();
            let critical = product_correlation_quantile(0.95, &lambdas, df, sides).expect("quantile");
            let quantile_time = started.elapsed();
            let started = Instant::now();
            let mut sum = 0.0;
            for step in 0..19 {
                sum += product_correlation_cdf(0.5 + 0.2 * step as f64, &lambdas, df, sides).expect("cdf");
            }
            let cdf_time = started.elapsed() / 19;
            println!(
                "df {df:>9}: {sides:?} control critical {critical:.10} in {:.2} ms; cdf {:.3} ms each (sum {sum:.6})",
                quantile_time.as_secs_f64() * 1e3,
                cdf_time.as_secs_f64() * 1e3
            );
        }
        let started = Instant::now();
        let values = mcb_critical_values(&ns, df, 0.95).expect("mcb");
        println!(
            "df {df:>9}: best-of critical values {:.6}..{:.6} in {:.2} ms",
            values.iter().cloned().fold(f64::INFINITY, f64::min),
            values.iter().cloned().fold(0.0, f64::max),
            started.elapsed().as_secs_f64() * 1e3
        );
    }
}
