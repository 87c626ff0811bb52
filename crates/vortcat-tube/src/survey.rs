//! The streamed tube survey: two passes over the volume in slabs of z-planes.
//!
//! 1. **Detection** (halo = derivative stencil): the criterion at every point, once; per-plane
//!    sums for the rms threshold and, when asked, S:S for ε = 2ν⟨S:S⟩; and the points that
//!    can still be above the threshold (a floor from the partial sums, see the code), with
//!    their strength and vorticity. After the last slab the exact threshold selects the points
//!    above it, which are labelled by union–find across slabs and periodic faces
//!    ([`crate::label`]) without reading the volume again. Regions smaller than the minimum
//!    are dropped; each remaining region's core line is traced ([`crate::trace`]) from the
//!    sparse set of its points, which is all that is kept.
//! 2. **Stations** (halo = the largest fitting window + interpolation + stencil): each station
//!    is computed from the slab whose core holds its centre ([`crate::station`]).
//!
//! Per-plane sums are added in plane order and stations are computed from data that do not
//! depend on where the slab boundaries are, so the results are the same for every slab size
//! and thread count. Each pass reads the next slab on a thread of its own while the current
//! one is worked on. Peak memory: two slabs with their halos and one criterion array of a
//! slab's size, the points kept by the detection pass (above the floor, which rises from slab
//! to slab), and per-plane sums.

use std::collections::HashMap;
use std::ops::Range;
use std::time::Instant;

use ndarray::Array3;
use rayon::prelude::*;
use serde::Serialize;
use vortcat_detect::criterion::{lambda2, q, swirling_strength};
use vortcat_detect::gradient::{map_volume_kernel_into, volume_tensor_at, VolumeKernel};
use vortcat_detect::{Criterion, Tensor3, Threshold};

use crate::error::TubeError;
use crate::label::{Labeller, NONE};
use crate::settings::{
    Kolmogorov, TubeSettings, DEFAULT_MIN_LENGTH_SPACINGS, DEFAULT_STATION_SPACINGS,
};
use crate::slab::{cores, Slab};
use crate::source::VolumeSource;
use crate::station::{compute, Station, StationCtx, StationJob};
use crate::trace::{dot, trace, unit, Geom, RegionPoints};

/// The criterion as a row kernel (λ2 through its vectorised kernel).
struct CriterionKernel(Criterion);

impl VolumeKernel for CriterionKernel {
    #[inline]
    fn point(&self, t: &Tensor3) -> f64 {
        match self.0 {
            Criterion::Lambda2 => lambda2::volume_value(t),
            Criterion::Q => q::volume_value(t),
            Criterion::SwirlingStrength => swirling_strength::volume_value(t),
            Criterion::Vorticity => vortcat_detect::criterion::vorticity::volume_magnitude(t),
            Criterion::Delta => vortcat_detect::criterion::delta::volume_value(t),
            Criterion::Gamma1 | Criterion::Gamma2 => f64::NAN,
        }
    }

    fn run(&self, d: &[&[f64]; 9], scratch: &mut [Vec<f64>; 2], out: &mut [f64]) {
        if self.0 == Criterion::Lambda2 {
            lambda2::Lambda2Kernel.run(d, scratch, out);
            return;
        }
        for (k, o) in out.iter_mut().enumerate() {
            let t = Tensor3(std::array::from_fn(|i| {
                std::array::from_fn(|j| d[3 * i + j][k])
            }));
            *o = self.point(&t);
        }
    }
}

/// S:S = SᵢⱼSᵢⱼ, S = (A + Aᵀ)/2.
struct StrainSquared;

impl VolumeKernel for StrainSquared {
    #[inline]
    fn point(&self, t: &Tensor3) -> f64 {
        let a = &t.0;
        let mut s = 0.0;
        for i in 0..3 {
            for j in 0..3 {
                let sij = 0.5 * (a[i][j] + a[j][i]);
                s += sij * sij;
            }
        }
        s
    }
}

