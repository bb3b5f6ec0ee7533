//! Accuracy measures shared by the engine's numerical tests.

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]

// Not every test binary that shares this module checks the model checks.
#[allow(dead_code)]
pub mod model_checks;

/// Log relative error (digits in agreement), capped at 16; 0 for a NaN figure.
pub fn lre(actual: f64, reference: f64) -> f64 {
    if actual == reference {
        return 16.0;
    }
    let digits = -((actual - reference).abs() / reference.abs()).log10();
    // A NaN figure has no digit right (NaN must not pass as agreement).
    if digits.is_nan() {
        return 0.0;
    }
    digits.min(16.0)
}

/// Prints the agreement of `actual` with `reference` and fails below `at_least` digits.
pub fn check(label: &str, actual: f64, reference: f64, at_least: f64) {
    let digits = lre(actual, reference);
    println!("{label}: {actual:e} against {reference:e}, LRE {digits:.1}");
    assert!(
        digits >= at_least,
        "{label}: {actual:e} against {reference:e}, LRE {digits:.1}"
    );
}
