//! The λ2 criterion.
//!
//! # Formula
//! λ2 is the middle eigenvalue (λ1 ≥ λ2 ≥ λ3) of the symmetric tensor `S² + Ω²`, with
//! `S = (A + Aᵀ)/2`, `Ω = (A − Aᵀ)/2`; equivalently `S² + Ω² = (A² + (Aᵀ)²)/2`. A vortex core is
//! a connected region with λ2 < 0: two negative eigenvalues mean a pressure minimum in a plane
//! once unsteady straining and viscous effects are discarded. The eigenvalues are computed in
//! closed form (trigonometric solution, [`crate::eigen::symmetric3_eigenvalues`]), not with an
//! iterative solver.
//!
//! In a plane (only in-plane derivatives known) the crate reports the *larger* eigenvalue of the
//! 2×2 in-plane `S² + Ω²`, which is negative inside a planar core; for in-plane divergence-free
//! flow both eigenvalues are equal to −Q (S² is then a multiple of the identity), so the planar
//! λ2 carries the same information as Q. It is not the 3D λ2 of the flow, whose out-of-plane
//! derivatives are unknown.
//!
//! # Units
//! 1/time².
//!
//! # Assumptions
//! Incompressible flow, and that the pressure minimum is dominated by the `S² + Ω²` term of the
//! strain-rate transport equation (Jeong & Hussain neglect unsteady irrotational straining and
//! viscous effects). The detection uses −λ2 as its strength (larger = more vortical).
//!
//! # Reference
//! J. Jeong & F. Hussain (1995). "On the identification of a vortex". *J. Fluid Mech.* 285,
//! 69–94. Eigenvalues: O. K. Smith (1961), "Eigenvalues of a symmetric 3 × 3 matrix",
//! *Commun. ACM* 4(4), 168.

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::eigen::{middle_from_acos, symmetric3_middle_eigenvalue, symmetric3_trig_setup};
use crate::error::DetectError;
use crate::gradient::volume::{map_volume_kernel, VolumeKernel};
use crate::gradient::{map_plane, EdgeOrder, GradientScheme};
use crate::tensor::{Tensor2, Tensor3};

/// `S² + Ω²` of a 3×3 tensor (symmetric): `(A² + (Aᵀ)²)/2`, i.e. the symmetric part of A².
#[inline]
pub fn s2_plus_omega2(t: &Tensor3) -> [[f64; 3]; 3] {
    let a = &t.0;
    // A² entries needed for the symmetric part.
    let sq = |i: usize, j: usize| a[i][0] * a[0][j] + a[i][1] * a[1][j] + a[i][2] * a[2][j];
    let (m00, m11, m22) = (sq(0, 0), sq(1, 1), sq(2, 2));
    let m01 = 0.5 * (sq(0, 1) + sq(1, 0));
    let m02 = 0.5 * (sq(0, 2) + sq(2, 0));
    let m12 = 0.5 * (sq(1, 2) + sq(2, 1));
    [[m00, m01, m02], [m01, m11, m12], [m02, m12, m22]]
}

/// Planar λ2 at a point: the larger eigenvalue of the in-plane `S² + Ω²`.
#[inline]
pub fn plane_value(t: &Tensor2) -> f64 {
    let a = &t.0;
    let m00 = a[0][0] * a[0][0] + a[0][1] * a[1][0];
    let m11 = a[1][1] * a[1][1] + a[0][1] * a[1][0];
    let m01 = 0.5 * (a[0][0] * a[0][1] + a[0][1] * a[1][1] + a[0][0] * a[1][0] + a[1][0] * a[1][1]);
    let mean = 0.5 * (m00 + m11);
    let half = 0.5 * (m00 - m11);
    mean + (half * half + m01 * m01).sqrt()
}

/// λ2 at a point of a volume.
#[inline]
pub fn volume_value(t: &Tensor3) -> f64 {
    symmetric3_middle_eigenvalue(&s2_plus_omega2(t))
}