/// A point kept by the detection pass: its raster index, raw criterion value (the strength is
/// recomputed from it in f64, exactly as it was compared) and vorticity.
#[derive(Debug, Clone, Copy)]
struct Candidate {
    flat: u64,
    raw: f32,
    omega: [f32; 3],
}

impl Candidate {
    /// Strictly above `level` (NaN never is).
    #[inline]
    fn passes(&self, criterion: Criterion, level: f64) -> bool {
        let s = criterion.strength(f64::from(self.raw));
        !s.is_nan() && s > level
    }
}

/// Kolmogorov scales used for the normalised columns.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct KolmogorovScales {
    /// Length scale η = (ν³/ε)^¼.
    pub eta: f64,
    /// Time scale τ_η = (ν/ε)^½.
    pub tau: f64,
    /// Mean dissipation rate ε = 2ν⟨S:S⟩ when computed from the field.
    pub dissipation: Option<f64>,
}

impl KolmogorovScales {
    /// Scales from ν and ε (Kolmogorov 1941): η = (ν³/ε)^¼, τ_η = (ν/ε)^½.
    ///
    /// # Reference
    /// A. N. Kolmogorov (1941), *Dokl. Akad. Nauk SSSR* 30, 301–305.
    pub fn from_dissipation(viscosity: f64, dissipation: f64) -> Self {
        Self {
            eta: (viscosity.powi(3) / dissipation).powf(0.25),
            tau: (viscosity / dissipation).sqrt(),
            dissipation: Some(dissipation),
        }
    }
}

/// One tube: the summary of its stations. Medians over the fitted stations (converged fits
/// only); `None` when no station has the value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Tube {
    /// Number, from 1, in raster order of each region's first point.
    pub tube: usize,
    /// Points of the region above the threshold.
    pub voxels: usize,
    /// Length of the traced core line.
    pub length: f64,
    /// The core line closes on itself through periodic faces.
    pub closed: bool,
    /// Unit orientation: principal direction of the station centres, oriented along the mean
    /// vorticity (the mean station axis for a single station).
    pub orientation: [f64; 3],
    /// Mean of the station positions (wrapped into the box on periodic axes).
    pub centroid: [f64; 3],
    /// Largest criterion strength in the region.
    pub peak_strength: f64,
    /// Stations traced.
    pub stations: usize,
    /// Stations with a converged fit.
    pub fitted: usize,
    /// Median rc.
    pub core_radius: Option<f64>,
    /// Median Γ.
    pub circulation: Option<f64>,
    /// Median peak azimuthal velocity.
    pub peak_velocity: Option<f64>,
    /// Median γ_axial.
    pub strain_rate_axial: Option<f64>,
    /// Median balance ratio.
    pub balance_ratio: Option<f64>,
    /// Median rc/η.
    pub core_radius_eta: Option<f64>,
    /// Median Γ/ν.
    pub reynolds: Option<f64>,
    /// Median γ_axial·τ_η.
    pub strain_rate_tau: Option<f64>,
}

/// Timings and counts of a survey (not part of the catalogs: they vary run to run).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct SurveyStats {
    /// Grid points of the volume.
    pub points: u64,
    /// Criterion evaluations (once per grid point with a valid slab).
    pub criterion_points: u64,
    /// Seconds in the detection stage: criterion evaluation, threshold statistics, selection
    /// of the points above the threshold with their vorticity, and labelling.
    pub detect_seconds: f64,
    /// Seconds reading slabs.
    pub read_seconds: f64,
    /// Seconds tracing core lines.
    pub trace_seconds: f64,
    /// Seconds in station fits.
    pub fit_seconds: f64,
    /// Points above the threshold.
    pub voxels: u64,
    /// Regions before the size and length filters.
    pub regions: usize,
    /// Slabs per pass.
    pub slabs: usize,
    /// Halo planes of the station pass.
    pub station_halo: usize,
}

/// Everything a tube survey returns.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TubeSurvey {
    /// Tubes, by number.
    pub tubes: Vec<Tube>,
    /// Stations, by tube then station.
    pub stations: Vec<Station>,
    /// Threshold on the criterion strength.
    pub threshold: f64,
    /// Kolmogorov scales, when known.
    pub kolmogorov: Option<KolmogorovScales>,
    /// Timings and counts.
    pub stats: SurveyStats,
}

