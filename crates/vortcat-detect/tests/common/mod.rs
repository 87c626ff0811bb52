//! Analytic velocity fields shared by the integration tests.
#![allow(dead_code)]

use std::f64::consts::PI;

use ndarray::{Array2, Array3};
use vortcat_field::{Axis, Grid, PlaneField, Units, VolumeField};

/// Lamb–Oseen vortex (Lamb 1932, *Hydrodynamics*; Oseen 1912): circulation `gamma`, core
/// radius `rc`, u_θ = Γ/(2πr) (1 − exp(−r²/r_c²)). Returns (u, v) at offset (x, y).
pub fn lamb_oseen(x: f64, y: f64, gamma: f64, rc: f64) -> (f64, f64) {
    let r2 = x * x + y * y;
    let k = if r2 < 1e-30 * rc * rc {
        // lim r→0 of u_θ/r = Γ/(2π r_c²)
        gamma / (2.0 * PI * rc * rc)
    } else {
        gamma / (2.0 * PI * r2) * (1.0 - (-r2 / (rc * rc)).exp())
    };
    (-k * y, k * x)
}

/// Rankine vortex: solid-body rotation at ω0 inside R, potential vortex outside.
pub fn rankine(x: f64, y: f64, omega0: f64, radius: f64) -> (f64, f64) {
    let r2 = x * x + y * y;
    let k = if r2 <= radius * radius {
        omega0
    } else {
        omega0 * radius * radius / r2
    };
    (-k * y, k * x)
}

/// A plane grid and field from a velocity function of physical (x, y).
pub fn plane(
    nx: usize,
    ny: usize,
    x0: f64,
    y0: f64,
    dx: f64,
    dy: f64,
    vel: impl Fn(f64, f64) -> (f64, f64),
) -> PlaneField {
    let grid = Grid::plane(
        Axis::new("x", nx, x0, dx).unwrap(),
        Axis::new("y", ny, y0, dy).unwrap(),
        Units::default(),
    );
    let mut u = Array2::zeros((ny, nx));
    let mut v = Array2::zeros((ny, nx));
    for iy in 0..ny {
        for ix in 0..nx {
            let (a, b) = vel(
                grid.x().coordinate(ix as f64),
                grid.y().coordinate(iy as f64),
            );
            u[[iy, ix]] = a;
            v[[iy, ix]] = b;
        }
    }
    PlaneField::new(grid, u, v, None, None).unwrap()
}

/// A centred square plane of n × n points, spacing h, centred on (0, 0).
pub fn centred_plane(n: usize, h: f64, vel: impl Fn(f64, f64) -> (f64, f64)) -> PlaneField {
    let o = -((n - 1) as f64) / 2.0 * h;
    plane(n, n, o, o, h, h, vel)
}

/// Burgers vortex (Burgers 1948) about the unit axis `n` through `c`: axial strain γ,
/// viscosity ν, circulation Γ; δ² = 4ν/γ. u = −γ/2 ρ + γ s n + u_θ(|ρ|) n × ρ̂.
pub fn burgers(
    p: [f64; 3],
    c: [f64; 3],
    n: [f64; 3],
    gamma_strain: f64,
    circ: f64,
    delta: f64,
) -> [f64; 3] {
    let r = [p[0] - c[0], p[1] - c[1], p[2] - c[2]];
    let s = r[0] * n[0] + r[1] * n[1] + r[2] * n[2];
    let rho = [r[0] - s * n[0], r[1] - s * n[1], r[2] - s * n[2]];
    let r2 = rho[0] * rho[0] + rho[1] * rho[1] + rho[2] * rho[2];
    let k = if r2 < 1e-30 {
        circ / (2.0 * PI * delta * delta)
    } else {
        circ / (2.0 * PI * r2) * (1.0 - (-r2 / (delta * delta)).exp())
    };
    let nxr = [
        n[1] * rho[2] - n[2] * rho[1],
        n[2] * rho[0] - n[0] * rho[2],
        n[0] * rho[1] - n[1] * rho[0],
    ];
    [0, 1, 2].map(|i| -0.5 * gamma_strain * rho[i] + gamma_strain * s * n[i] + k * nxr[i])
}

/// A cubic volume n³, spacing h, origin 0, from a velocity function.
pub fn volume(n: usize, h: f64, vel: impl Fn([f64; 3]) -> [f64; 3]) -> VolumeField {
    let grid = Grid::volume(
        Axis::new("x", n, 0.0, h).unwrap(),
        Axis::new("y", n, 0.0, h).unwrap(),
        Axis::new("z", n, 0.0, h).unwrap(),
        Units::default(),
    );
    let mut c = [
        Array3::zeros((n, n, n)),
        Array3::zeros((n, n, n)),
        Array3::zeros((n, n, n)),
    ];
    for iz in 0..n {
        for iy in 0..n {
            for ix in 0..n {
                let v = vel([ix as f64 * h, iy as f64 * h, iz as f64 * h]);
                for k in 0..3 {
                    c[k][[iz, iy, ix]] = v[k] as f32;
                }
            }
        }
    }
    let [u, v, w] = c;
    VolumeField::new(grid, u, v, w, None).unwrap()
}
