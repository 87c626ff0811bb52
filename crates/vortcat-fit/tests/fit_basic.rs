//! Cross-module tests: exact recovery on clean data, awkward inputs, flags, serialisation.

mod common;

use approx::assert_relative_eq;
use common::*;
use vortcat_fit::*;

const H: f64 = 0.1;

fn clean_fit<M: VortexModel>(model: &M, params: Vec<f64>, settings: &FitSettings) -> FitResult {
    let truth = Truth {
        centre: [0.03, -0.05],
        convection: [0.2, -0.1],
        params,
    };
    let s = grid_samples(model, &truth, H, 2.0, 0.0, None, &mut rng(1));
    let w = window_of(&s, [0.0, 0.0], 1.5, H);
    fit(model, &w, &InitialGuess::at([0.0, 0.0]), settings).unwrap()
}

/// Noise-free data of each model are reproduced to solver precision (a fit of the exact
/// model must return the generating parameters: a fact of least squares).
#[test]
fn clean_data_recovered_for_every_model() {
    let s = FitSettings::default();
    let cases: Vec<(Model, Vec<f64>)> = vec![
        (Model::LambOseen(LambOseen), vec![1.0, 0.4]),
        (Model::Burgers(Burgers::free()), vec![1.0, 0.4, 0.8]),
        (Model::Burgers(Burgers::imposed(0.02)), vec![1.0, 0.4]),
        (Model::Rankine(Rankine), vec![-1.0, 0.45]),
        (Model::Vatistas(Vatistas::fitted()), vec![1.0, 0.45, 1.7]),
        (Model::Vatistas(Vatistas::fixed(2.0)), vec![1.0, 0.45]),
    ];
    for (model, p) in cases {
        let r = match &model {
            Model::LambOseen(m) => clean_fit(m, p.clone(), &s),
            Model::Burgers(m) => clean_fit(m, p.clone(), &s),
            Model::Rankine(m) => clean_fit(m, p.clone(), &s),
            Model::Vatistas(m) => clean_fit(m, p.clone(), &s),
        };
        assert_eq!(r.status, FitStatus::Converged, "{model:?}: {r:?}");
        // Rankine's kink at r = rc makes its cost non-smooth; 1e-6 there, 1e-8 elsewhere.
        let tol = if model.kind() == ModelKind::Rankine {
            1e-6
        } else {
            1e-8
        };
        for (k, &pk) in p.iter().enumerate() {
            assert_relative_eq!(r.parameters.model[k], pk, max_relative = tol);
        }
        assert_relative_eq!(r.parameters.centre[0], 0.03, epsilon = tol);
        assert_relative_eq!(r.parameters.centre[1], -0.05, epsilon = tol);
        assert_relative_eq!(r.parameters.convection[0], 0.2, epsilon = tol);
        assert!(r.r_squared > 1.0 - 1e-10, "{model:?} R² {}", r.r_squared);
        assert!(
            r.iterations < 50,
            "{model:?} took {} iterations",
            r.iterations
        );
    }
}

/// Background gradient: a Lamb–Oseen vortex in a uniform trace-free strain + rotation is
/// recovered when the gradient is fitted.
#[test]
fn background_gradient_recovered() {
    let (e1, e2, om) = (0.3, -0.2, 0.5);
    let truth = Truth {
        centre: [0.02, 0.01],
        convection: [0.0, 0.0],
        params: vec![1.0, 0.4],
    };
    let mut s = grid_samples(&LambOseen, &truth, H, 2.0, 0.0, None, &mut rng(2));
    for i in 0..s.0.len() {
        let (dx, dy) = (s.0[i] - 0.02, s.1[i] - 0.01);
        s.2[i] += e1 * dx + (e2 - 0.5 * om) * dy;
        s.3[i] += (e2 + 0.5 * om) * dx - e1 * dy;
    }
    let w = window_of(&s, [0.0, 0.0], 1.5, H);
    let set = FitSettings::builder()
        .background_gradient(true)
        .build()
        .unwrap();
    let r = fit(&LambOseen, &w, &InitialGuess::at([0.0, 0.0]), &set).unwrap();
    assert_eq!(r.status, FitStatus::Converged);
    let b = r.parameters.background.unwrap();
    for (got, want) in b.iter().zip([e1, e2, om]) {
        assert_relative_eq!(*got, want, epsilon = 1e-8);
    }
    assert_relative_eq!(r.circulation(), 1.0, max_relative = 1e-8);
    assert_eq!(r.parameter_names.last().unwrap(), "bg_vorticity");
}

