//! Double-double arithmetic: a value carried as an unevaluated sum `hi + lo`
//! of two doubles, giving about 106 bits of significand.
//!
//! Building blocks: Knuth's branch-free TwoSum (TAOCP vol. 2, §4.2.2) and
//! the FMA-based TwoProd; the pair algorithms follow Dekker (1971) and Hida,
//! Li & Bailey (2001). `libm::fma` is used so the crate stays `no_std`; it is
//! exact on every target (software-emulated where the CPU has no FMA).

/// A double-double number `hi + lo` with `|lo| <= ulp(hi) / 2`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Dd {
    /// Leading part.
    pub hi: f64,
    /// Trailing part.
    pub lo: f64,
}

/// Exact sum: returns `(s, e)` with `s = fl(a + b)` and `a + b = s + e`.
#[inline]
pub fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb);
    (s, e)
}

/// Exact product: returns `(p, e)` with `p = fl(a * b)` and `a * b = p + e`.
#[inline]
pub fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    (p, libm::fma(a, b, -p))
}

// Inherent methods keep call sites readable in no_std code without importing
// the operator traits; the operators below delegate to them.
#[allow(clippy::should_implement_trait)]
impl Dd {
    /// The double-double equal to `x`.
    #[inline]
    pub const fn from_f64(x: f64) -> Self {
        Dd { hi: x, lo: 0.0 }
    }

    /// Rounds to the nearest double.
    #[inline]
    pub fn to_f64(self) -> f64 {
        self.hi + self.lo
    }

    #[inline]
    fn renorm(hi: f64, lo: f64) -> Self {
        let s = hi + lo;
        Dd {
            hi: s,
            lo: lo - (s - hi),
        }
    }

    /// Sum of two double-doubles (accurate version, Hida–Li–Bailey).
    #[inline]
    pub fn add(self, o: Dd) -> Dd {
        let (s, e) = two_sum(self.hi, o.hi);
        let (t, f) = two_sum(self.lo, o.lo);
        let r = Self::renorm(s, e + t);
        Self::renorm(r.hi, r.lo + f)
    }

    /// Sum with a double.
    #[inline]
    pub fn add_f64(self, b: f64) -> Dd {
        let (s, e) = two_sum(self.hi, b);
        Self::renorm(s, e + self.lo)
    }

    /// Difference.
    #[inline]
    pub fn sub(self, o: Dd) -> Dd {
        self.add(o.neg())
    }

    /// Negation.
    #[inline]
    pub fn neg(self) -> Dd {
        Dd {
            hi: -self.hi,
            lo: -self.lo,
        }
    }

    /// Product of two double-doubles.
    #[inline]
    pub fn mul(self, o: Dd) -> Dd {
        let (p, e) = two_prod(self.hi, o.hi);
        let e = e + (self.hi * o.lo + self.lo * o.hi);
        Self::renorm(p, e)
    }

    /// Product with a double.
    #[inline]
    pub fn mul_f64(self, b: f64) -> Dd {
        let (p, e) = two_prod(self.hi, b);
        Self::renorm(p, e + self.lo * b)
    }

    /// Quotient of two double-doubles (one Newton correction).
    #[inline]
    pub fn div(self, o: Dd) -> Dd {
        let q1 = self.hi / o.hi;
        let r = self.sub(o.mul_f64(q1));
        let q2 = r.hi / o.hi;
        let r = r.sub(o.mul_f64(q2));
        let q3 = r.hi / o.hi;
        Self::renorm(q1, q2).add_f64(q3)
    }

    /// Square root (one Newton step from the double square root).
    #[inline]
    pub fn sqrt(self) -> Dd {
        if self.hi <= 0.0 {
            return Dd::from_f64(libm::sqrt(self.hi));
        }
        let x = libm::sqrt(self.hi);
        let (p, e) = two_prod(x, x);
        let r = self.sub(Dd { hi: p, lo: e });
        Self::renorm(x, r.hi / (2.0 * x))
    }
}

impl core::ops::Add for Dd {
    type Output = Dd;
    fn add(self, o: Dd) -> Dd {
        Dd::add(self, o)
    }
}
impl core::ops::Sub for Dd {
    type Output = Dd;
    fn sub(self, o: Dd) -> Dd {
        Dd::sub(self, o)
    }
}
impl core::ops::Mul for Dd {
    type Output = Dd;
    fn mul(self, o: Dd) -> Dd {
        Dd::mul(self, o)
    }
}
impl core::ops::Div for Dd {
    type Output = Dd;
    fn div(self, o: Dd) -> Dd {
        Dd::div(self, o)
    }
}
impl core::ops::Neg for Dd {
    type Output = Dd;
    fn neg(self) -> Dd {
        Dd::neg(self)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_prod_is_exact_on_a_known_case() {
        // (1 + 2^-30)^2 = 1 + 2^-29 + 2^-60: the last term is lost in a plain product.
        let a = 1.0 + libm::ldexp(1.0, -30);
        let (p, e) = two_prod(a, a);
        assert_eq!(p, 1.0 + libm::ldexp(1.0, -29));
        assert_eq!(e, libm::ldexp(1.0, -60));
    }

    #[test]
    fn division_recovers_one_third_beyond_double() {
        let third = Dd::from_f64(1.0).div(Dd::from_f64(3.0));
        let back = third.mul_f64(3.0).sub(Dd::from_f64(1.0));
        // Residual is below 2^-100 in double-double; plain double leaves ~1e-17.
        assert!(back.to_f64().abs() < 1e-30, "{back:?}");
    }

    #[test]
    fn sqrt_of_two_squares_back() {
        let r = Dd::from_f64(2.0).sqrt();
        let back = r.mul(r).sub(Dd::from_f64(2.0));
        assert!(back.to_f64().abs() < 1e-30, "{back:?}");
    }
}
