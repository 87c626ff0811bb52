//! Property tests: frame invariance of the criteria and exactness of the gradient on linear
//! fields, for random inputs.

use approx::assert_relative_eq;
use ndarray::Array2;
use proptest::prelude::*;
use vortcat_detect::criterion::{delta, lambda2, q, swirling_strength};
use vortcat_detect::gradient::plane_gradient;
use vortcat_detect::{EdgeOrder, GradientScheme, Tensor3};
use vortcat_field::{Axis, Grid, PlaneField, Units};

/// Rotation matrix of the unit quaternion (w, x, y, z) (standard formula).
fn rotation(qv: [f64; 4]) -> [[f64; 3]; 3] {
    let n = qv.iter().map(|x| x * x).sum::<f64>().sqrt();
    let [w, x, y, z] = qv.map(|c| c / n);
    [
        [
            1.0 - 2.0 * (y * y + z * z),
            2.0 * (x * y - w * z),
            2.0 * (x * z + w * y),
        ],
        [
            2.0 * (x * y + w * z),
            1.0 - 2.0 * (x * x + z * z),
            2.0 * (y * z - w * x),
        ],
        [
            2.0 * (x * z - w * y),
            2.0 * (y * z + w * x),
            1.0 - 2.0 * (x * x + y * y),
        ],
    ]
}

fn tensor() -> impl Strategy<Value = Tensor3> {
    prop::array::uniform3(prop::array::uniform3(-2.0..2.0f64)).prop_map(Tensor3)
}

fn quaternion() -> impl Strategy<Value = [f64; 4]> {
    prop::array::uniform4(-1.0..1.0f64).prop_filter("non-degenerate", |q| {
        q.iter().map(|x| x * x).sum::<f64>() > 0.1
    })
}

proptest! {
    #[test]
    fn criteria_are_invariant_under_rotation(a in tensor(), qv in quaternion()) {
        // Linear algebra: R A Rᵀ is similar to A (same eigenvalues, same invariants P, Q, R), and
        // S² + Ω² transforms the same way, so Q (Hunt et al. 1988), λ2 (Jeong & Hussain 1995),
        // λci (Zhou et al. 1999) and Δ (Chong et al. 1990) are frame-invariant. Entries are O(1);
        // a few dozen flops and one trig evaluation: 1e-9 absolute covers rounding (Δ is of
        // degree 6, scaled by its magnitude).
        let r = rotation(qv);
        let b = a.rotated(&r);
        prop_assert!((q::volume_value(&a) - q::volume_value(&b)).abs() < 1e-9);
        prop_assert!((lambda2::volume_value(&a) - lambda2::volume_value(&b)).abs() < 1e-9);
        let (la, lb) = (swirling_strength::volume_value(&a), swirling_strength::volume_value(&b));
        // Near Δ = 0 the swirl flips on/off at rounding level; compare only clear cases.
        let d = delta::volume_value(&a);
        if d.abs() > 1e-6 {
            prop_assert!((la - lb).abs() < 1e-6 * (1.0 + la), "λci {la} vs {lb}");
            prop_assert!((d - delta::volume_value(&b)).abs() < 1e-9 * (1.0 + d.abs()));
        }
        // The swirl axis rotates with the frame, orientation included (ω is a vector under
        // proper rotations).
        if d > 1e-3 {
            let (sa, sb) = (swirling_strength::volume_swirl(&a).unwrap(), swirling_strength::volume_swirl(&b).unwrap());
            if let (Some(ea), Some(eb)) = (sa.axis, sb.axis) {
                let w = a.vorticity();
                if (w[0] * ea[0] + w[1] * ea[1] + w[2] * ea[2]).abs() > 1e-3 {
                    let rea: Vec<f64> = (0..3).map(|i| (0..3).map(|j| r[i][j] * ea[j]).sum()).collect();
                    let dot: f64 = (0..3).map(|i| rea[i] * eb[i]).sum();
                    prop_assert!(dot > 1.0 - 1e-6, "axis {ea:?} rotated {rea:?} vs {eb:?}");
                }
            }
        }
    }

    #[test]
    fn linear_fields_are_differentiated_exactly(
        a in prop::array::uniform2(prop::array::uniform2(-3.0..3.0f64)),
        dx in prop_oneof![0.1..2.0f64, -2.0..-0.1f64],
        dy in prop_oneof![0.1..2.0f64, -2.0..-0.1f64],
        nx in 2usize..9,
        ny in 2usize..9,
    ) {
        // Every stencil of every scheme, interior or one-sided, is exact on linear data
        // (Taylor expansion), with any signed spacing and any grid from 2×2 up.
        let grid = Grid::plane(Axis::new("x", nx, 0.5, dx).unwrap(), Axis::new("y", ny, -1.0, dy).unwrap(), Units::default());
        let comp = |c: usize| Array2::from_shape_fn((ny, nx), |(iy, ix)| {
            a[c][0] * grid.x().coordinate(ix as f64) + a[c][1] * grid.y().coordinate(iy as f64)
        });
        let f = PlaneField::new(grid.clone(), comp(0), comp(1), None, None).unwrap();
        for s in GradientScheme::ALL {
            for e in [EdgeOrder::First, EdgeOrder::Second] {
                let g = plane_gradient(&f, s, e).unwrap();
                for iy in 0..ny {
                    for ix in 0..nx {
                        let t = g.at(iy, ix).unwrap().0;
                        for i in 0..2 {
                            for j in 0..2 {
                                // Values up to ~30 over spacings ≥ 0.1: rounding ≤ 1e-11.
                                assert_relative_eq!(t[i][j], a[i][j], epsilon = 1e-10);
                            }
                        }
                    }
                }
            }
        }
    }
}
