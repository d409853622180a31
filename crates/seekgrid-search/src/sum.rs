//! A running compensated sum.

/// Neumaier's improved Kahan summation (A. Neumaier, ZAMM 54:39-51, 1974) as a running
/// accumulator. Hand-written because the fused passes of this crate keep several sums at once,
/// which `seekgrid_core::neumaier_sum` (one iterator) cannot.
#[derive(Clone, Copy, Default, Debug)]
pub(crate) struct Compensated {
    sum: f64,
    comp: f64,
}

impl Compensated {
    #[inline(always)]
    pub(crate) fn add(&mut self, v: f64) {
        let t = self.sum + v;
        if self.sum.abs() >= v.abs() {
            self.comp += (self.sum - t) + v;
        } else {
            self.comp += (v - t) + self.sum;
        }
        self.sum = t;
    }

    pub(crate) fn value(self) -> f64 {
        self.sum + self.comp
    }
}