/// Median of the finite values; `None` when there is none.
pub(crate) fn median(mut v: Vec<f64>) -> Option<f64> {
    v.retain(|x| x.is_finite());
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    Some(if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    })
}

/// Loads the slabs `cores` (`(slab number, core planes)`, with `halo` and `pad`) on a reader
/// thread, one ahead of `each`, which gets them in order on the calling thread: reading the
/// next slab overlaps the work on this one (reading is serial, the work is spread over the
/// rayon pool). The channel is a rendezvous, so at most two slabs are held at once: the one
/// being worked on and the one just read. Returns the seconds the reader spent loading.
fn for_each_slab(
    source: &mut dyn VolumeSource,
    cores: &[(usize, Range<usize>)],
    halo: usize,
    pad: usize,
    periodic: [bool; 3],
    mut each: impl FnMut(usize, Slab) -> Result<(), TubeError>,
) -> Result<f64, TubeError> {
    std::thread::scope(|scope| {
        let (to_worker, from_reader) =
            std::sync::mpsc::sync_channel::<(usize, Result<Slab, TubeError>, f64)>(0);
        scope.spawn(move || {
            for (k, core) in cores {
                let t0 = Instant::now();
                let slab = Slab::load(source, core.clone(), halo, pad, periodic);
                let failed = slab.is_err();
                // A closed channel means the worker stopped on an error: stop reading.
                if to_worker
                    .send((*k, slab, t0.elapsed().as_secs_f64()))
                    .is_err()
                    || failed
                {
                    break;
                }
            }
        });
        let mut read = 0.0;
        for (k, slab, seconds) in from_reader {
            read += seconds;
            each(k, slab?)?;
        }
        Ok(read)
    })
}

fn geom(source: &dyn VolumeSource, periodic: [bool; 3]) -> Result<Geom, TubeError> {
    let g = source.grid();
    let z = g.z().ok_or(TubeError::NotAVolume { found: g.ndim() })?;
    let (x, y) = (g.x(), g.y());
    Ok(Geom {
        origin: [x.origin(), y.origin(), z.origin()],
        spacing: [x.spacing(), y.spacing(), z.spacing()],
        n: [x.len(), y.len(), z.len()],
        periodic,
    })
}