/// All-zero velocity: no error, no panic; zero circulation, a degenerate status and the
/// singular-covariance flag.
#[test]
fn all_zero_velocity_is_degenerate_not_error() {
    let x: Vec<f64> = (0..400).map(|i| (i % 20) as f64 * H - 1.0).collect();
    let y: Vec<f64> = (0..400).map(|i| (i / 20) as f64 * H - 1.0).collect();
    let z = vec![0.0; 400];
    let w = Window::from_samples([0.0, 0.0], 1.0, [H, H], &x, &y, &z, &z).unwrap();
    let r = fit(
        &LambOseen,
        &w,
        &InitialGuess::at([0.0, 0.0]),
        &FitSettings::default(),
    )
    .unwrap();
    assert_eq!(r.status, FitStatus::Degenerate);
    assert!(r.circulation().abs() < 1e-12);
    assert!(r.has_flag(Flag::SingularCovariance));
    assert!(
        r.has_flag(Flag::LowRSquared),
        "R² is undefined (NaN) for TSS = 0"
    );
    let json = serde_json::to_string(&r).unwrap();
    assert!(json.contains("\"status\":\"degenerate\""));
    // NaN standard errors are written as null and read back as NaN.
    let back: FitResult = serde_json::from_str(&json).unwrap();
    assert!(back.standard_errors.model[1].is_nan());
    assert_eq!(back.status, FitStatus::Degenerate);
}

#[test]
fn too_few_vectors_is_an_error() {
    let x = [0.0, 0.1, 0.2, 0.0, 0.1];
    let y = [0.0, 0.0, 0.0, 0.1, 0.1];
    let u = [0.1, 0.2, 0.3, 0.4, 0.5];
    let w = Window::from_samples([0.0, 0.0], 1.0, [H, H], &x, &y, &u, &u).unwrap();
    let e = fit(
        &Burgers::free(),
        &w,
        &InitialGuess::at([0.0, 0.0]),
        &FitSettings::default(),
    )
    .unwrap_err();
    assert_eq!(
        e,
        FitError::TooFewSamples {
            have: 5,
            need: 10,
            parameters: 7
        }
    );
}

/// NaN vectors are dropped and counted (the `vortcat-field` masking convention); the fit of the
/// rest is unchanged in quality, and 10 % NaN raises the invalid-vector flag.
#[test]
fn nan_samples_are_masked_and_flagged() {
    let truth = Truth {
        centre: [0.0, 0.0],
        convection: [0.0, 0.0],
        params: vec![1.0, 0.4],
    };
    let mut s = grid_samples(&LambOseen, &truth, H, 2.0, 0.0, None, &mut rng(3));
    let mut k = 0;
    for i in (0..s.2.len()).step_by(10) {
        s.2[i] = f64::NAN;
        k += 1;
    }
    let w = window_of(&s, [0.0, 0.0], 1.5, H);
    assert!(w.invalid_count() > 0 && w.invalid_count() < k);
    let r = fit(
        &LambOseen,
        &w,
        &InitialGuess::at([0.0, 0.0]),
        &FitSettings::default(),
    )
    .unwrap();
    assert_relative_eq!(r.core_radius(), 0.4, max_relative = 1e-8);
    assert!(r.has_flag(Flag::WindowInvalidVectors));
    assert!(r.parameters.to_vec().iter().all(|v| v.is_finite()));
}

/// A window clipped by the domain edge: built from a PlaneField with the vortex near the
/// boundary; the fit still recovers the vortex (the model does not need symmetry) and the
/// clipping flag is raised.
#[test]
fn window_clipped_by_domain_edge() {
    use ndarray::Array2;
    use vortcat_field::{Axis, Grid, PlaneField, Units};
    let (nx, ny) = (40usize, 30usize);
    let grid = Grid::plane(
        Axis::new("x", nx, 0.0, H).unwrap(),
        Axis::new("y", ny, 0.0, H).unwrap(),
        Units::default(),
    );
    let centre = [0.5, 1.5];
    let (mut u, mut v) = (Array2::zeros((ny, nx)), Array2::zeros((ny, nx)));
    for j in 0..ny {
        for i in 0..nx {
            let (x, y) = (grid.x().coordinate(i as f64), grid.y().coordinate(j as f64));
            let q = LambOseen.velocity(x - centre[0], y - centre[1], &[1.0, 0.3]);
            u[[j, i]] = q[0];
            v[[j, i]] = q[1];
        }
    }
    let field = PlaneField::new(grid, u, v, None, None).unwrap();
    let w = Window::from_plane(&field, centre, 1.0).unwrap();
    // Circle of radius 1 with its centre 0.5 from the edge: the segment outside is
    // (acos(0.5) − 0.5·√0.75)/π = 19.6 % of the disc (geometry); the grid count is close.
    assert!(
        (0.14..0.22).contains(&w.outside_fraction()),
        "{}",
        w.outside_fraction()
    );
    let r = fit(
        &LambOseen,
        &w,
        &InitialGuess::at(centre),
        &FitSettings::default(),
    )
    .unwrap();
    assert!(r.has_flag(Flag::WindowClippedByEdge));
    assert_relative_eq!(r.core_radius(), 0.3, max_relative = 1e-7);
    assert_relative_eq!(r.circulation(), 1.0, max_relative = 1e-7);
}

