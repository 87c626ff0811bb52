//! `vortcat synth --scenario tubes`: straight, tilted vortex tubes in a cubic box, written as
//! HDF5 volumes for `vortcat survey --geometry volume`. Invented data in a scenario of our own.
//!
//! Each tube has the Gaussian-core azimuthal profile u_θ = Γ/(2πr)(1 − exp(−r²/rc²)) about its
//! axis (Lamb–Oseen: Oseen 1912, Lamb 1932; Burgers 1948); a Burgers tube adds the axisymmetric
//! strain u_r = −γr/2, u_ζ = γζ about the same axis, with γ = 4ν/rc² so that stretching and
//! diffusion balance (Burgers 1948). The velocities of the tubes are superposed; the sum is
//! not an exact solution: each core sees the other tubes' induced velocity (nearly uniform
//! over a core, since the tubes are several core radii apart) and strain, which does not decay
//! for the linear Burgers strain and is of order Γ/(2πD²) from a swirl at distance D. The truth
//! table therefore gives, beside each tube's own strain parameter, the axial strain rate it
//! actually feels (`axial_strain_rate`, exact from the analytic field).
//!
//! Every snapshot holds the same tubes with its own noise, missing and outlier vectors (the
//! same arguments as the planar scenarios: `--noise`, `--missing`, `--outliers`, `--seed`).

use std::f64::consts::PI;
use std::fs;
use std::path::Path;

