//! A branch-free `exp` for non-positive arguments, written in plain IEEE-754 double arithmetic.
//!
//! The Gaussian-core models need `exp(−r²/rc²)` once per vector and evaluation, and the libm
//! call is the single largest cost of a fit. This version has no branches and no table look-up,
//! so a loop over a block of arguments is vectorised by the compiler on the baseline target
//! (SSE2 on x86-64, NEON on aarch64) without any `target-cpu` setting. Because it uses only
//! `+ − × ` and bit operations in a fixed order (Rust never contracts `a·b + c` into a fused
//! multiply-add on its own), its result is bit-identical on every machine of an architecture,
//! unlike a libm that picks an FMA or non-FMA code path at run time.
//!
//! Method (Cody & Waite 1980, *Software Manual for the Elementary Functions*, ch. 6; Muller
//! 2016, *Elementary Functions*, 3rd ed., §11.3): `x = k ln 2 + r` with `k = round(x / ln 2)`
//! and `|r| ≤ ln 2 / 2`, `ln 2` split in a high part with trailing zero bits (so `k·ln2_hi` is
//! exact for `|k| < 2¹¹`) and a low part; `eʳ` by its Taylor polynomial of degree 13, whose
//! truncation error `|r|¹⁴/14! < 5·10⁻¹⁸` is far below half an ulp, evaluated by Estrin's scheme; `2ᵏ` built in the exponent
//! field. The rounding to the nearest integer and the exponent come from the classic
//! `1.5·2⁵²` shift, which needs no float-to-integer conversion. Measured error against the
//! libm `exp` over `[−708, 0]`: at most 2 ulp (unit test below).

/// Below this the result is 0 (the true value is subnormal, < 2.3·10⁻³⁰⁸).
const X_MIN: f64 = -708.0;

/// `exp(x)` for `x ≤ 0` (and `x` up to `+0.5`, where it is equally accurate); `0` for
/// `x < −708`; NaN for NaN. No branches, so loops over it vectorise.
#[inline(always)]
pub(crate) fn exp_nonpositive(x: f64) -> f64 {
    exp_expm1_nonpositive(x).0
}

