//! `vortcat synth`: synthetic snapshots with a known vortex population, for tests, benchmarks
//! and the demo. Everything here is invented data in scenarios of our own.

use std::fs;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::{Args, ValueEnum};
use ndarray::Array2;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use serde::Serialize;

pub mod flow;
pub mod volume;
mod write;

use flow::{SynthModel, SynthVortex, INFLOW_ZERO_RADIUS};

/// Which invented flow to generate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Scenario {
    /// A vortex street behind a bluff body in a water channel, seen by planar PIV: alternating
    /// rows convected downstream, Lamb–Oseen cores growing by diffusion, some stretched
    /// (Burgers) cores. A time sequence.
    Wake,
    /// Independent snapshots, each with a random population of well-separated Burgers and
    /// Lamb–Oseen vortices of random size, strength and sense.
    Population,
    /// Volumes (HDF5 u, v, w as (z, y, x), whatever --format says) of a cube of --nx points
    /// per side [48] holding two tilted vortex tubes, a Burgers and a Lamb–Oseen one; survey
    /// with --geometry volume. One volume per snapshot [1].
    Tubes,
}

/// Output file format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SynthFormat {
    /// One .npz per snapshot (u, v, x, y).
    Npz,
    /// One HDF5 stack (t, y, x) with coordinate datasets.
    Hdf5,
    /// One folder of u.npy, v.npy, x.npy, y.npy per snapshot.
    Npy,
    /// One CSV (x, y, u, v) per snapshot.
    Csv,
}

/// Arguments of `vortcat synth`.
#[derive(Debug, Clone, Args, Serialize)]
pub struct SynthArgs {
    /// Output folder (created; existing snapshot files are overwritten).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Flow to generate.
    #[arg(long, value_enum, default_value = "wake")]
    pub scenario: Scenario,
    /// Number of snapshots [wake: 100, population: 20].
    #[arg(long)]
    pub snapshots: Option<usize>,
    /// File format.
    #[arg(long, value_enum, default_value = "npz")]
    pub format: SynthFormat,
    /// Grid points along x [wake: 240, population: 256].
    #[arg(long)]
    pub nx: Option<usize>,
    /// Grid points along y [wake: 120, population: 256].
    #[arg(long)]
    pub ny: Option<usize>,
    /// Grid spacing in metres.
    #[arg(long, default_value_t = 1.0e-3)]
    pub spacing: f64,
    /// Gaussian velocity noise, as a fraction of the median peak azimuthal velocity.
    #[arg(long, default_value_t = 0.03)]
    pub noise: f64,
    /// Fraction of vectors removed (NaN), as PIV validation leaves them.
    #[arg(long, default_value_t = 0.01)]
    pub missing: f64,
    /// Fraction of vectors replaced by outliers of up to three peak velocities.
    #[arg(long, default_value_t = 0.002)]
    pub outliers: f64,
    /// Kinematic viscosity in m²/s (water at 20 °C: 1.0e-6, common practice).
    #[arg(long, default_value_t = 1.0e-6)]
    pub viscosity: f64,
    /// Time between snapshots in seconds (wake).
    #[arg(long, default_value_t = 0.04)]
    pub dt: f64,
    /// Uniform background velocity along x in m/s; vortices drift with it.
    #[arg(long, default_value_t = 0.17)]
    pub background: f64,
    /// Uniform background shear ∂u/∂y in 1/s.
    #[arg(long, default_value_t = 0.0)]
    pub shear: f64,
    /// Vortices per snapshot (population).
    #[arg(long, default_value_t = 30)]
    pub vortices: usize,
    /// Fraction of Burgers (stretched) vortices.
    #[arg(long, default_value_t = 0.4)]
    pub burgers_fraction: f64,
    /// Random seed: the same seed and arguments give the same bytes.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
}

/// One truth-table row.
#[derive(Debug, Clone, Serialize)]
pub struct TruthRow {
    /// Snapshot file, relative to the output folder.
    pub source: String,
    /// Index in that file's stack.
    pub index: usize,
    /// Time of the snapshot in s.
    pub time: f64,
    /// Vortex number within the scenario (the same vortex keeps its number over time).
    pub vortex: usize,
    /// Model.
    pub model: SynthModel,
    /// Centre x in m.
    pub x: f64,
    /// Centre y in m.
    pub y: f64,
    /// +1 counter-clockwise, −1 clockwise.
    pub sense: i8,
    /// Circulation in m²/s.
    pub circulation: f64,
    /// Core radius in m.
    pub core_radius: f64,
    /// Strain rate in 1/s (0 for Lamb–Oseen).
    pub strain_rate: f64,
    /// Peak azimuthal velocity in m/s.
    pub peak_velocity: f64,
    /// Background velocity at the centre, x, in m/s.
    pub conv_u: f64,
    /// Background velocity at the centre, y, in m/s.
    pub conv_v: f64,
    /// Distance from the centre to the nearest domain edge, in core radii.
    pub edge_distance: f64,
}

