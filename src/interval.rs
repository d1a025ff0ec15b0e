//! Numbers a circuit's equations can be written over once and evaluated two ways: on plain
//! values (`f64`, the exact analysis) and on intervals (`Iv`, the generic search plan's
//! bounds over the values still open).
//!
//! Interval arithmetic (any numerical-analysis text, e.g. Moore's "interval analysis"
//! rules): every operation returns an interval holding every result of its operands' points,
//! and narrower operands never give a wider result (inclusion isotonicity) — which is what
//! makes a bound over "this value or anything farther out" grow as a walk moves on. The
//! endpoints are rounded to nearest, not outward: the generic plan compares them with the
//! search's relative slack of 10⁻⁶ (`common::SLACK`), far above the few ulps of rounding.
//!
//! An expression in which a variable appears twice is evaluated too widely by plain interval
//! arithmetic (the dependency problem); [`Num::monotone`] evaluates a function the circuit
//! knows to be monotone in each argument at the right corners instead, which is exact.

use std::ops::{Add, Div, Mul, Neg, Sub};

/// A closed interval `[lo, hi]` of reals (`lo ≤ hi`; infinite ends allowed).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Iv {
    /// The least value.
    pub lo: f64,
    /// The greatest value.
    pub hi: f64,
}

impl Iv {
    /// `[lo, hi]`, the ends put in order.
    pub fn new(lo: f64, hi: f64) -> Iv {
        if lo <= hi {
            Iv { lo, hi }
        } else {
            Iv { lo: hi, hi: lo }
        }
    }

    /// The one-point interval `[x, x]`.
    pub fn point(x: f64) -> Iv {
        Iv { lo: x, hi: x }
    }

    /// Every real.
    pub const ALL: Iv = Iv {
        lo: f64::NEG_INFINITY,
        hi: f64::INFINITY,
    };

    /// Distance from `x` to the nearest point of the interval (0 inside it).
    pub fn distance_to(self, x: f64) -> f64 {
        if x < self.lo {
            self.lo - x
        } else if x > self.hi {
            x - self.hi
        } else {
            0.0
        }
    }

    /// True when `x` lies in the interval.
    pub fn contains(self, x: f64) -> bool {
        self.lo <= x && x <= self.hi
    }
}

/// A product or quotient end: 0·∞ is taken as 0 (the limit of a finite factor times a
/// growing one is reached only at infinity, which no part value is).
fn prod(a: f64, b: f64) -> f64 {
    let p = a * b;
    if p.is_nan() {
        0.0
    } else {
        p
    }
}

impl Add for Iv {
    type Output = Iv;
    fn add(self, o: Iv) -> Iv {
        Iv {
            lo: self.lo + o.lo,
            hi: self.hi + o.hi,
        }
    }
}

impl Sub for Iv {
    type Output = Iv;
    fn sub(self, o: Iv) -> Iv {
        Iv {
            lo: self.lo - o.hi,
            hi: self.hi - o.lo,
        }
    }
}

impl Mul for Iv {
    type Output = Iv;
    fn mul(self, o: Iv) -> Iv {
        let p = [
            prod(self.lo, o.lo),
            prod(self.lo, o.hi),
            prod(self.hi, o.lo),
            prod(self.hi, o.hi),
        ];
        Iv {
            lo: p.iter().copied().fold(f64::INFINITY, f64::min),
            hi: p.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        }
    }
}

impl Div for Iv {
    type Output = Iv;
    /// a/b = a·(1/b) (interval division, defined through the reciprocal).
    #[allow(clippy::suspicious_arithmetic_impl)]
    fn div(self, o: Iv) -> Iv {
        self * o.recip()
    }
}

impl Neg for Iv {
    type Output = Iv;
    fn neg(self) -> Iv {
        Iv {
            lo: -self.hi,
            hi: -self.lo,
        }
    }
}