/// Not converged within the iteration cap: a result with status and flag, not an error.
#[test]
fn iteration_cap_gives_status_not_error() {
    let truth = Truth {
        centre: [0.1, 0.1],
        convection: [0.0, 0.0],
        params: vec![1.0, 0.4],
    };
    let s = grid_samples(&LambOseen, &truth, H, 2.0, 0.0, None, &mut rng(4));
    let w = window_of(&s, [0.0, 0.0], 1.5, H);
    let set = FitSettings::builder().max_iterations(1).build().unwrap();
    let g = InitialGuess {
        centre: [-0.2, 0.2],
        circulation: CirculationGuess::FromData,
        core_radius: Some(0.8),
    };
    let r = fit(&LambOseen, &w, &g, &set).unwrap();
    assert_eq!(r.status, FitStatus::MaxIterations);
    assert_eq!(r.iterations, 1);
    assert!(r.has_flag(Flag::NotConverged));
}

/// Flags about the surroundings: a neighbour inside the window, a core under two spacings, a
/// centre far from the detection.
#[test]
fn neighbour_resolution_and_centre_flags() {
    let truth = Truth {
        centre: [0.25, 0.0],
        convection: [0.0, 0.0],
        params: vec![1.0, 0.15],
    };
    let s = grid_samples(&LambOseen, &truth, H, 2.0, 0.0, None, &mut rng(5));
    let w =
        window_of(&s, [0.0, 0.0], 1.5, H).with_neighbours(&[[0.0, 0.0], [1.0, 0.5], [3.0, 3.0]]);
    let r = fit(
        &LambOseen,
        &w,
        &InitialGuess::at([0.0, 0.0]),
        &FitSettings::default(),
    )
    .unwrap();
    assert_relative_eq!(r.core_radius(), 0.15, max_relative = 1e-6);
    assert!(
        r.has_flag(Flag::NeighbourInWindow),
        "[1, 0.5] is inside, [0, 0] is the candidate"
    );
    assert!(r.has_flag(Flag::CoreUnderResolved), "rc = 1.5 spacings");
    assert!(r.has_flag(Flag::CentreMoved), "moved 0.25 > rc = 0.15");
}

/// Robust loss: 5 % of vectors replaced by wild outliers (typical PIV spurious vectors) bias the
/// plain fit; soft-L1 and Huber recover rc within 2 %.
#[test]
fn robust_loss_resists_outliers() {
    use rand::Rng;
    let truth = Truth {
        centre: [0.0, 0.0],
        convection: [0.0, 0.0],
        params: vec![1.0, 0.4],
    };
    let vp = gaussian_peak(1.0, 0.4);
    let mut r0 = rng(6);
    let mut s = grid_samples(&LambOseen, &truth, H, 2.0, 0.02 * vp, None, &mut r0);
    for i in 0..s.2.len() {
        if r0.gen_bool(0.05) {
            s.2[i] = r0.gen_range(-2.0..2.0) * vp;
            s.3[i] = r0.gen_range(-2.0..2.0) * vp;
        }
    }
    let w = window_of(&s, [0.0, 0.0], 1.5, H);
    let g = InitialGuess::at([0.0, 0.0]);
    let plain = fit(&LambOseen, &w, &g, &FitSettings::default()).unwrap();
    for loss in [
        Loss::SoftL1 { scale: 0.06 * vp },
        Loss::Huber { scale: 0.06 * vp },
    ] {
        let set = FitSettings::builder().loss(loss).build().unwrap();
        let r = fit(&LambOseen, &w, &g, &set).unwrap();
        assert_eq!(r.status, FitStatus::Converged);
        let err = (r.core_radius() / 0.4 - 1.0).abs();
        let err_plain = (plain.core_radius() / 0.4 - 1.0).abs();
        assert!(err < 0.02, "{loss:?}: {err}");
        assert!(err < err_plain, "robust {err} vs plain {err_plain}");
    }
}