struct Domain {
    nx: usize,
    ny: usize,
    h: f64,
    x0: f64,
    y0: f64,
}

impl Domain {
    fn x(&self, i: usize) -> f64 {
        self.x0 + i as f64 * self.h
    }
    fn y(&self, j: usize) -> f64 {
        self.y0 + j as f64 * self.h
    }
    fn edge_distance(&self, x: f64, y: f64) -> f64 {
        let (x1, y1) = (self.x(self.nx - 1), self.y(self.ny - 1));
        (x - self.x0).min(x1 - x).min(y - self.y0).min(y1 - y)
    }
}

/// The vortices of one snapshot with their stable numbers.
type Population = Vec<(usize, SynthVortex)>;

fn wake(
    args: &SynthArgs,
    domain: &Domain,
    rng: &mut ChaCha8Rng,
    n: usize,
) -> Vec<(f64, Population)> {
    // Invented street geometry: streamwise spacing a, rows at ±b/2 with b/a = 0.3 (close to the
    // ratio of a stable Kármán street, 0.281; Lamb 1932, §156), vortices born upstream of the
    // view and convected with the background.
    let a = 0.25 * (domain.nx as f64 * domain.h);
    let b = 0.3 * a;
    let uc = args.background;
    let period = 2.0 * a / uc.abs().max(1e-9);
    let duration = n as f64 * args.dt;
    let x_birth = domain.x0 - a;
    let count = ((duration + 2.0 * (domain.nx as f64 * domain.h + 2.0 * a) / uc.abs().max(1e-9))
        / (period / 2.0))
        .ceil() as usize
        + 2;
    // Each shed vortex: birth time, row, model, initial core, peak velocity.
    let t_first = -(domain.nx as f64 * domain.h + 2.0 * a) / uc.abs().max(1e-9);
    let shed: Vec<(f64, i8, SynthModel, f64, f64, f64)> = (0..count)
        .map(|k| {
            let upper = k % 2 == 0;
            let sense: i8 = if upper { -1 } else { 1 };
            let burgers = rng.gen::<f64>() < args.burgers_fraction;
            let rc0 = domain.h * rng.gen_range(2.5..3.5);
            let peak = uc.abs().max(0.05) * rng.gen_range(0.25..0.4);
            let strain = if burgers {
                rng.gen_range(1.0..3.0)
            } else {
                0.0
            };
            let model = if burgers {
                SynthModel::Burgers
            } else {
                SynthModel::LambOseen
            };
            (
                t_first + k as f64 * period / 2.0,
                sense,
                model,
                rc0,
                peak,
                strain,
            )
        })
        .collect();
    (0..n)
        .map(|s| {
            let t = s as f64 * args.dt;
            let mut pop = Vec::new();
            for (id, &(t_birth, sense, model, rc0, peak, strain)) in shed.iter().enumerate() {
                let age = t - t_birth;
                if age < 0.0 {
                    continue;
                }
                let x = x_birth + uc * age;
                let y = f64::from(-sense) * b / 2.0;
                // Lamb–Oseen cores diffuse: rc² = rc0² + 4νt; Burgers cores are steady.
                let rc = match model {
                    SynthModel::LambOseen => (rc0 * rc0 + 4.0 * args.viscosity * age).sqrt(),
                    SynthModel::Burgers => rc0,
                };
                let x_max = domain.x(domain.nx - 1);
                if x < domain.x0 - 3.0 * rc || x > x_max + 3.0 * rc {
                    continue;
                }
                let circulation =
                    f64::from(sense) * peak * 2.0 * std::f64::consts::PI * rc / 0.638_17;
                pop.push((
                    id,
                    SynthVortex {
                        model,
                        x,
                        y,
                        circulation,
                        core_radius: rc,
                        strain_rate: strain,
                    },
                ));
            }
            (t, pop)
        })
        .collect()
}