/// What the equations need of a number: field operations, constants, and the few functions
/// circuits use, for `f64` and for [`Iv`].
pub trait Num:
    Copy
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
{
    /// A constant.
    fn c(x: f64) -> Self;
    /// |x|.
    fn abs(self) -> Self;
    /// 1/x.
    fn recip(self) -> Self;
    /// √x (of the non-negative part).
    fn sqrt(self) -> Self;
    /// x², never below zero (tighter than x·x over an interval holding 0).
    fn sq(self) -> Self;
    /// `f(x)` where `f` is monotone in each argument: rising where `rising[i]`, falling
    /// elsewhere. For `f64` it is `f(x)` itself (the same operations, so the same bits); for
    /// an interval, `f` at the lowest and at the highest corner, which is exact.
    fn monotone<const N: usize>(
        f: impl Fn([f64; N]) -> f64,
        x: [Self; N],
        rising: [bool; N],
    ) -> Self;
    /// The least value.
    fn lo(self) -> f64;
    /// The greatest value.
    fn hi(self) -> f64;
}

impl Num for f64 {
    fn c(x: f64) -> f64 {
        x
    }
    fn abs(self) -> f64 {
        f64::abs(self)
    }
    fn recip(self) -> f64 {
        1.0 / self
    }
    fn sqrt(self) -> f64 {
        f64::sqrt(self)
    }
    fn sq(self) -> f64 {
        self * self
    }
    fn monotone<const N: usize>(f: impl Fn([f64; N]) -> f64, x: [f64; N], _: [bool; N]) -> f64 {
        f(x)
    }
    fn lo(self) -> f64 {
        self
    }
    fn hi(self) -> f64 {
        self
    }
}

impl Num for Iv {
    fn c(x: f64) -> Iv {
        Iv::point(x)
    }
    fn abs(self) -> Iv {
        if self.lo >= 0.0 {
            self
        } else if self.hi <= 0.0 {
            -self
        } else {
            Iv {
                lo: 0.0,
                hi: (-self.lo).max(self.hi),
            }
        }
    }
    fn recip(self) -> Iv {
        if self.lo > 0.0 || self.hi < 0.0 {
            Iv {
                lo: 1.0 / self.hi,
                hi: 1.0 / self.lo,
            }
        } else if self.lo == 0.0 && self.hi > 0.0 {
            Iv {
                lo: 1.0 / self.hi,
                hi: f64::INFINITY,
            }
        } else if self.hi == 0.0 && self.lo < 0.0 {
            Iv {
                lo: f64::NEG_INFINITY,
                hi: 1.0 / self.lo,
            }
        } else {
            Iv::ALL
        }
    }
    fn sqrt(self) -> Iv {
        Iv {
            lo: self.lo.max(0.0).sqrt(),
            hi: self.hi.max(0.0).sqrt(),
        }
    }
    fn sq(self) -> Iv {
        let a = Num::abs(self);
        Iv {
            lo: a.lo * a.lo,
            hi: a.hi * a.hi,
        }
    }
    fn monotone<const N: usize>(f: impl Fn([f64; N]) -> f64, x: [Iv; N], rising: [bool; N]) -> Iv {
        let low = std::array::from_fn(|i| if rising[i] { x[i].lo } else { x[i].hi });
        let high = std::array::from_fn(|i| if rising[i] { x[i].hi } else { x[i].lo });
        Iv::new(f(low), f(high))
    }
    fn lo(self) -> f64 {
        self.lo
    }
    fn hi(self) -> f64 {
        self.hi
    }
}

/// A complex number over [`Num`]: over intervals, a rectangle holding every value of the
/// operations on the operands' points (rectangular complex interval arithmetic).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cx<T> {
    /// Real part.
    pub re: T,
    /// Imaginary part.
    pub im: T,
}

impl<T: Num> Cx<T> {
    /// `re + j·im`.
    pub fn new(re: T, im: T) -> Cx<T> {
        Cx { re, im }
    }

    /// A real number.
    pub fn real(re: T) -> Cx<T> {
        Cx { re, im: T::c(0.0) }
    }

    /// |z|².
    pub fn norm_sqr(self) -> T {
        self.re.sq() + self.im.sq()
    }
}

impl<T: Num> Add for Cx<T> {
    type Output = Cx<T>;
    fn add(self, o: Cx<T>) -> Cx<T> {
        Cx::new(self.re + o.re, self.im + o.im)
    }
}

impl<T: Num> Sub for Cx<T> {
    type Output = Cx<T>;
    fn sub(self, o: Cx<T>) -> Cx<T> {
        Cx::new(self.re - o.re, self.im - o.im)
    }
}