/// Planar λ2 field, `[iy, ix]`, NaN where not computable.
pub fn plane(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array2<f64>, DetectError> {
    map_plane(field, scheme, edge, plane_value)
}

/// λ2 as a row kernel: the algebra (S² + Ω², invariants) runs as one vectorisable loop over
/// the run, the `acos`/`cos` pair as a second loop. Same arithmetic as [`volume_value`].
#[derive(Debug, Clone, Copy, Default)]
pub struct Lambda2Kernel;

impl VolumeKernel for Lambda2Kernel {
    #[inline]
    fn point(&self, t: &Tensor3) -> f64 {
        volume_value(t)
    }

    fn run(&self, d: &[&[f64]; 9], scratch: &mut [Vec<f64>; 2], out: &mut [f64]) {
        let n = out.len();
        let [qs, ps] = scratch;
        let (qs, ps) = (&mut qs[..n], &mut ps[..n]);
        for k in 0..n {
            let t = Tensor3([
                [d[0][k], d[1][k], d[2][k]],
                [d[3][k], d[4][k], d[5][k]],
                [d[6][k], d[7][k], d[8][k]],
            ]);
            let (q, p, r) = symmetric3_trig_setup(&s2_plus_omega2(&t));
            qs[k] = q;
            ps[k] = p;
            out[k] = r;
        }
        // acos (a libm call, scalar), then the polynomial part (vectorised). Same arithmetic
        // as `middle_from_setup`.
        for r in out.iter_mut() {
            *r = r.acos();
        }
        for k in 0..n {
            out[k] = middle_from_acos(qs[k], ps[k], out[k]);
        }
    }
}

/// λ2 field of a volume, `[iz, iy, ix]`, NaN where not computable (fused row-kernel path).
pub fn volume(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array3<f32>, DetectError> {
    map_volume_kernel(field, scheme, edge, &Lambda2Kernel)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::criterion::q;
    use approx::assert_relative_eq;

    #[test]
    fn planar_lambda2_is_minus_q_for_divergence_free_flow() {
        // Jeong & Hussain (1995) note that λ2 and Q agree for 2D incompressible flow: for a
        // traceless 2×2 A, S² + Ω² = −Q·I. O(1) values: rounding 1e-14.
        for t in [
            Tensor2([[0.3, -1.1], [0.8, -0.3]]),
            Tensor2([[0.0, -2.0], [2.0, 0.0]]),
            Tensor2([[1.0, 0.0], [0.0, -1.0]]),
        ] {
            assert_relative_eq!(plane_value(&t), -q::plane_value(&t), epsilon = 1e-14);
        }
    }

    #[test]
    fn volume_lambda2_of_solid_body_rotation() {
        // Rotation Ω about z: S = 0, Ω² = diag(−Ω², −Ω², 0) → eigenvalues 0, −Ω², −Ω² → λ2 = −Ω²
        // (hand computation from the definition).
        let om = 1.5;
        let t = Tensor3([[0.0, -om, 0.0], [om, 0.0, 0.0], [0.0, 0.0, 0.0]]);
        assert_relative_eq!(volume_value(&t), -om * om, epsilon = 1e-12);
        // Pure strain diag(a, b, −a−b): S² + Ω² = diag(a², b², (a+b)²), λ2 = the middle one > 0.
        let t = Tensor3([[1.0, 0.0, 0.0], [0.0, 0.5, 0.0], [0.0, 0.0, -1.5]]);
        assert_relative_eq!(volume_value(&t), 1.0, epsilon = 1e-12);
        // A general tensor: S² + Ω² from its definition with S and Ω formed explicitly.
        let a = [[0.3, -1.2, 0.5], [0.7, -0.1, 0.2], [-0.4, 0.9, -0.2]];
        let s: [[f64; 3]; 3] =
            std::array::from_fn(|i| std::array::from_fn(|j| 0.5 * (a[i][j] + a[j][i])));
        let w: [[f64; 3]; 3] =
            std::array::from_fn(|i| std::array::from_fn(|j| 0.5 * (a[i][j] - a[j][i])));
        let m = s2_plus_omega2(&Tensor3(a));
        for i in 0..3 {
            for j in 0..3 {
                let want: f64 = (0..3).map(|k| s[i][k] * s[k][j] + w[i][k] * w[k][j]).sum();
                // O(1) entries: rounding only.
                assert_relative_eq!(m[i][j], want, epsilon = 1e-14);
            }
        }
        let e = crate::eigen::symmetric3_eigenvalues(&m);
        assert_relative_eq!(volume_value(&Tensor3(a)), e[1], epsilon = 1e-12);
        // The row kernel gives the same bits as the point function (same arithmetic).
        let d: Vec<Vec<f64>> = (0..9)
            .map(|c| vec![a[c / 3][c % 3], 0.0, 2.0 * a[c / 3][c % 3]])
            .collect();
        let dr: [&[f64]; 9] = std::array::from_fn(|c| d[c].as_slice());
        let mut out = vec![0.0_f64; 3];
        Lambda2Kernel.run(&dr, &mut [vec![0.0; 3], vec![0.0; 3]], &mut out);
        assert_eq!(out[0].to_bits(), volume_value(&Tensor3(a)).to_bits());
        assert_relative_eq!(out[1], 0.0, epsilon = 1e-300);
        // λ2 is homogeneous of degree 2 in A.
        assert_relative_eq!(out[2], 4.0 * out[0], max_relative = 1e-12);
    }
}