fn reach(v: &SynthVortex) -> f64 {
    let k = if v.model == SynthModel::Burgers {
        INFLOW_ZERO_RADIUS
    } else {
        3.5
    };
    k * v.core_radius
}

fn population(args: &SynthArgs, domain: &Domain, rng: &mut ChaCha8Rng) -> Population {
    let mut placed: Vec<SynthVortex> = Vec::new();
    let mut attempts = 0;
    while placed.len() < args.vortices && attempts < 20_000 {
        attempts += 1;
        let rc = domain.h * rng.gen_range(2.0..5.0);
        let burgers = rng.gen::<f64>() < args.burgers_fraction;
        let margin = 3.0 * rc;
        let x = rng.gen_range(domain.x0 + margin..domain.x(domain.nx - 1) - margin);
        let y = rng.gen_range(domain.y0 + margin..domain.y(domain.ny - 1) - margin);
        let sense = if rng.gen::<bool>() { 1.0 } else { -1.0 };
        let peak = rng.gen_range(0.5..1.5) * 0.1;
        let candidate = SynthVortex {
            model: if burgers {
                SynthModel::Burgers
            } else {
                SynthModel::LambOseen
            },
            x,
            y,
            circulation: sense * peak * 2.0 * std::f64::consts::PI * rc / 0.638_17,
            core_radius: rc,
            // Inflow a few per cent of the swirl at r = rc: γ rc / 2 ≈ 0.05..0.15 × peak.
            strain_rate: if burgers {
                rng.gen_range(0.1..0.3) * peak / rc
            } else {
                0.0
            },
        };
        // No vortex's inflow taper or swirl core reaches another's fitting window (3 rc).
        let clear = placed.iter().all(|p| {
            let d = ((p.x - x).powi(2) + (p.y - y).powi(2)).sqrt();
            d > (reach(p) + 3.0 * rc).max(reach(&candidate) + 3.0 * p.core_radius)
        });
        if clear {
            placed.push(candidate);
        }
    }
    placed.into_iter().enumerate().collect()
}

/// Velocity of a snapshot: background, vortices, then noise, outliers and missing vectors.
fn render(
    args: &SynthArgs,
    domain: &Domain,
    pop: &Population,
    rng: &mut ChaCha8Rng,
) -> (Array2<f64>, Array2<f64>) {
    let (ny, nx) = (domain.ny, domain.nx);
    let mut u = Array2::zeros((ny, nx));
    let mut v = Array2::zeros((ny, nx));
    for j in 0..ny {
        for i in 0..nx {
            let (x, y) = (domain.x(i), domain.y(j));
            let mut uu = args.background + args.shear * y;
            let mut vv = 0.0;
            for (_, vx) in pop {
                let [a, b] = vx.velocity(x, y);
                uu += a;
                vv += b;
            }
            u[[j, i]] = uu;
            v[[j, i]] = vv;
        }
    }
    let mut peaks: Vec<f64> = pop.iter().map(|(_, v)| v.peak_velocity()).collect();
    peaks.sort_by(f64::total_cmp);
    let typical = peaks.get(peaks.len() / 2).copied().unwrap_or(0.1);
    let sigma = args.noise * typical;
    if sigma > 0.0 {
        let normal = Normal::new(0.0, sigma).expect("positive sigma");
        u.mapv_inplace(|x| x + normal.sample(rng));
        v.mapv_inplace(|x| x + normal.sample(rng));
    }
    for j in 0..ny {
        for i in 0..nx {
            let r: f64 = rng.gen();
            if r < args.missing {
                u[[j, i]] = f64::NAN;
                v[[j, i]] = f64::NAN;
            } else if r < args.missing + args.outliers {
                let angle = rng.gen_range(0.0..std::f64::consts::TAU);
                let magnitude = rng.gen_range(0.5..3.0) * typical;
                u[[j, i]] = args.background + magnitude * angle.cos();
                v[[j, i]] = magnitude * angle.sin();
            }
        }
    }
    (u, v)
}

fn validate(args: &SynthArgs) -> anyhow::Result<()> {
    let unit = |name: &str, x: f64| -> anyhow::Result<()> {
        if !(0.0..=1.0).contains(&x) {
            bail!("--{name} must be between 0 and 1, got {x}");
        }
        Ok(())
    };
    unit("noise", args.noise)?;
    unit("missing", args.missing)?;
    unit("outliers", args.outliers)?;
    unit("burgers-fraction", args.burgers_fraction)?;
    if !(args.spacing.is_finite() && args.spacing > 0.0) {
        bail!("--spacing must be positive, got {}", args.spacing);
    }
    if !(args.viscosity.is_finite() && args.viscosity > 0.0) {
        bail!("--viscosity must be positive, got {}", args.viscosity);
    }
    if !(args.dt.is_finite() && args.dt > 0.0) {
        bail!("--dt must be positive, got {}", args.dt);
    }
    Ok(())
}