/// Surveys the tubes of one volume (see the module docs).
///
/// Errors: invalid settings, a source that is not a volume or cannot be read, no computable
/// criterion value. A station whose fit fails or does not converge is a flagged result.
pub fn survey_tubes(
    source: &mut dyn VolumeSource,
    settings: &TubeSettings,
) -> Result<TubeSurvey, TubeError> {
    settings.validate()?;
    let g = geom(source, settings.periodic)?;
    let [nx, ny, nz] = g.n;
    let h = g.h();
    let hw = settings.scheme.half_width();
    let pad = hw + 2;
    let slabs = cores(nz, settings.slab_planes);
    let kernel = CriterionKernel(settings.criterion);
    let criterion = settings.criterion;
    let mut stats = SurveyStats {
        points: (nx * ny * nz) as u64,
        slabs: slabs.len(),
        ..SurveyStats::default()
    };
    let rule = match settings.threshold {
        Threshold::Default => Threshold::default_for(criterion),
        t => t,
    };
    let need_eps = settings.kolmogorov == Kolmogorov::FromField;
    let need_rms = matches!(rule, Threshold::RelativeToRms(_));

    // Pass 1, the detection pass: per-plane sums for the threshold (and ε), and every point
    // that can still be above the threshold. The threshold k·rms is only known after the last
    // slab, but the partial sums give a floor that it cannot go below: the sum of squares only
    // grows (partial sums of non-negative terms, added in the same plane order as the final
    // sum, so this holds in floating point too) and the count of computed points is at most
    // the number of grid points. Points at or below the floor are dropped as the floor rises;
    // the rest are filtered exactly once the threshold is known. So the criterion is
    // evaluated once per point, and the points kept never depend on the slab size.
    let mut plane_sq = vec![0.0_f64; nz];
    let mut plane_n = vec![0_u64; nz];
    let mut plane_ss = vec![0.0_f64; nz];
    let mut plane_ssn = vec![0_u64; nz];
    let grid_points = (nx * ny * nz) as f64;
    let mut running_sq = 0.0_f64;
    let mut points: Vec<Candidate> = Vec::new();
    let mut out = Array3::<f32>::zeros((0, 0, 0));
    let all_slabs: Vec<(usize, Range<usize>)> = slabs.iter().cloned().enumerate().collect();
    let read = for_each_slab(source, &all_slabs, hw, pad, settings.periodic, |k, slab| {
        let core = &slabs[k];
        let Some(field) = slab.field.as_ref() else {
            return Ok(());
        };
        let [lx, ly, lz] = slab.n;
        if out.dim() != (lz, ly, lx) {
            out = Array3::<f32>::zeros((lz, ly, lx));
        }
        let t0 = Instant::now();
        map_volume_kernel_into(field, settings.scheme, settings.edge, &kernel, &mut out)?;
        stats.criterion_points += (core.len() * nx * ny) as u64;
        // Each plane is summed in raster order by one thread: the sums do not depend on the
        // thread count.
        let plane_sums = |values: &Array3<f32>, term: &(dyn Fn(f64) -> Option<f64> + Sync)| {
            core.clone()
                .into_par_iter()
                .map(|gz| {
                    let (mut sum, mut count) = (0.0, 0u64);
                    for gy in 0..ny {
                        for gx in 0..nx {
                            if let Some(t) = term(f64::from(values[slab.local(gz, gy, gx)])) {
                                sum += t;
                                count += 1;
                            }
                        }
                    }
                    (sum, count)
                })
                .collect::<Vec<_>>()
        };
        if need_rms {
            let sums = plane_sums(&out, &|v| {
                (!v.is_nan()).then(|| {
                    let p = criterion.strength(v).max(0.0);
                    p * p
                })
            });
            for (gz, (sum, count)) in core.clone().zip(sums) {
                plane_sq[gz] = sum;
                plane_n[gz] = count;
                running_sq += sum;
            }
        }
        let floor = match rule {
            Threshold::Absolute(t) => t,
            Threshold::RelativeToRms(k) => k * (running_sq / grid_points).sqrt(),
            _ => unreachable!("refused by validate"),
        };
        points.retain(|p| p.passes(criterion, floor));
        let found: Vec<Vec<Candidate>> = core
            .clone()
            .into_par_iter()
            .map(|gz| {
                let mut plane = Vec::new();
                for gy in 0..ny {
                    for gx in 0..nx {
                        let l = slab.local(gz, gy, gx);
                        let point = Candidate {
                            flat: g.flat([gx, gy, gz]),
                            raw: out[l],
                            omega: [0.0; 3],
                        };
                        if !point.passes(criterion, floor) {
                            continue;
                        }
                        let w = volume_tensor_at(field, settings.scheme, settings.edge, l)?
                            .map_or([0.0; 3], |t| t.vorticity());
                        plane.push(Candidate {
                            omega: w.map(|x| x as f32),
                            ..point
                        });
                    }
                }
                Ok(plane)
            })
            .collect::<Result<_, vortcat_detect::DetectError>>()?;
        points.extend(found.into_iter().flatten());
        stats.detect_seconds += t0.elapsed().as_secs_f64();
        if need_eps {
            map_volume_kernel_into(
                field,
                settings.scheme,
                settings.edge,
                &StrainSquared,
                &mut out,
            )?;
            let sums = plane_sums(&out, &|v| (!v.is_nan()).then_some(v));
            for (gz, (sum, count)) in core.clone().zip(sums) {
                plane_ss[gz] = sum;
                plane_ssn[gz] = count;
            }
        }
        Ok(())
    })?;
    stats.read_seconds += read;
    drop(out);
    let threshold = match rule {
        Threshold::Absolute(t) => t,
        Threshold::RelativeToRms(k) => {
            let n: u64 = plane_n.iter().sum();
            if n == 0 {
                return Err(TubeError::NothingComputable {
                    criterion: criterion.name(),
                });
            }
            k * (plane_sq.iter().sum::<f64>() / n as f64).sqrt()
        }
        _ => unreachable!("refused by validate"),
    };
    let kolmogorov = match settings.kolmogorov {
        Kolmogorov::Unknown => None,
        Kolmogorov::Given { eta, tau } => Some(KolmogorovScales {
            eta,
            tau,
            dissipation: None,
        }),
        Kolmogorov::FromField => {
            let n: u64 = plane_ssn.iter().sum();
            let nu = settings.viscosity.expect("validated");
            (n > 0).then(|| {
                let eps = 2.0 * nu * plane_ss.iter().sum::<f64>() / n as f64;
                KolmogorovScales::from_dissipation(nu, eps)
            })
        }
    };

    // The points above the threshold, labelled slab by slab (from memory: no second read).
    let t0 = Instant::now();
    points.retain(|p| p.passes(criterion, threshold));
    if points.len() as u64 >= u64::from(NONE) {
        return Err(TubeError::TooManyVoxels {
            count: points.len() as u64,
            limit: u64::from(NONE),
        });
    }
    let mut labeller = Labeller::new(nx, ny, settings.periodic);
    let mut next = 0;
    let mut ids = Vec::new();
    for core in &slabs {
        let planes = core.len();
        ids.clear();
        ids.resize(planes * ny * nx, NONE);
        // Points are in raster order, so each slab's points follow the previous slab's.
        while next < points.len() {
            let [gx, gy, gz] = g.unflat(points[next].flat);
            if gz >= core.end {
                break;
            }
            ids[((gz - core.start) * ny + gy) * nx + gx] = labeller.uf.push();
            next += 1;
        }
        labeller.add_slab(&ids, planes, core.start);
    }
    let flat: Vec<u64> = points.iter().map(|p| p.flat).collect();
    let strength: Vec<f32> = points
        .iter()
        .map(|p| criterion.strength(f64::from(p.raw)) as f32)
        .collect();
    let omega: Vec<[f32; 3]> = points.iter().map(|p| p.omega).collect();
    drop(points);
    labeller.finish(nz);
    stats.detect_seconds += t0.elapsed().as_secs_f64();
    stats.voxels = flat.len() as u64;

    // Regions by root (the smallest id: raster order of the first point).
    let mut by_root: HashMap<u32, Vec<u32>> = HashMap::new();
    let mut roots: Vec<u32> = Vec::new();
    for id in 0..flat.len() as u32 {
        let r = labeller.uf.find(id);
        by_root
            .entry(r)
            .or_insert_with(|| {
                roots.push(r);
                Vec::new()
            })
            .push(id);
    }
    roots.sort_unstable();
    stats.regions = roots.len();
    let regions: Vec<Vec<u32>> = roots
        .iter()
        .filter_map(|r| by_root.remove(r))
        .filter(|m| m.len() >= settings.min_voxels)
        .collect();

    // Core lines.
    let step = settings
        .station_spacing
        .unwrap_or(DEFAULT_STATION_SPACINGS * h);
    let min_length = settings
        .min_length
        .unwrap_or(DEFAULT_MIN_LENGTH_SPACINGS * h);
    let max_window = settings.max_window_spacings * h;
    let t0 = Instant::now();
    let lines: Vec<_> = regions
        .par_iter()
        .map(|members| {
            let map: HashMap<u64, u32> = members.iter().map(|&i| (flat[i as usize], i)).collect();
            let peak = *members
                .iter()
                .max_by(|&&a, &&b| {
                    strength[a as usize]
                        .total_cmp(&strength[b as usize])
                        .then(b.cmp(&a))
                })
                .expect("regions are not empty");
            let pi = g.unflat(flat[peak as usize]);
            let region = RegionPoints {
                map,
                strength: &strength,
                omega: &omega,
                threshold,
            };
            let line = trace(
                &g,
                &region,
                [pi[0] as i64, pi[1] as i64, pi[2] as i64],
                step,
                max_window,
            );
            (members.len(), f64::from(strength[peak as usize]), line)
        })
        .collect();
    stats.trace_seconds = t0.elapsed().as_secs_f64();
    let kept: Vec<_> = lines
        .into_iter()
        .filter(|(_, _, l)| l.length(step) >= min_length && !l.points.is_empty())
        .collect();

    // Station jobs and the halo they need.
    let mut jobs: Vec<StationJob> = Vec::new();
    for (t, (_, _, line)) in kept.iter().enumerate() {
        let mut arc = 0.0;
        for (s, p) in line.points.iter().enumerate() {
            if s > 0 {
                let q = line.points[s - 1].centre;
                arc += crate::trace::norm([
                    p.centre[0] - q[0],
                    p.centre[1] - q[1],
                    p.centre[2] - q[2],
                ]);
            }
            let want = (settings.window_multiple * p.radius).max(3.0 * h);
            jobs.push(StationJob {
                tube: t + 1,
                station: s + 1,
                centre: p.centre,
                axis: p.axis,
                arc,
                window: want.min(max_window),
                capped: want > max_window,
                section_radius: p.radius,
            });
        }
    }
    let max_w = jobs.iter().fold(0.0_f64, |m, j| m.max(j.window));
    // Window, plus the γ_axial cylinder's axial reach, the interpolation cell and the stencil.
    let halo = (max_w / g.spacing[2].abs()).ceil() as usize + crate::station::AXIAL_LAYERS + 2 + hw;
    stats.station_halo = halo;
    let slab_of = |j: &StationJob| -> usize {
        let fz = g.frac(j.centre)[2];
        let iz = if settings.periodic[2] {
            fz.floor().rem_euclid(nz as f64) as usize
        } else {
            fz.floor().clamp(0.0, (nz - 1) as f64) as usize
        };
        (iz / settings.slab_planes).min(slabs.len() - 1)
    };
    let mut per_slab: Vec<Vec<usize>> = vec![Vec::new(); slabs.len()];
    for (i, j) in jobs.iter().enumerate() {
        per_slab[slab_of(j)].push(i);
    }
    let ctx = StationCtx {
        geom: g,
        scheme: settings.scheme,
        edge: settings.edge,
        models: &settings.models,
        fit: &{
            let mut f = settings.fit.clone();
            f.viscosity = settings.viscosity;
            f
        },
        viscosity: settings.viscosity,
        kolmogorov: kolmogorov.map(|k| (k.eta, k.tau)),
    };
    let mut results: Vec<Option<Station>> = vec![None; jobs.len()];
    let station_slabs: Vec<(usize, Range<usize>)> = slabs
        .iter()
        .cloned()
        .enumerate()
        .filter(|(k, _)| !per_slab[*k].is_empty())
        .collect();
    let read = for_each_slab(
        source,
        &station_slabs,
        halo,
        pad,
        settings.periodic,
        |k, slab| {
            let t0 = Instant::now();
            let done: Vec<(usize, Station)> = per_slab[k]
                .par_iter()
                .map(|&i| (i, compute(&ctx, &slab, &jobs[i])))
                .collect();
            stats.fit_seconds += t0.elapsed().as_secs_f64();
            for (i, s) in done {
                results[i] = Some(s);
            }
            Ok(())
        },
    )?;
    stats.read_seconds += read;
    let stations: Vec<Station> = results.into_iter().flatten().collect();

    // Tube summaries.
    let mut tubes = Vec::with_capacity(kept.len());
    for (t, (voxels, peak, line)) in kept.iter().enumerate() {
        let mine: Vec<&Station> = stations.iter().filter(|s| s.tube == t + 1).collect();
        let ok: Vec<&&Station> = mine.iter().filter(|s| s.status == "converged").collect();
        let pick =
            |f: &dyn Fn(&Station) -> Option<f64>| median(ok.iter().filter_map(|s| f(s)).collect());
        // Unwrapped centres (fitted offsets applied to the traced, unwrapped line).
        let pts: Vec<[f64; 3]> = line
            .points
            .iter()
            .zip(&mine)
            .map(|(p, s)| {
                let d = g.min_image([
                    s.position[0] - p.centre[0],
                    s.position[1] - p.centre[1],
                    s.position[2] - p.centre[2],
                ]);
                [p.centre[0] + d[0], p.centre[1] + d[1], p.centre[2] + d[2]]
            })
            .collect();
        // The principal direction of the converged stations' centres (traced centres of
        // unfitted stations, e.g. sections cut by a domain face, are biased).
        let converged: Vec<[f64; 3]> = pts
            .iter()
            .zip(&mine)
            .filter(|(_, s)| s.status == "converged")
            .map(|(p, _)| *p)
            .collect();
        let pts = if converged.len() >= 2 { converged } else { pts };
        let n = pts.len().max(1) as f64;
        let mean: [f64; 3] = std::array::from_fn(|k| pts.iter().map(|p| p[k]).sum::<f64>() / n);
        let mut axis_sum = [0.0; 3];
        for s in &mine {
            axis_sum = crate::trace::add(axis_sum, s.axis, 1.0);
        }
        let mean_axis = unit(axis_sum).unwrap_or([0.0, 0.0, 1.0]);
        let orientation = if pts.len() >= 2 && !line.closed {
            let mut cov = [[0.0; 3]; 3];
            for p in &pts {
                for i in 0..3 {
                    for j in 0..3 {
                        cov[i][j] += (p[i] - mean[i]) * (p[j] - mean[j]);
                    }
                }
            }
            let ev = vortcat_detect::eigen::symmetric3_eigenvalues(&cov);
            let top = ev.iter().fold(f64::NEG_INFINITY, |m, &x| m.max(x));
            vortcat_detect::eigen::symmetric3_eigenvector(&cov, top)
                .map(|e| {
                    if dot(e, mean_axis) < 0.0 {
                        e.map(|x| -x)
                    } else {
                        e
                    }
                })
                .unwrap_or(mean_axis)
        } else {
            mean_axis
        };
        let centroid = {
            let mut c = mean;
            for k in 0..3 {
                if g.periodic[k] {
                    let f = ((c[k] - g.origin[k]) / g.spacing[k]).rem_euclid(g.n[k] as f64);
                    c[k] = g.origin[k] + f * g.spacing[k];
                }
            }
            c
        };
        tubes.push(Tube {
            tube: t + 1,
            voxels: *voxels,
            length: line.length(step),
            closed: line.closed,
            orientation,
            centroid,
            peak_strength: *peak,
            stations: mine.len(),
            fitted: ok.len(),
            core_radius: pick(&|s| s.core_radius),
            circulation: pick(&|s| s.circulation),
            peak_velocity: pick(&|s| s.peak_velocity),
            strain_rate_axial: pick(&|s| s.strain_rate_axial),
            balance_ratio: pick(&|s| s.balance_ratio),
            core_radius_eta: pick(&|s| s.core_radius_eta),
            reynolds: pick(&|s| s.reynolds),
            strain_rate_tau: pick(&|s| s.strain_rate_tau),
        });
    }
    Ok(TubeSurvey {
        tubes,
        stations,
        threshold,
        kolmogorov,
        stats,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn kolmogorov_scales_from_their_definitions() {
        // η = (ν³/ε)^¼, τ_η = (ν/ε)^½ (Kolmogorov 1941): ν = 1e-6, ε = 1e-2 gives η = 1e-4.5
        // ... evaluated by hand: (1e-18/1e-2)^¼ = 1e-4, (1e-6/1e-2)^½ = 1e-2.
        let k = KolmogorovScales::from_dissipation(1e-6, 1e-2);
        assert_relative_eq!(k.eta, 1e-4, max_relative = 1e-12);
        assert_relative_eq!(k.tau, 1e-2, max_relative = 1e-12);
    }

    #[test]
    fn median_skips_non_finite_values() {
        assert_eq!(median(vec![]), None);
        let m = median(vec![3.0, f64::NAN, 1.0, 2.0, 10.0]).unwrap();
        assert_relative_eq!(m, 2.5, epsilon = 1e-15);
    }
}
