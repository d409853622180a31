//! Compensated summation, so that sums over millions of cells stay exact to ~1e-15.

/// Neumaier's improved Kahan summation (A. Neumaier, ZAMM 54:39-51, 1974).
#[must_use]
pub fn neumaier_sum(values: impl IntoIterator<Item = f64>) -> f64 {
    let mut sum = 0.0_f64;
    let mut comp = 0.0_f64;
    for v in values {
        let t = sum + v;
        if sum.abs() >= v.abs() {
            comp += (sum - t) + v;
        } else {
            comp += (v - t) + sum;
        }
        sum = t;
    }
    sum + comp
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compensated_sum_survives_cancellation() {
        // Classic example: naive summation of [1, 1e100, 1, -1e100] gives 0; exact is 2.
        assert_eq!(neumaier_sum([1.0, 1e100, 1.0, -1e100]), 2.0);
        let many = std::iter::repeat_n(0.1, 10_000_000);
        assert!((neumaier_sum(many) - 1_000_000.0).abs() < 1e-6);
    }
}
