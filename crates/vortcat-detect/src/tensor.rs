//! Point values of the velocity-gradient tensor, `a[i][j] = ∂uᵢ/∂xⱼ` with `(u₀, u₁, u₂) = (u, v, w)`
//! and `(x₀, x₁, x₂) = (x, y, z)`, in units of 1/time (velocity unit per length unit).

/// In-plane velocity-gradient tensor `[[∂u/∂x, ∂u/∂y], [∂v/∂x, ∂v/∂y]]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tensor2(pub [[f64; 2]; 2]);

/// Full velocity-gradient tensor `a[i][j] = ∂uᵢ/∂xⱼ`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tensor3(pub [[f64; 3]; 3]);

impl Tensor2 {
    /// Trace: the in-plane divergence ∂u/∂x + ∂v/∂y.
    #[inline]
    pub fn trace(&self) -> f64 {
        self.0[0][0] + self.0[1][1]
    }

    /// Determinant.
    #[inline]
    pub fn det(&self) -> f64 {
        self.0[0][0] * self.0[1][1] - self.0[0][1] * self.0[1][0]
    }

    /// True when every component is finite.
    #[inline]
    pub fn is_finite(&self) -> bool {
        self.0.iter().flatten().all(|x| x.is_finite())
    }

    /// The 3×3 tensor with zero out-of-plane components (an assumption, stated by the caller).
    pub fn embed(&self) -> Tensor3 {
        let a = &self.0;
        Tensor3([
            [a[0][0], a[0][1], 0.0],
            [a[1][0], a[1][1], 0.0],
            [0.0, 0.0, 0.0],
        ])
    }
}

impl Tensor3 {
    /// Trace: the divergence.
    #[inline]
    pub fn trace(&self) -> f64 {
        self.0[0][0] + self.0[1][1] + self.0[2][2]
    }

    /// Determinant.
    #[inline]
    pub fn det(&self) -> f64 {
        let a = &self.0;
        a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1])
            - a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0])
            + a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0])
    }

    /// True when every component is finite.
    #[inline]
    pub fn is_finite(&self) -> bool {
        self.0.iter().flatten().all(|x| x.is_finite())
    }

    /// Vorticity vector ω = ∇ × u = (∂w/∂y − ∂v/∂z, ∂u/∂z − ∂w/∂x, ∂v/∂x − ∂u/∂y).
    #[inline]
    pub fn vorticity(&self) -> [f64; 3] {
        let a = &self.0;
        [a[2][1] - a[1][2], a[0][2] - a[2][0], a[1][0] - a[0][1]]
    }

    /// `R A Rᵀ`: the tensor of the same flow seen in axes rotated by `r` (rows of `r` are the
    /// new axes expressed in the old ones).
    pub fn rotated(&self, r: &[[f64; 3]; 3]) -> Tensor3 {
        let a = &self.0;
        let mut out = [[0.0; 3]; 3];
        for (i, row) in out.iter_mut().enumerate() {
            for (j, o) in row.iter_mut().enumerate() {
                let mut s = 0.0;
                for k in 0..3 {
                    for l in 0..3 {
                        s += r[i][k] * a[k][l] * r[j][l];
                    }
                }
                *o = s;
            }
        }
        Tensor3(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn vorticity_of_solid_body_rotation_about_z() {
        // u = −Ωy, v = Ωx: ω = (0, 0, 2Ω) (textbook kinematics, e.g. Batchelor 1967 §2.3).
        let o = 1.5;
        let t = Tensor3([[0.0, -o, 0.0], [o, 0.0, 0.0], [0.0, 0.0, 0.0]]);
        let w = t.vorticity();
        // Exact arithmetic on small binary fractions.
        assert_relative_eq!(w[2], 3.0, epsilon = 1e-15);
        assert_relative_eq!(w[0].abs() + w[1].abs(), 0.0, epsilon = 1e-15);
    }

    #[test]
    fn rotation_preserves_invariants() {
        // Trace and determinant are invariant under R A Rᵀ with R orthogonal (linear algebra).
        let t = Tensor3([[0.3, -1.2, 0.5], [0.7, -0.1, 0.2], [-0.4, 0.9, -0.2]]);
        let (c, s) = (0.6_f64, 0.8_f64);
        let r = [[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]];
        let t2 = t.rotated(&r);
        // A dozen products of O(1) numbers: rounding below 1e-14.
        assert_relative_eq!(t2.trace(), t.trace(), epsilon = 1e-14);
        assert_relative_eq!(t2.det(), t.det(), epsilon = 1e-14);
        let d2 = Tensor2([[1.0, 2.0], [3.0, 4.0]]);
        assert_relative_eq!(d2.det(), -2.0, epsilon = 1e-15);
        assert_relative_eq!(d2.embed().det(), 0.0, epsilon = 1e-15);
    }
}