impl<T: Num> Mul for Cx<T> {
    type Output = Cx<T>;
    fn mul(self, o: Cx<T>) -> Cx<T> {
        Cx::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
}

impl<T: Num> Div for Cx<T> {
    type Output = Cx<T>;
    /// a/b = a·conj(b)/|b|².
    #[allow(clippy::suspicious_arithmetic_impl)]
    fn div(self, o: Cx<T>) -> Cx<T> {
        let d = o.norm_sqr();
        let n = self * Cx::new(o.re, -o.im);
        Cx::new(n.re / d, n.im / d)
    }
}

impl Add<f64> for Iv {
    type Output = Iv;
    fn add(self, x: f64) -> Iv {
        self + Iv::point(x)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn within(x: f64, i: Iv) -> bool {
        let eps = 1e-12 * x.abs().max(1.0);
        i.lo - eps <= x && x <= i.hi + eps
    }

    proptest! {
        /// The inclusion property (interval arithmetic's defining rule): the result of the
        /// operation on any points of the operands lies in the result interval.
        #[test]
        fn operations_hold_their_points(
            a in -1e3f64..1e3, b in 0.0f64..1e3, c in -1e3f64..1e3, d in 0.0f64..1e3,
            s in 0.0f64..1.0, t in 0.0f64..1.0,
        ) {
            let x = Iv::new(a, a + b);
            let y = Iv::new(c, c + d);
            let (p, q) = (a + s * b, c + t * d);
            prop_assert!(within(p + q, x + y));
            prop_assert!(within(p - q, x - y));
            prop_assert!(within(p * q, x * y));
            if !y.contains(0.0) {
                prop_assert!(within(p / q, x / y));
            }
            prop_assert!(within(p.abs(), Num::abs(x)));
            if p >= 0.0 {
                prop_assert!(within(p.sqrt(), Num::sqrt(x)));
            }
        }

        /// A function monotone in each argument (the parallel resistance, rising in both) is
        /// held exactly by its two corners.
        #[test]
        fn monotone_corners_hold_the_range(
            a in 1.0f64..1e6, b in 0.0f64..1e6, c in 1.0f64..1e6, d in 0.0f64..1e6,
            s in 0.0f64..1.0, t in 0.0f64..1.0,
        ) {
            let par = |[x, y]: [f64; 2]| x * y / (x + y);
            let i = Iv::monotone(par, [Iv::new(a, a + b), Iv::new(c, c + d)], [true, true]);
            prop_assert!(within(par([a + s * b, c + t * d]), i));
            prop_assert_eq!(i.lo, par([a, c]));
        }
    }

    #[test]
    fn f64_monotone_is_the_function_itself() {
        // The same operations, so the same bits as the plain formula.
        let f = |[x, y]: [f64; 2]| 9.0 * y / (x + y);
        assert_eq!(
            <f64 as Num>::monotone(f, [1e5, 2.2e5], [false, true]),
            9.0 * 2.2e5 / (1e5 + 2.2e5)
        );
    }

    proptest! {
        /// Complex operations over intervals hold the result of any points inside them.
        #[test]
        fn complex_operations_hold_their_points(
            a in -10f64..10.0, b in -10f64..10.0, c in 0.5f64..10.0, d in -10f64..10.0,
            w in 0.0f64..1.0, s in 0.0f64..1.0, t in 0.0f64..1.0,
        ) {
            let iv = |x: f64| Iv::new(x, x + w);
            let (x, y) = (Cx::new(iv(a), iv(b)), Cx::new(iv(c), iv(d)));
            let (p, q) = (Cx::new(a + s * w, b + t * w), Cx::new(c + t * w, d + s * w));
            for (z, i) in [(p * q, x * y), (p + q, x + y), (p - q, x - y), (p / q, x / y)] {
                prop_assert!(within(z.re, i.re) && within(z.im, i.im));
            }
            prop_assert!(within(p.norm_sqr(), x.norm_sqr()));
        }
    }

    #[test]
    fn reciprocal_across_zero_is_everything() {
        assert_eq!(Iv::new(-1.0, 2.0).recip(), Iv::ALL);
        assert_eq!(Iv::new(2.0, 4.0).recip(), Iv::new(0.25, 0.5));
        assert_eq!(Iv::new(3.0, 5.0).distance_to(1.0), 2.0);
        assert_eq!(Iv::new(3.0, 5.0).distance_to(4.0), 0.0);
    }
}
