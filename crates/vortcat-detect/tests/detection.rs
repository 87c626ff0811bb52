//! Candidate detection end to end: a synthetic PIV-like field with 30 vortices, noise and
//! missing vectors; vortex pairs; awkward inputs; determinism.

mod common;

use std::f64::consts::PI;

use approx::{assert_abs_diff_eq, assert_relative_eq};
use common::{centred_plane, lamb_oseen, plane};
use ndarray::Array2;
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use vortcat_detect::{
    detect_plane, detect_plane_report, CandidateFlag, Criterion, DetectError, DetectionSettings,
    PlaneCandidate, SplitSettings, Threshold,
};
use vortcat_field::{Axis, Grid, PlaneField, Units};

/// Truth of one synthetic vortex (grid units).
#[derive(Debug, Clone, Copy)]
struct Truth {
    x: f64,
    y: f64,
    rc: f64,
    circ: f64,
}

/// 6 × 5 vortices on 56-spacing cells (336 × 280 vectors, spacing 1), core radii uniform in
/// [2, 8] spacings, random sense, centres jittered ±10 spacings, every vortex with the same
/// peak swirl velocity U0 = 1 (Γ = 2π r_c U0 / 0.6382, the Lamb–Oseen maximum u_θ being
/// 0.6382 Γ/(2π r_c), a textbook value quoted from memory). Gaussian noise of 5 % of U0 on each
/// component, 2 % of vectors removed at random.
fn thirty_vortices(seed: u64) -> (PlaneField, Vec<Truth>) {
    let mut rng = StdRng::seed_from_u64(seed);
    let (cols, rows, cell) = (6usize, 5usize, 56.0);
    let (nx, ny) = (cols * cell as usize, rows * cell as usize);
    let mut truth = Vec::new();
    for j in 0..rows {
        for i in 0..cols {
            let rc = rng.gen_range(2.0..=8.0);
            let sign = if rng.gen_bool(0.5) { 1.0 } else { -1.0 };
            truth.push(Truth {
                x: (i as f64 + 0.5) * cell + rng.gen_range(-10.0..10.0),
                y: (j as f64 + 0.5) * cell + rng.gen_range(-10.0..10.0),
                rc,
                circ: sign * 2.0 * PI * rc / 0.6382,
            });
        }
    }
    let noise = Normal::new(0.0, 0.05).unwrap();
    let mut u = Array2::zeros((ny, nx));
    let mut v = Array2::zeros((ny, nx));
    for iy in 0..ny {
        for ix in 0..nx {
            let (mut a, mut b) = (0.0, 0.0);
            for t in &truth {
                let (du, dv) = lamb_oseen(ix as f64 - t.x, iy as f64 - t.y, t.circ, t.rc);
                a += du;
                b += dv;
            }
            u[[iy, ix]] = a + noise.sample(&mut rng);
            v[[iy, ix]] = b + noise.sample(&mut rng);
        }
    }
    for _ in 0..(nx * ny) / 50 {
        let (iy, ix) = (rng.gen_range(0..ny), rng.gen_range(0..nx));
        u[[iy, ix]] = f64::NAN;
    }
    let grid = Grid::plane(
        Axis::new("x", nx, 0.0, 1.0).unwrap(),
        Axis::new("y", ny, 0.0, 1.0).unwrap(),
        Units::default(),
    );
    (PlaneField::new(grid, u, v, None, None).unwrap(), truth)
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

#[test]
fn thirty_noisy_vortices_with_missing_vectors_are_all_found_and_nothing_else() {
    // Issue acceptance test: every vortex found, median centre error < 0.3 spacing, no spurious
    // candidate above the default threshold (default settings: λci, least squares, 1.5 × rms).
    for seed in [1u64, 2] {
        let (field, truth) = thirty_vortices(seed);
        // 2 % drawn with replacement: repeated draws (≈ 1 % of them) leave slightly fewer.
        assert_abs_diff_eq!(field.invalid_fraction(), 0.02, epsilon = 0.002);
        let found = detect_plane(&field, &DetectionSettings::default()).unwrap();
        assert_eq!(found.len(), 30, "seed {seed}: {} candidates", found.len());
        let mut err_peak = Vec::new();
        let mut err_centroid = Vec::new();
        let mut used = vec![false; found.len()];
        for t in &truth {
            // Match to the nearest candidate peak; it must lie within the core radius.
            let (k, d) = found
                .iter()
                .enumerate()
                .map(|(k, c)| (k, (c.peak[0] - t.x).hypot(c.peak[1] - t.y)))
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .unwrap();
            assert!(
                d < t.rc,
                "seed {seed}: vortex at ({:.1}, {:.1}) missed (nearest {d:.2})",
                t.x,
                t.y
            );
            assert!(!used[k], "seed {seed}: candidate {k} matched twice");
            used[k] = true;
            let c = &found[k];
            let want: i8 = if t.circ > 0.0 { 1 } else { -1 };
            assert_eq!(
                c.sense, want,
                "seed {seed}: wrong sense at ({}, {})",
                t.x, t.y
            );
            err_peak.push(d);
            err_centroid.push((c.centroid[0] - t.x).hypot(c.centroid[1] - t.y));
            // Equivalent radius of the λci > 1.5·rms region is of the order of r_c (loose
            // physical sanity bound, our own).
            assert!(
                c.equivalent_radius > 0.4 * t.rc && c.equivalent_radius < 2.0 * t.rc,
                "{c:?} vs {t:?}"
            );
        }
        // Noise must not split a single vortex (the split rule's saddle ratio and size bound).
        assert!(
            found
                .iter()
                .all(|c| !c.flags.contains(&CandidateFlag::Split)),
            "seed {seed}: a noisy vortex was split"
        );
        let (mp, mc) = (median(err_peak), median(err_centroid));
        assert!(mp < 0.3, "seed {seed}: median peak error {mp}");
        assert!(mc < 0.3, "seed {seed}: median centroid error {mc}");
    }
}

#[test]
fn results_do_not_depend_on_the_thread_count() {
    let (field, _) = thirty_vortices(7);
    let s = DetectionSettings::default();
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let three = rayon::ThreadPoolBuilder::new()
        .num_threads(3)
        .build()
        .unwrap();
    let a = one.install(|| detect_plane(&field, &s).unwrap());
    let b = three.install(|| detect_plane(&field, &s).unwrap());
    assert_eq!(a, b);
    // Raster order of the first cell.
    let firsts: Vec<[usize; 2]> = a.iter().map(|c| c.region[0]).collect();
    let mut sorted = firsts.clone();
    sorted.sort();
    assert_eq!(firsts, sorted);
    assert!(a.iter().enumerate().all(|(k, c)| c.id == k));
}

fn pair_field(separation: f64) -> PlaneField {
    // Two co-rotating Lamb–Oseen vortices, r_c = 4, on a 96 × 64 grid.
    plane(96, 64, 0.0, 0.0, 1.0, 1.0, |x, y| {
        let (a, b) = lamb_oseen(x - 48.0 + separation / 2.0, y - 32.0, 50.0, 4.0);
        let (c, d) = lamb_oseen(x - 48.0 - separation / 2.0, y - 32.0, 50.0, 4.0);
        (a + c, b + d)
    })
}

#[test]
fn a_vortex_pair_in_one_region_is_split_at_its_saddle() {
    // Vorticity of two co-rotating Lamb–Oseen vortices 3 r_c apart (superposition of the
    // closed form ω = Γ/(π r_c²) exp(−r²/r_c²)): the midpoint value is 2 exp(−2.25) ≈ 0.21 of the
    // centre value, so above 10 % of the peak the pair is one connected region with a saddle
    // far below half of either peak: split into two. (λci needs no splitting at this distance:
    // the flow at the midpoint is strain-dominated and λci = 0 there, so the pair is already two
    // regions; checked below.)
    let f = pair_field(12.0);
    let w0 = 50.0 / (PI * 16.0);
    let base = DetectionSettings::builder()
        .criterion(Criterion::Vorticity)
        .threshold(Threshold::Absolute(0.1 * w0));
    let one = detect_plane(&f, &base.clone().split(None).build().unwrap()).unwrap();
    assert_eq!(
        one.len(),
        1,
        "the pair must be one connected region for this test"
    );
    let two = detect_plane(&f, &base.clone().build().unwrap()).unwrap();
    assert_eq!(two.len(), 2);
    for (c, want_x) in two.iter().zip([42.0, 54.0]) {
        assert!(c.flags.contains(&CandidateFlag::Split));
        // Mutual induction shifts the vorticity maxima slightly; 0.5 spacing is our tolerance.
        assert_abs_diff_eq!(c.peak[0], want_x, epsilon = 0.5);
        // Symmetric about y = 32: only rounding and fit error across the axis.
        assert_abs_diff_eq!(c.peak[1], 32.0, epsilon = 0.1);
        assert_eq!(c.sense, 1);
    }
    assert_eq!(one[0].cells, two[0].cells + two[1].cells);
    // 1.75 r_c apart the midpoint vorticity is 0.88 of the peak (same closed form, our
    // numerical evaluation): the cores have merged into one vortex, no split.
    let merged = detect_plane(&pair_field(7.0), &base.clone().build().unwrap()).unwrap();
    assert_eq!(merged.len(), 1);
    assert!(!merged[0].flags.contains(&CandidateFlag::Split));
    // λci separates the 3 r_c pair by itself.
    let lci = DetectionSettings::builder()
        .threshold(Threshold::Absolute(0.1 * w0 / 2.0))
        .split(None)
        .build()
        .unwrap();
    assert_eq!(detect_plane(&f, &lci).unwrap().len(), 2);
}

#[test]
fn every_criterion_finds_a_single_vortex() {
    // A clockwise Lamb–Oseen vortex off-grid at (0.3, −0.2) spacings: each criterion with its
    // default threshold yields exactly one candidate near the centre with sense −1.
    let f = centred_plane(65, 1.0, |x, y| lamb_oseen(x - 0.3, y + 0.2, -60.0, 5.0));
    for crit in Criterion::ALL {
        let s = DetectionSettings::builder()
            .criterion(crit)
            .build()
            .unwrap();
        let found = detect_plane(&f, &s).unwrap();
        assert_eq!(found.len(), 1, "{crit}: {found:#?}");
        let c = &found[0];
        assert_eq!(c.sense, -1, "{crit}");
        // Γ1's maximum is a discrete-neighbourhood estimate: 0.5 spacing; derivative criteria
        // are symmetric quadratic peaks: 0.15 spacing (our tolerances).
        let tol = if crit == Criterion::Gamma1 || crit == Criterion::Gamma2 {
            0.5
        } else {
            0.15
        };
        assert_abs_diff_eq!(c.peak[0], 0.3, epsilon = tol);
        assert_abs_diff_eq!(c.peak[1], -0.2, epsilon = tol);
        assert_abs_diff_eq!(c.centroid[0], 0.3, epsilon = tol);
        assert_abs_diff_eq!(c.centroid[1], -0.2, epsilon = tol);
        assert_eq!(c.invalid_distance, None);
        // Edge distance: centroid to the nearest edge at ±32.
        assert_abs_diff_eq!(c.edge_distance, 32.0 - 0.3, epsilon = tol + 1e-9);
        // Area and equivalent radius are consistent (definition).
        // Same formula: rounding only.
        assert_relative_eq!(
            c.equivalent_radius,
            (c.area / PI).sqrt(),
            max_relative = 1e-12
        );
        assert_eq!(c.region.len(), c.cells);
        if crit != Criterion::Gamma1 && crit != Criterion::Gamma2 {
            // λcr/λci = 0 at the centre of a steady 2D vortex (no in-plane divergence).
            // The swirl field is divergence-free; the discrete residual at the peak cell is a
            // truncation error of odd terms that nearly vanish near the centre: below 1e-6.
            assert_abs_diff_eq!(c.inverse_spiralling_ratio.unwrap(), 0.0, epsilon = 1e-6);
        }
    }
}

#[test]
fn masked_vectors_never_leak_nan_and_a_masked_centre_is_still_found() {
    let h = 1.0;
    let base = centred_plane(41, h, |x, y| lamb_oseen(x - 0.25, y, 40.0, 4.0));
    let mut u = base.u().clone();
    let flagged = Array2::from_shape_fn((41, 41), |(iy, ix)| {
        (iy, ix) == (20, 20) || (iy, ix) == (22, 19) || iy == 0
    });
    u[[5, 5]] = f64::NAN;
    let f = PlaneField::new(
        base.grid().clone(),
        u,
        base.v().clone(),
        None,
        Some(&flagged),
    )
    .unwrap();
    let s = DetectionSettings::default();
    let raw = Criterion::SwirlingStrength
        .plane_field(&f, s.scheme(), s.edge_order(), s.gamma_radius())
        .unwrap();
    for ((iy, ix), &x) in raw.indexed_iter() {
        // NaN exactly where the vector is masked: every valid vector here keeps a stencil.
        assert_eq!(x.is_nan(), !f.valid()[[iy, ix]], "[{iy},{ix}]");
    }
    let found = detect_plane(&f, &s).unwrap();
    assert_eq!(found.len(), 1);
    let c = &found[0];
    assert!(c.flags.contains(&CandidateFlag::TouchesInvalid));
    assert!(c.flags.contains(&CandidateFlag::ReducedStencil));
    assert!(
        !c.region.contains(&[20, 20]),
        "a masked cell is never part of a region"
    );
    // The peak cell is a neighbour of the masked centre; the quadratic fit leaves the masked
    // cell out and still locates the peak within 0.1 spacing (our tolerance; the λci profile
    // is smooth and nearly quadratic over the window).
    assert_abs_diff_eq!(c.peak[0], 0.25, epsilon = 0.1);
    assert_abs_diff_eq!(c.peak[1], 0.0, epsilon = 0.1);
    // Nearest masked vector to the centroid: (20,20) is at 0.25 from the true centre.
    assert!(
        c.invalid_distance.unwrap() < 0.6,
        "{:?}",
        c.invalid_distance
    );
}

#[test]
fn all_zero_field_gives_no_candidate() {
    let f = centred_plane(16, 1.0, |_, _| (0.0, 0.0));
    for crit in Criterion::ALL {
        let s = DetectionSettings::builder()
            .criterion(crit)
            .build()
            .unwrap();
        let d = detect_plane_report(&f, &s).unwrap();
        assert!(d.candidates.is_empty(), "{crit}");
    }
    let s = DetectionSettings::builder()
        .threshold(Threshold::Absolute(0.0))
        .build()
        .unwrap();
    assert!(detect_plane(&f, &s).unwrap().is_empty());
}

#[test]
fn tiny_grids() {
    // 1 × N: no derivative along y → typed error naming the axis.
    let f = plane(7, 1, 0.0, 0.0, 1.0, 1.0, |x, _| (x, 0.0));
    assert_eq!(
        detect_plane(&f, &DetectionSettings::default()).unwrap_err(),
        DetectError::AxisTooShort {
            axis: "y",
            len: 1,
            needed: 2
        }
    );
    // 2 × 2 solid-body rotation: one-sided first-order differences are exact on linear data,
    // so λci = Ω at all four points; with an absolute threshold and min size 1 the whole grid
    // is one candidate touching the edge, whose 3×3 peak fit is impossible.
    let om = 2.0;
    let f = plane(2, 2, -0.5, -0.5, 1.0, 1.0, |x, y| (-om * y, om * x));
    let raw = Criterion::SwirlingStrength
        .plane_field(&f, Default::default(), Default::default(), 2)
        .unwrap();
    for &x in raw.iter() {
        // Exact one-sided differences of linear data: rounding only.
        assert_relative_eq!(x, om, max_relative = 1e-12);
    }
    let s = DetectionSettings::builder()
        .threshold(Threshold::Absolute(0.5 * om))
        .min_cells(1)
        .build()
        .unwrap();
    let c = detect_plane(&f, &s).unwrap();
    assert_eq!(c.len(), 1);
    assert_eq!(c[0].cells, 4);
    assert!(c[0].flags.contains(&CandidateFlag::TouchesEdge));
    assert!(c[0].flags.contains(&CandidateFlag::PeakFitFallback));
    // Equal strengths: the centroid is the grid centre.
    assert_abs_diff_eq!(c[0].centroid[0], 0.0, epsilon = 1e-12);
    assert_abs_diff_eq!(c[0].centroid[1], 0.0, epsilon = 1e-12);
    // With defaults the 4 cells are below the 9-cell minimum.
    assert!(detect_plane(
        &f,
        &DetectionSettings::builder()
            .threshold(Threshold::Absolute(0.5 * om))
            .build()
            .unwrap()
    )
    .unwrap()
    .is_empty());
}

#[test]
fn a_vortex_on_the_domain_edge_is_found_and_flagged() {
    // Centre on the left edge (x = 0): half the vortex is outside the field.
    let f = plane(40, 40, 0.0, -19.5, 1.0, 1.0, |x, y| {
        lamb_oseen(x, y, 40.0, 4.0)
    });
    let found: Vec<PlaneCandidate> = detect_plane(&f, &DetectionSettings::default()).unwrap();
    assert_eq!(found.len(), 1);
    let c = &found[0];
    assert!(c.flags.contains(&CandidateFlag::TouchesEdge));
    assert_eq!(c.sense, 1);
    // The centroid is biased inwards but stays within a core radius of the edge.
    assert!(c.edge_distance < 4.0, "{}", c.edge_distance);
    // The maximum lies on the edge, where only one-sided stencils exist; the peak is taken
    // among full-stencil cells (2 cells in for the least-squares stencil), so it is within
    // 2 spacings of the edge, and the fit cannot find an interior maximum: flagged.
    assert!(c.peak[0] <= 2.0, "{:?}", c.peak);
    // Symmetric about y = 0; the per-axis fallback fit is within half a spacing.
    assert_abs_diff_eq!(c.peak[1], 0.0, epsilon = 0.5);
    assert!(c.flags.contains(&CandidateFlag::PeakFitFallback));
}

#[test]
fn split_settings_and_thresholds_are_validated_before_use() {
    assert!(DetectionSettings::builder()
        .split(Some(SplitSettings {
            saddle_ratio: 0.0,
            min_basin_cells: 1
        }))
        .build()
        .is_err());
    // A relative threshold on a field with no computable value is an error, not an empty list.
    let f = plane(3, 3, 0.0, 0.0, 1.0, 1.0, |x, y| (x, y));
    let mut u = f.u().clone();
    for (k, x) in u.iter_mut().enumerate() {
        if k % 2 == 1 {
            *x = f64::NAN; // checkerboard: every valid vector is isolated along both axes
        }
    }
    let f = PlaneField::new(f.grid().clone(), u, f.v().clone(), None, None).unwrap();
    assert!(matches!(
        detect_plane(&f, &DetectionSettings::default()),
        Err(DetectError::NothingComputable { points: 9, .. })
    ));
}
