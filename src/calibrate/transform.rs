//! The smooth map between an unbounded fitting variable z and a bounded parameter value.

/// A parameter's box and scale: value = low + (high − low)·u (linear) or
/// ln value = ln low + (ln high − ln low)·u (log), with u = 1/(1 + e^(−z)).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bounded {
    pub low: f64,
    pub high: f64,
    pub log: bool,
}

/// u stays this far inside (0, 1) when a value on a bound is mapped to z, so z is finite.
const EDGE: f64 = 1e-9;

impl Bounded {
    /// The natural coordinate φ: ln value for log parameters, the value otherwise.
    pub fn natural(&self, value: f64) -> f64 {
        if self.log {
            value.ln()
        } else {
            value
        }
    }

    fn natural_range(&self) -> (f64, f64) {
        (self.natural(self.low), self.natural(self.high))
    }

    /// The parameter value of z.
    pub fn value(&self, z: f64) -> f64 {
        let (lo, hi) = self.natural_range();
        let phi = lo + (hi - lo) * logistic(z);
        let value = if self.log { phi.exp() } else { phi };
        // exp(ln low) may round below low; the bounds are what the input rules were checked at.
        value.clamp(self.low, self.high)
    }

    /// The z of a value (clamped just inside the bounds).
    pub fn z(&self, value: f64) -> f64 {
        let (lo, hi) = self.natural_range();
        let u = ((self.natural(value) - lo) / (hi - lo)).clamp(EDGE, 1.0 - EDGE);
        (u / (1.0 - u)).ln()
    }

    /// dφ/dz at z.
    pub fn natural_per_z(&self, z: f64) -> f64 {
        let (lo, hi) = self.natural_range();
        let u = logistic(z);
        (hi - lo) * u * (1.0 - u)
    }
}

fn logistic(z: f64) -> f64 {
    1.0 / (1.0 + (-z).exp())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_and_stays_inside_the_bounds() {
        for b in [Bounded { low: 1e-22, high: 1e-19, log: true }, Bounded { low: 20.0, high: 80.0, log: false }] {
            for v in [b.low * 1.5, (b.low + b.high) / 2.0, b.high * 0.9] {
                let back = b.value(b.z(v));
                assert!(((back - v) / v).abs() < 1e-9, "{v} → {back}");
            }
            for z in [-50.0, -3.0, 0.0, 3.0, 50.0] {
                let v = b.value(z);
                assert!(v >= b.low && v <= b.high, "{v}");
            }
        }
    }

    #[test]
    fn derivative_matches_finite_differences() {
        let b = Bounded { low: 1e-22, high: 1e-19, log: true };
        for z in [-2.0, 0.3, 1.7] {
            let h = 1e-6;
            let fd = (b.natural(b.value(z + h)) - b.natural(b.value(z - h))) / (2.0 * h);
            assert!((fd - b.natural_per_z(z)).abs() < 1e-6 * fd.abs(), "{fd} vs {}", b.natural_per_z(z));
        }
    }
}