/// `(exp(x), exp(x) − 1)` for `x ≤ 0`, both to a few ulps: `exp(x) − 1 = (2ᵏ − 1) + 2ᵏ p`
/// with `p = eʳ − 1` from the same polynomial, which is exact in its first term (`2ᵏ − 1` is
/// exact for the `k` that matter, and `k = 0` for `|x| ≤ ln2/2`, where it is just `p`), so
/// there is no cancellation near 0 (`1 − e^{−t}` keeps full relative precision for tiny `t`).
/// `(0, −1)` for `x < −708`.
#[inline(always)]
pub(crate) fn exp_expm1_nonpositive(x: f64) -> (f64, f64) {
    const LOG2E: f64 = std::f64::consts::LOG2_E;
    // ln 2 = LN2_HI + LN2_LO; LN2_HI has 32 significant bits (fdlibm's split).
    const LN2_HI: f64 = 6.931_471_803_691_238e-1;
    const LN2_LO: f64 = 1.908_214_929_270_587_7e-10;
    // 1.5·2⁵²: adding it rounds to an integer (round to nearest even) in the low mantissa bits.
    const SHIFT: f64 = 6_755_399_441_055_744.0;
    let under = x < X_MIN;
    let xc = if under { X_MIN } else { x };
    let z = xc * LOG2E + SHIFT;
    let k = z - SHIFT;
    let r = (xc - k * LN2_HI) - k * LN2_LO;
    // Taylor coefficients 1/n!, n = 2 … 13.
    const C: [f64; 12] = [
        1.0 / 2.0,
        1.0 / 6.0,
        1.0 / 24.0,
        1.0 / 120.0,
        1.0 / 720.0,
        1.0 / 5040.0,
        1.0 / 40320.0,
        1.0 / 362_880.0,
        1.0 / 3_628_800.0,
        1.0 / 39_916_800.0,
        1.0 / 479_001_600.0,
        1.0 / 6_227_020_800.0,
    ];
    // Estrin's scheme (Knuth, TAOCP vol. 2, §4.6.4): the same polynomial with a dependency
    // chain of 4 multiply-adds instead of 11, so that successive samples overlap in the pipeline.
    let r2 = r * r;
    let r4 = r2 * r2;
    let r8 = r4 * r4;
    let p01 = C[0] + C[1] * r;
    let p23 = C[2] + C[3] * r;
    let p45 = C[4] + C[5] * r;
    let p67 = C[6] + C[7] * r;
    let p89 = C[8] + C[9] * r;
    let p1011 = C[10] + C[11] * r;
    let q03 = p01 + p23 * r2;
    let q47 = p45 + p67 * r2;
    let q811 = p89 + p1011 * r2;
    let q = (q03 + q47 * r4) + q811 * r8;
    let pm = r + r2 * q;
    let er = 1.0 + pm;
    // 2ᵏ: the low bits of z hold k (two's complement, offset by the shift whose low 12 bits
    // are zero); adding the bias and shifting into the exponent field gives the power of two.
    let scale = f64::from_bits(z.to_bits().wrapping_add(1023) << 52);
    let y = er * scale;
    let ym1 = (scale - 1.0) + scale * pm;
    if under {
        (0.0, -1.0)
    } else {
        (y, ym1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Distance in units in the last place (±0 are the same point).
    fn ulps(a: f64, b: f64) -> u64 {
        let key = |x: f64| {
            let b = x.to_bits();
            let m = (b & 0x7fff_ffff_ffff_ffff) as i128;
            if b >> 63 == 1 {
                -m
            } else {
                m
            }
        };
        (key(a) - key(b)).unsigned_abs() as u64
    }

    /// Against libm over the whole range used (−708, 0], on a dense grid plus the special
    /// points: at most 2 ulp; 0 below −708; exactly 1 at 0; NaN stays NaN.
    #[test]
    fn matches_libm_within_two_ulp() {
        let mut worst = 0;
        let n = 2_000_000;
        for i in 0..=n {
            let x = -708.0 * (i as f64 / n as f64).powi(3);
            worst = worst.max(ulps(exp_nonpositive(x), x.exp()));
        }
        for i in 0..100_000 {
            let x = -0.5 * i as f64 / 100_000.0;
            worst = worst.max(ulps(exp_nonpositive(x), x.exp()));
        }
        assert!(worst <= 2, "worst {worst} ulp");
        assert_eq!(exp_nonpositive(0.0).to_bits(), 1.0f64.to_bits());
        assert_eq!(exp_nonpositive(-0.0).to_bits(), 1.0f64.to_bits());
        assert_eq!(exp_nonpositive(-709.0).to_bits(), 0.0f64.to_bits());
        assert_eq!(
            exp_nonpositive(f64::NEG_INFINITY).to_bits(),
            0.0f64.to_bits()
        );
        assert!(exp_nonpositive(f64::NAN).is_nan());
        assert!(ulps(exp_nonpositive(0.5), 0.5f64.exp()) <= 2);
    }

    /// `exp(x) − 1` against libm's `exp_m1` over the same grid, including tiny arguments where
    /// `exp(x) − 1` computed by subtraction would lose all digits: at most 2 ulp.
    #[test]
    fn expm1_matches_libm_within_two_ulp() {
        let mut worst = 0;
        for i in 0..=400_000 {
            let x = -708.0 * (i as f64 / 400_000.0).powi(3);
            worst = worst.max(ulps(exp_expm1_nonpositive(x).1, x.exp_m1()));
        }
        for e in 1..300 {
            let x = -(10f64).powf(-(e as f64) / 10.0);
            worst = worst.max(ulps(exp_expm1_nonpositive(x).1, x.exp_m1()));
        }
        assert!(worst <= 2, "worst {worst} ulp");
        assert_eq!(
            exp_expm1_nonpositive(-1e-300).1.to_bits(),
            (-1e-300f64).to_bits()
        );
        assert_eq!(exp_expm1_nonpositive(-800.0), (0.0, -1.0));
    }
}
