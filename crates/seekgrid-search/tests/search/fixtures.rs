//! Reference values frozen by fixtures/reference/make_search_fixtures.py (SciPy).
#![allow(
    clippy::disallowed_methods,
    reason = "reads the SciPy values frozen in fixtures/reference"
)]

use serde_json::Value;

/// The parsed fixture file.
pub fn reference() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../fixtures/reference/search_reference.json"
    );
    let text =
        std::fs::read_to_string(path).expect("run fixtures/reference/make_search_fixtures.py");
    serde_json::from_str(&text).expect("fixture is JSON")
}

/// A list of numbers.
pub fn numbers(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

/// One number.
pub fn number(v: &Value) -> f64 {
    v.as_f64().expect("number")
}