use anyhow::{bail, Context};
use ndarray::{Array1, Array3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use serde::Serialize;

use super::SynthArgs;

/// Default points per side of the box.
pub const DEFAULT_POINTS: usize = 48;

/// Peak azimuthal velocity of a Gaussian core over Γ/(2π rc): max over r of
/// (1 − exp(−r²/rc²))·rc/r, reached at r ≈ 1.1209 rc (a property of the profile).
const PEAK_FACTOR: f64 = 0.638_17;

/// One straight tube of the scenario.
#[derive(Debug, Clone, Copy)]
struct TubeSpec {
    burgers: bool,
    /// A point of the axis.
    point: [f64; 3],
    /// Unit axis, along the tube's vorticity (so Γ > 0 about it).
    axis: [f64; 3],
    circulation: f64,
    core_radius: f64,
    /// Axial strain rate γ (0 for Lamb–Oseen).
    strain: f64,
}

impl TubeSpec {
    fn velocity(&self, x: [f64; 3]) -> [f64; 3] {
        let e = self.axis;
        let d = [
            x[0] - self.point[0],
            x[1] - self.point[1],
            x[2] - self.point[2],
        ];
        let zeta = d[0] * e[0] + d[1] * e[1] + d[2] * e[2];
        let rp = [d[0] - zeta * e[0], d[1] - zeta * e[1], d[2] - zeta * e[2]];
        let r2 = rp[0] * rp[0] + rp[1] * rp[1] + rp[2] * rp[2];
        let rc2 = self.core_radius * self.core_radius;
        // u_θ / r, with its limit Γ/(2π rc²) on the axis.
        let k = if r2 > 1e-12 * rc2 {
            self.circulation / (2.0 * PI * r2) * (1.0 - (-r2 / rc2).exp())
        } else {
            self.circulation / (2.0 * PI * rc2)
        };
        // ê × r⊥ is the azimuthal direction times r.
        let t = [
            e[1] * rp[2] - e[2] * rp[1],
            e[2] * rp[0] - e[0] * rp[2],
            e[0] * rp[1] - e[1] * rp[0],
        ];
        let g = self.strain;
        std::array::from_fn(|i| k * t[i] - 0.5 * g * rp[i] + g * zeta * e[i])
    }

    fn peak_velocity(&self) -> f64 {
        PEAK_FACTOR * self.circulation / (2.0 * PI * self.core_radius)
    }
}

/// Unit axis from polar angle θ (from +z) and azimuth φ, degrees.
fn axis_deg(theta: f64, phi: f64) -> [f64; 3] {
    let (t, p) = (theta.to_radians(), phi.to_radians());
    [t.sin() * p.cos(), t.sin() * p.sin(), t.cos()]
}

/// One row of the tubes scenario's truth table.
#[derive(Debug, Clone, Serialize)]
struct TruthRow {
    /// Snapshot file, relative to the output folder.
    source: String,
    /// Index in that file (always 0: one volume per file).
    index: usize,
    /// Tube number of the scenario.
    tube: usize,
    /// `burgers` or `lamb-oseen`.
    model: &'static str,
    /// Point of the axis in the plane z = 0, m.
    x: f64,
    y: f64,
    z: f64,
    /// Unit axis along the vorticity.
    axis_x: f64,
    axis_y: f64,
    axis_z: f64,
    /// Circulation about the axis, m²/s (positive: the axis follows the vorticity).
    circulation: f64,
    /// Core radius, m.
    core_radius: f64,
    /// Axial strain rate parameter γ of the tube's own strain field, 1/s (0 for Lamb–Oseen).
    strain_rate: f64,
    /// The axial strain rate the tube actually feels, ê·S·ê of the superposed velocity field
    /// (its own strain plus every other tube's strain and induced swirl), 1/s: median over
    /// points of its axis inside the box, from the exact (analytic) velocity gradient. This is
    /// what a station's γ_axial measures.
    axial_strain_rate: f64,
    /// Peak azimuthal velocity, m/s.
    peak_velocity: f64,
}

/// ê·S·ê of the superposed field of `specs` at `x`, from central differences of the
/// analytic velocity with a step of 1e-4 of `scale` (relative truncation error ~1e-8).
fn axial_strain(specs: &[TubeSpec], x: [f64; 3], e: [f64; 3], scale: f64) -> f64 {
    let total = |p: [f64; 3]| {
        specs.iter().fold([0.0; 3], |acc, t| {
            let v = t.velocity(p);
            [acc[0] + v[0], acc[1] + v[1], acc[2] + v[2]]
        })
    };
    // ê·S·ê = ê·∇(u·ê): the derivative of the axial velocity along the axis.
    let step = 1e-4 * scale;
    let along = |sign: f64| std::array::from_fn(|k| x[k] + sign * step * e[k]);
    let (up, um) = (total(along(1.0)), total(along(-1.0)));
    let axial = |u: [f64; 3]| u[0] * e[0] + u[1] * e[1] + u[2] * e[2];
    (axial(up) - axial(um)) / (2.0 * step)
}

/// Median of [`axial_strain`] over the points of tube `t`'s axis inside the box (one per
/// spacing, at least two core radii from every face), the same part of the axis the stations
/// sample.
fn axial_strain_on_axis(specs: &[TubeSpec], t: &TubeSpec, half_box: f64, h: f64) -> f64 {
    let margin = half_box - 2.0 * t.core_radius;
    let mut values: Vec<f64> = (-4 * 256..=4 * 256)
        .map(|k| {
            let zeta = k as f64 * h;
            std::array::from_fn(|i| t.point[i] + zeta * t.axis[i])
        })
        .filter(|p: &[f64; 3]| p.iter().all(|c| c.abs() <= margin))
        .map(|p| axial_strain(specs, p, t.axis, h))
        .collect();
    values.sort_by(f64::total_cmp);
    match values.len() {
        0 => f64::NAN,
        n if n % 2 == 1 => values[n / 2],
        n => 0.5 * (values[n / 2 - 1] + values[n / 2]),
    }
}

/// The tubes of a box of `n` points per side, spacing `h`: positions and sizes scale with the
/// box (invented values: the cores span 3–3.5 spacings, resolved by the 4th-order gradient;
/// the axes are about 6 core radii apart at mid-height and further apart elsewhere; tilts of
/// 20° keep every axis at least 2 core radii from the side faces).
fn tubes(n: usize, h: f64, viscosity: f64) -> Vec<TubeSpec> {
    let s = n as f64 / DEFAULT_POINTS as f64 * h;
    let rc1 = 3.5 * s;
    let rc2 = 3.0 * s;
    let peak1 = 0.1;
    let peak2 = 0.08;
    vec![
        TubeSpec {
            burgers: true,
            point: [-9.0 * s, -5.0 * s, 0.0],
            axis: axis_deg(20.0, 90.0),
            circulation: peak1 * 2.0 * PI * rc1 / PEAK_FACTOR,
            core_radius: rc1,
            strain: 4.0 * viscosity / (rc1 * rc1),
        },
        TubeSpec {
            burgers: false,
            point: [10.0 * s, 6.0 * s, 0.0],
            // A clockwise tube seen from +z: its vorticity points down and tilts towards
            // (−cos 40°, +sin 40°).
            axis: axis_deg(160.0, 140.0),
            circulation: peak2 * 2.0 * PI * rc2 / PEAK_FACTOR,
            core_radius: rc2,
            strain: 0.0,
        },
    ]
}

fn write_volume(
    path: &Path,
    coords: &Array1<f64>,
    u: &Array3<f32>,
    v: &Array3<f32>,
    w: &Array3<f32>,
) -> anyhow::Result<()> {
    let f = hdf5::File::create(path).with_context(|| format!("{}", path.display()))?;
    let (nz, ny, nx) = u.dim();
    for (name, a) in [("u", u), ("v", v), ("w", w)] {
        let d = f
            .new_dataset_builder()
            .chunk((1, ny, nx))
            .deflate(4)
            .with_data(a)
            .create(name)?;
        let unit: hdf5::types::VarLenUnicode = "m/s".parse().expect("ascii");
        d.new_attr::<hdf5::types::VarLenUnicode>()
            .create("units")?
            .write_scalar(&unit)?;
    }
    let _ = nz;
    for name in ["x", "y", "z"] {
        let d = f.new_dataset_builder().with_data(coords).create(name)?;
        let unit: hdf5::types::VarLenUnicode = "m".parse().expect("ascii");
        d.new_attr::<hdf5::types::VarLenUnicode>()
            .create("units")?
            .write_scalar(&unit)?;
    }
    f.flush()?;
    Ok(())
}

/// Runs the tubes scenario (arguments already validated by the caller).
pub fn run(args: &SynthArgs) -> anyhow::Result<()> {
    let n = args.nx.unwrap_or(DEFAULT_POINTS);
    if let Some(ny) = args.ny {
        if ny != n {
            bail!("the tubes scenario is a cube of --nx points per side; --ny {ny} differs from --nx {n}");
        }
    }
    if !(24..=256).contains(&n) {
        bail!("the tubes scenario needs 24 to 256 points per side, got {n}");
    }
    let snapshots = args.snapshots.unwrap_or(1);
    if snapshots == 0 {
        bail!("--snapshots must be at least 1");
    }
    let h = args.spacing;
    let specs = tubes(n, h, args.viscosity);
    let coords = Array1::from_iter((0..n).map(|i| (i as f64 - 0.5 * (n - 1) as f64) * h));
    fs::create_dir_all(&args.out)
        .with_context(|| format!("{}: cannot create the output folder", args.out.display()))?;
    let mut clean = Array3::<[f64; 3]>::from_elem((n, n, n), [0.0; 3]);
    for ((iz, iy, ix), q) in clean.indexed_iter_mut() {
        let p = [coords[ix], coords[iy], coords[iz]];
        for t in &specs {
            let a = t.velocity(p);
            for k in 0..3 {
                q[k] += a[k];
            }
        }
    }
    let mut peaks: Vec<f64> = specs.iter().map(TubeSpec::peak_velocity).collect();
    peaks.sort_by(f64::total_cmp);
    let typical = peaks[peaks.len() / 2];
    let sigma = args.noise * typical;
    let normal = (sigma > 0.0).then(|| Normal::new(0.0, sigma).expect("positive sigma"));
    let mut rng = ChaCha8Rng::seed_from_u64(args.seed);
    let mut truth = Vec::new();
    let half_box = 0.5 * (n - 1) as f64 * h;
    for s in 0..snapshots {
        let mut comp = [
            Array3::<f32>::zeros((n, n, n)),
            Array3::<f32>::zeros((n, n, n)),
            Array3::<f32>::zeros((n, n, n)),
        ];
        for ((iz, iy, ix), q) in clean.indexed_iter() {
            let mut value = *q;
            if let Some(normal) = &normal {
                for x in &mut value {
                    *x += normal.sample(&mut rng);
                }
            }
            let r: f64 = rng.gen();
            if r < args.missing {
                value = [f64::NAN; 3];
            } else if r < args.missing + args.outliers {
                let dir = axis_deg(rng.gen_range(0.0..180.0), rng.gen_range(0.0..360.0));
                let magnitude = rng.gen_range(0.5..3.0) * typical;
                value = dir.map(|d| d * magnitude);
            }
            for k in 0..3 {
                comp[k][[iz, iy, ix]] = value[k] as f32;
            }
        }
        let name = format!("tubes_{s:04}.h5");
        write_volume(&args.out.join(&name), &coords, &comp[0], &comp[1], &comp[2])?;
        for (i, t) in specs.iter().enumerate() {
            truth.push(TruthRow {
                source: name.clone(),
                index: 0,
                tube: i + 1,
                model: if t.burgers { "burgers" } else { "lamb-oseen" },
                x: t.point[0],
                y: t.point[1],
                z: t.point[2],
                axis_x: t.axis[0],
                axis_y: t.axis[1],
                axis_z: t.axis[2],
                circulation: t.circulation,
                core_radius: t.core_radius,
                strain_rate: t.strain,
                axial_strain_rate: axial_strain_on_axis(&specs, t, half_box, h),
                peak_velocity: t.peak_velocity(),
            });
        }
    }
    let path = args.out.join("truth.csv");
    let mut w = csv::Writer::from_path(&path).with_context(|| format!("{}", path.display()))?;
    for r in &truth {
        w.serialize(r)?;
    }
    w.flush()?;
    let scenario = serde_json::json!({
        "tool": "vortcat synth",
        "version": env!("CARGO_PKG_VERSION"),
        "arguments": args,
        "grid": {"nx": n, "ny": n, "nz": n, "spacing": h, "origin": coords[0],
                 "length_unit": "m", "velocity_unit": "m/s"},
        "snapshots": snapshots,
        "tubes": specs.len(),
        "noise_definition": "Gaussian on each component, sigma = noise x median peak azimuthal velocity of the tubes",
    });
    fs::write(
        args.out.join("scenario.json"),
        serde_json::to_string_pretty(&scenario)? + "\n",
    )?;
    println!(
        "wrote {snapshots} volumes of {n}^3 points with {} tubes to {} (truth.csv, scenario.json; survey with --geometry volume)",
        specs.len(),
        args.out.display()
    );
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tube_velocity_has_the_gaussian_core_profile() {
        let t = TubeSpec {
            burgers: false,
            point: [0.0; 3],
            axis: [0.0, 0.0, 1.0],
            circulation: 2.0 * PI,
            core_radius: 1.0,
            strain: 0.0,
        };
        // At r = rc along +x: u_θ = Γ/(2π rc)(1 − e⁻¹) in +y, counter-clockwise about +z.
        let q = t.velocity([1.0, 0.0, 5.0]);
        assert!((q[1] - (1.0 - (-1.0_f64).exp())).abs() < 1e-12, "{q:?}");
        assert!(q[0].abs() < 1e-12 && q[2].abs() < 1e-12);
        // The peak factor: the profile's maximum over r.
        let best = (1..4000)
            .map(|i| {
                let r = i as f64 * 1e-3;
                (1.0 - (-r * r).exp()) / r
            })
            .fold(0.0_f64, f64::max);
        assert!((best - PEAK_FACTOR).abs() < 1e-5, "{best}");
    }

    #[test]
    fn burgers_strain_is_axisymmetric_and_divergence_free() {
        let t = TubeSpec {
            burgers: true,
            point: [0.0; 3],
            axis: axis_deg(30.0, 10.0),
            circulation: 0.0,
            core_radius: 1.0,
            strain: 0.4,
        };
        // Central differences of a linear field are exact up to rounding.
        let d = 1e-3;
        let p = [0.3, -0.2, 0.5];
        let mut div = 0.0;
        for k in 0..3 {
            let (mut a, mut b) = (p, p);
            a[k] += d;
            b[k] -= d;
            div += (t.velocity(a)[k] - t.velocity(b)[k]) / (2.0 * d);
        }
        assert!(div.abs() < 1e-9, "{div}");
        // Along the axis: u = γ ζ ê.
        let e = t.axis;
        let q = t.velocity([2.0 * e[0], 2.0 * e[1], 2.0 * e[2]]);
        for k in 0..3 {
            assert!((q[k] - 0.8 * e[k]).abs() < 1e-12);
        }
    }

    #[test]
    fn tubes_are_inside_and_apart() {
        let specs = tubes(DEFAULT_POINTS, 1.0, 1e-6);
        let half = 0.5 * (DEFAULT_POINTS - 1) as f64;
        for t in &specs {
            // The axis crosses z = ±half inside the box, at least 2 rc from the side faces.
            for zf in [-half, half] {
                let k = (zf - t.point[2]) / t.axis[2];
                for i in 0..2 {
                    let c = t.point[i] + k * t.axis[i];
                    assert!(c.abs() < half - 2.0 * t.core_radius, "{c}");
                }
            }
            assert!(t.circulation > 0.0);
        }
        let dx = specs[0].point[0] - specs[1].point[0];
        let dy = specs[0].point[1] - specs[1].point[1];
        assert!((dx * dx + dy * dy).sqrt() > 5.0 * specs[0].core_radius);
    }
}