#[test]
fn names_parse_and_results_serialise() {
    for k in ModelKind::ALL {
        assert_eq!(k.name().parse::<ModelKind>().unwrap(), k);
    }
    assert_eq!(
        "Lamb_Oseen".parse::<ModelKind>().unwrap(),
        ModelKind::LambOseen
    );
    assert!(matches!(
        "oseen-lamb".parse::<ModelKind>(),
        Err(FitError::UnknownModel(_))
    ));
    let r = clean_fit(
        &Burgers::free(),
        vec![1.0, 0.4, 0.5],
        &FitSettings::default(),
    );
    let json = serde_json::to_string(&r).unwrap();
    let back: FitResult = serde_json::from_str(&json).unwrap();
    assert_eq!(back.model, ModelKind::Burgers);
    assert_eq!(back.parameter_names, r.parameter_names);
    assert!(json.contains("\"model\":\"burgers\""));
    let est = r.estimate("strain_rate").unwrap();
    assert_relative_eq!(est.value, 0.5, max_relative = 1e-8);
}

/// Derived quantities: peak velocity 0.63817 Γ/(2π rc) at 1.12091 rc (Lamb 1932), Γ/ν, and for
/// Burgers with γ = 4ν/rc² (Burgers 1948) a viscosity ratio of 1.
#[test]
fn derived_quantities() {
    let nu = 0.01;
    let (gamma, rc) = (1.0, 0.4);
    let strain = 4.0 * nu / (rc * rc);
    let set = FitSettings::builder().viscosity(Some(nu)).build().unwrap();
    let r = clean_fit(&Burgers::free(), vec![gamma, rc, strain], &set);
    let d = &r.derived;
    assert_relative_eq!(d.peak_radius, 1.12091 * rc, max_relative = 1e-5);
    assert_relative_eq!(
        d.peak_azimuthal_velocity,
        0.63817 * gamma / (2.0 * std::f64::consts::PI * rc),
        max_relative = 1e-5
    );
    assert_relative_eq!(
        d.circulation_reynolds.unwrap(),
        gamma / nu,
        max_relative = 1e-8
    );
    assert_relative_eq!(d.strain_rate_inflow.unwrap(), strain, max_relative = 1e-7);
    assert_relative_eq!(
        d.strain_rate_from_radius.unwrap(),
        strain,
        max_relative = 1e-7
    );
    assert_relative_eq!(d.viscosity_ratio.unwrap(), 1.0, max_relative = 1e-7);
    assert_relative_eq!(d.effective_viscosity.unwrap(), nu, max_relative = 1e-7);
}

/// Skipping the condition number changes nothing else of a fit: it is a diagnostic only.
#[test]
fn skipping_the_condition_number_changes_only_that_field() {
    let with = FitSettings::default();
    let without = FitSettings::builder()
        .compute_condition_number(false)
        .build()
        .unwrap();
    for model in [Model::LambOseen(LambOseen), Model::Burgers(Burgers::free())] {
        let (a, b) = match &model {
            Model::Burgers(m) => (
                clean_fit(m, vec![1.0, 0.4, 0.8], &with),
                clean_fit(m, vec![1.0, 0.4, 0.8], &without),
            ),
            Model::LambOseen(m) => (
                clean_fit(m, vec![1.0, 0.4], &with),
                clean_fit(m, vec![1.0, 0.4], &without),
            ),
            _ => unreachable!(),
        };
        // Scaled to unit diagonal, a well-posed fit of a few parameters is conditioned far
        // from 1/ε; at least 1 by definition.
        assert!(
            a.condition_number >= 1.0 && a.condition_number < 1e8,
            "{}",
            a.condition_number
        );
        assert!(b.condition_number.is_nan());
        let mut b = b;
        b.condition_number = a.condition_number;
        // Every other field bit for bit (the JSON of f64 round-trips exactly).
        assert_eq!(
            serde_json::to_string(&a).unwrap(),
            serde_json::to_string(&b).unwrap(),
            "{model:?}"
        );
    }
}
