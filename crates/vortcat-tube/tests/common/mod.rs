//! Analytic vortex tubes on small grids, shared by the tube tests.
#![allow(dead_code)]

use ndarray::Array3;
use vortcat_field::{Axis, Grid, Units, VolumeField};

/// A straight vortex tube: axis through `point` along unit `axis`, Gaussian core (the
/// Lamb–Oseen/Burgers azimuthal profile u_θ = Γ/(2πr)(1 − exp(−r²/rc²)), Oseen 1912, Burgers
/// 1948) and, when `strain > 0`, the axisymmetric Burgers strain u_r = −γr/2, u_z = γz about
/// the same axis (Burgers 1948).
#[derive(Debug, Clone, Copy)]
pub struct TubeSpec {
    pub point: [f64; 3],
    pub axis: [f64; 3],
    pub circulation: f64,
    pub core_radius: f64,
    pub strain: f64,
}

pub fn unit(a: [f64; 3]) -> [f64; 3] {
    let n = (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt();
    [a[0] / n, a[1] / n, a[2] / n]
}

/// Axis from polar angle θ (from +z) and azimuth φ, in degrees.
pub fn axis_deg(theta: f64, phi: f64) -> [f64; 3] {
    let (t, p) = (theta.to_radians(), phi.to_radians());
    [t.sin() * p.cos(), t.sin() * p.sin(), t.cos()]
}

impl TubeSpec {
    /// Velocity at `x`.
    pub fn velocity(&self, x: [f64; 3]) -> [f64; 3] {
        let e = self.axis;
        let d = [
            x[0] - self.point[0],
            x[1] - self.point[1],
            x[2] - self.point[2],
        ];
        let zeta = d[0] * e[0] + d[1] * e[1] + d[2] * e[2];
        let rp = [d[0] - zeta * e[0], d[1] - zeta * e[1], d[2] - zeta * e[2]];
        let r2 = rp[0] * rp[0] + rp[1] * rp[1] + rp[2] * rp[2];
        // u_θ/r, with the r → 0 limit Γ/(2π rc²).
        let k = if r2 > 1e-24 {
            self.circulation / (2.0 * std::f64::consts::PI * r2)
                * (1.0 - (-r2 / (self.core_radius * self.core_radius)).exp())
        } else {
            self.circulation / (2.0 * std::f64::consts::PI * self.core_radius * self.core_radius)
        };
        let t = [
            e[1] * rp[2] - e[2] * rp[1],
            e[2] * rp[0] - e[0] * rp[2],
            e[0] * rp[1] - e[1] * rp[0],
        ];
        let g = self.strain;
        std::array::from_fn(|i| k * t[i] - 0.5 * g * rp[i] + g * zeta * e[i])
    }
}

/// The tilted Burgers vortex of the validation tests: rc = 5 spacings, γ = 0.04, axis at
/// θ = 35°, φ = 20°, Γ = 50, and the viscosity ν = γ rc²/4 of its stretching–diffusion
/// balance (Burgers 1948). Returns the tube and ν.
pub fn tilted_burgers() -> (TubeSpec, f64) {
    let (rc, gamma) = (5.0, 0.04);
    let spec = TubeSpec {
        point: [0.3, -0.7, 0.2],
        axis: axis_deg(35.0, 20.0),
        circulation: 50.0,
        core_radius: rc,
        strain: gamma,
    };
    (spec, gamma * rc * rc / 4.0)
}

/// A cubic-cell grid of `n = [nx, ny, nz]` points, spacing `h`, origin `origin`.
pub fn grid(n: [usize; 3], origin: [f64; 3], h: f64) -> Grid {
    Grid::volume(
        Axis::new("x", n[0], origin[0], h).unwrap(),
        Axis::new("y", n[1], origin[1], h).unwrap(),
        Axis::new("z", n[2], origin[2], h).unwrap(),
        Units::default(),
    )
}

/// The field of a velocity function on a grid (float32, as DNS dumps are stored).
pub fn field(grid: Grid, velocity: impl Fn([f64; 3]) -> [f64; 3]) -> VolumeField {
    let (nx, ny, nz) = (grid.x().len(), grid.y().len(), grid.z().unwrap().len());
    let mut u = Array3::<f32>::zeros((nz, ny, nx));
    let mut v = u.clone();
    let mut w = u.clone();
    for iz in 0..nz {
        for iy in 0..ny {
            for ix in 0..nx {
                let p = [
                    grid.x().coordinate(ix as f64),
                    grid.y().coordinate(iy as f64),
                    grid.z().unwrap().coordinate(iz as f64),
                ];
                let q = velocity(p);
                u[[iz, iy, ix]] = q[0] as f32;
                v[[iz, iy, ix]] = q[1] as f32;
                w[[iz, iy, ix]] = q[2] as f32;
            }
        }
    }
    VolumeField::new(grid, u, v, w, None).unwrap()
}

/// Angle between two directions, degrees, ignoring orientation.
pub fn angle_deg(a: [f64; 3], b: [f64; 3]) -> f64 {
    let (a, b) = (unit(a), unit(b));
    let c = (a[0] * b[0] + a[1] * b[1] + a[2] * b[2]).abs().min(1.0);
    c.acos().to_degrees()
}