/// Runs the command.
pub fn run(args: SynthArgs) -> anyhow::Result<ExitCode> {
    validate(&args)?;
    let (nx_default, ny_default, n_default) = match args.scenario {
        Scenario::Wake => (240, 120, 100),
        Scenario::Population => (256, 256, 20),
        Scenario::Tubes => {
            volume::run(&args)?;
            return Ok(ExitCode::SUCCESS);
        }
    };
    let nx = args.nx.unwrap_or(nx_default);
    let ny = args.ny.unwrap_or(ny_default);
    let n = args.snapshots.unwrap_or(n_default);
    if nx < 16 || ny < 16 || n == 0 {
        bail!("need at least 16 x 16 points and one snapshot (got {nx} x {ny}, {n})");
    }
    let domain = Domain {
        nx,
        ny,
        h: args.spacing,
        x0: 0.0,
        y0: -0.5 * (ny - 1) as f64 * args.spacing,
    };
    fs::create_dir_all(&args.out)
        .with_context(|| format!("{}: cannot create the output folder", args.out.display()))?;
    let mut rng = ChaCha8Rng::seed_from_u64(args.seed);
    let snapshots: Vec<(f64, Population)> = match args.scenario {
        Scenario::Wake => wake(&args, &domain, &mut rng, n),
        // (Tubes returned above.)
        Scenario::Population | Scenario::Tubes => (0..n)
            .map(|s| (s as f64 * args.dt, population(&args, &domain, &mut rng)))
            .collect(),
    };
    let xs: Vec<f64> = (0..nx).map(|i| domain.x(i)).collect();
    let ys: Vec<f64> = (0..ny).map(|j| domain.y(j)).collect();
    let mut writer = write::Writer::new(&args.out, args.format, n, &xs, &ys)?;
    let mut truth = Vec::new();
    for (s, (t, pop)) in snapshots.iter().enumerate() {
        let (u, v) = render(&args, &domain, pop, &mut rng);
        let (source, index) = writer.write(s, *t, &u, &v)?;
        for (id, vx) in pop {
            // Vortices centred outside the view still induce velocity in it, but are not in
            // the truth table: nothing could find them.
            if domain.edge_distance(vx.x, vx.y) < 0.0 {
                continue;
            }
            truth.push(TruthRow {
                source: source.clone(),
                index,
                time: *t,
                vortex: *id,
                model: vx.model,
                x: vx.x,
                y: vx.y,
                sense: if vx.circulation > 0.0 { 1 } else { -1 },
                circulation: vx.circulation,
                core_radius: vx.core_radius,
                strain_rate: vx.strain_rate,
                peak_velocity: vx.peak_velocity(),
                conv_u: args.background + args.shear * vx.y,
                conv_v: 0.0,
                edge_distance: domain.edge_distance(vx.x, vx.y) / vx.core_radius,
            });
        }
    }
    writer.finish()?;
    write_truth(&args.out.join("truth.csv"), &truth)?;
    let scenario = serde_json::json!({
        "tool": "vortcat synth",
        "version": env!("CARGO_PKG_VERSION"),
        "arguments": args,
        "grid": {"nx": nx, "ny": ny, "spacing": args.spacing, "x0": domain.x0, "y0": domain.y0,
                 "length_unit": "m", "velocity_unit": "m/s"},
        "snapshots": n,
        "vortices": truth.len(),
        "noise_definition": "Gaussian, sigma = noise x median peak azimuthal velocity of the snapshot's vortices",
    });
    fs::write(
        args.out.join("scenario.json"),
        serde_json::to_string_pretty(&scenario)? + "\n",
    )?;
    println!(
        "wrote {n} snapshots with {} vortices to {} (truth.csv, scenario.json)",
        truth.len(),
        args.out.display()
    );
    Ok(ExitCode::SUCCESS)
}

fn write_truth(path: &Path, rows: &[TruthRow]) -> anyhow::Result<()> {
    let mut w = csv::Writer::from_path(path).with_context(|| format!("{}", path.display()))?;
    for r in rows {
        w.serialize(r)?;
    }
    w.flush()?;
    Ok(())
}
