//! Re-reading snapshots for the report: the criterion map of a plane, and for one vortex the
//! azimuthal and radial velocity profiles of the data round the fitted centre, the fitted
//! model's curves, and the velocity residual in the fitting window.

use std::path::Path;

use ndarray::Array2;
use vortcat_detect::{Criterion, EdgeOrder, GradientScheme};
use vortcat_field::{Axis, Field, InputSpec, PlaneField};
use vortcat_fit::{Burgers, LambOseen, Rankine, Vatistas, VortexModel};

use crate::plot::{BinPoint, Cell};
use crate::survey::{DetectionSection, Vortex};

/// Reads plane snapshot `index` of `file`; errors as one line naming the file.
pub fn read_plane(file: &str, index: usize, spec: &InputSpec) -> Result<PlaneField, String> {
    let mut reader = vortcat_field::open(Path::new(file), spec).map_err(|e| e.to_string())?;
    let snapshot = reader.read(index).map_err(|e| e.to_string())?;
    match snapshot.field {
        Field::Plane(p) => Ok(p),
        Field::Volume(_) => Err(format!(
            "{file}: a volume snapshot (maps are drawn for planes)"
        )),
    }
}

/// What the snapshot map shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum MapField {
    /// The survey's detection criterion.
    #[default]
    Criterion,
    /// The out-of-plane vorticity ω_z.
    Vorticity,
}

/// A scalar field over a plane, ready to colour.
pub struct PlaneMap {
    /// Values `[iy, ix]` (NaN where not computed).
    pub values: Array2<f64>,
    /// Which vectors are valid.
    pub valid: Array2<bool>,
    /// The criterion shown.
    pub criterion: Criterion,
    /// Whether the values are signed (diverging colour map) or a non-negative strength.
    pub signed: bool,
}

/// The field of `which` on `field`, with the survey's gradient scheme. Unsigned criteria are
/// shown as their detection strength clipped at 0 (|ω|, Q, −λ2, λci, Δ where positive).
pub fn plane_map(
    field: &PlaneField,
    detection: &DetectionSection,
    which: MapField,
) -> Result<PlaneMap, String> {
    let criterion = match which {
        MapField::Vorticity => Criterion::Vorticity,
        MapField::Criterion => detection
            .criterion
            .parse::<Criterion>()
            .map_err(|e| e.to_string())?,
    };
    let scheme: GradientScheme = detection.gradient.parse().map_err(|e| format!("{e}"))?;
    let raw = criterion
        .plane_field(field, scheme, EdgeOrder::default(), detection.gamma_radius)
        .map_err(|e| e.to_string())?;
    let signed = criterion.is_signed();
    let values = if signed {
        raw
    } else {
        raw.mapv(|v| criterion.strength(v).max(0.0))
    };
    Ok(PlaneMap {
        values,
        valid: field.valid().clone(),
        criterion,
        signed,
    })
}

/// Nearest grid index of coordinate `c` on `axis`, if inside.
pub fn nearest(axis: &Axis, c: f64) -> Option<usize> {
    let i = axis.index_of(c).round();
    (i >= 0.0 && i < axis.len() as f64).then_some(i as usize)
}

/// The map cell at `(x, y)`.
pub fn map_cell(field: &PlaneField, map: &PlaneMap, x: f64, y: f64) -> Cell {
    let g = field.grid();
    match (nearest(g.x(), x), nearest(g.y(), y)) {
        (Some(ix), Some(iy)) => {
            if !map.valid[[iy, ix]] {
                Cell::Invalid
            } else {
                let v = map.values[[iy, ix]];
                if v.is_finite() {
                    Cell::Value(v)
                } else {
                    Cell::NotComputed
                }
            }
        }
        _ => Cell::Outside,
    }
}

#[derive(Debug, Clone, Copy)]
enum Kind {
    LambOseen,
    Burgers(Burgers),
    Rankine,
    Vatistas(Vatistas),
}

/// The fitted model of a catalog row, evaluated from its catalog parameters.
#[derive(Debug, Clone)]
pub struct FittedModel {
    kind: Kind,
    p: Vec<f64>,
    /// Centre.
    pub centre: [f64; 2],
    /// Convection velocity.
    pub convection: [f64; 2],
    /// Vatistas exponent recovered from the peak velocity (Vatistas only).
    pub exponent: Option<f64>,
}

impl FittedModel {
    /// The model of row `v`; `None` when it was not fitted or a parameter is missing.
    ///
    /// The catalog does not hold the Vatistas exponent n; it is recovered from the peak
    /// velocity, `u_θ,max = 2^(−1/n) Γ/(2π rc)` (Vatistas, Kozel & Mih 1991), i.e.
    /// `n = −ln 2 / ln(2π rc u_θ,max / Γ)`, clamped to the fitted range [1, 10].
    pub fn from_vortex(v: &Vortex) -> Option<Self> {
        let (g, rc) = (v.circulation?, v.core_radius?);
        let centre = [v.x?, v.y?];
        let convection = [v.conv_u.unwrap_or(0.0), v.conv_v.unwrap_or(0.0)];
        let mut exponent = None;
        let (kind, p) = match v.model.as_str() {
            "lamb-oseen" => (Kind::LambOseen, vec![g, rc]),
            "burgers" => {
                let gamma = v.strain_rate.or(v.strain_rate_viscous).unwrap_or(0.0);
                (Kind::Burgers(Burgers::free()), vec![g, rc, gamma])
            }
            "rankine" => (Kind::Rankine, vec![g, rc]),
            "vatistas" => {
                let ratio = v.peak_velocity.map(|u| {
                    (2.0 * std::f64::consts::PI * rc * u.abs() / g.abs()).clamp(1e-12, 1.0)
                });
                let n = ratio
                    .map(|q| -std::f64::consts::LN_2 / q.ln())
                    .filter(|n| n.is_finite())
                    .unwrap_or(2.0)
                    .clamp(1.0, 10.0);
                exponent = Some(n);
                (Kind::Vatistas(Vatistas::fixed(n)), vec![g, rc])
            }
            _ => return None,
        };
        Some(FittedModel {
            kind,
            p,
            centre,
            convection,
            exponent,
        })
    }

    /// Model velocity (without convection) at offset `(dx, dy)` from the centre.
    pub fn velocity(&self, dx: f64, dy: f64) -> [f64; 2] {
        match &self.kind {
            Kind::LambOseen => LambOseen.velocity(dx, dy, &self.p),
            Kind::Burgers(m) => m.velocity(dx, dy, &self.p),
            Kind::Rankine => Rankine.velocity(dx, dy, &self.p),
            Kind::Vatistas(m) => m.velocity(dx, dy, &self.p),
        }
    }

    /// Azimuthal velocity at radius `r` (positive counter-clockwise).
    pub fn u_theta(&self, r: f64) -> f64 {
        self.velocity(r, 0.0)[1]
    }

    /// Radial velocity at radius `r` (positive outwards).
    pub fn u_r(&self, r: f64) -> f64 {
        self.velocity(r, 0.0)[0]
    }

    /// Whether the model has a radial velocity (Burgers).
    pub fn has_inflow(&self) -> bool {
        matches!(self.kind, Kind::Burgers(_))
    }
}

/// The data round one vortex.
pub struct Neighbourhood {
    /// Centre used (fitted, else detected).
    pub centre: [f64; 2],
    /// Window radius.
    pub radius: f64,
    /// Azimuthal velocity of the data minus the convection velocity, binned in r.
    pub u_theta: Vec<BinPoint>,
    /// Radial velocity, binned in r.
    pub u_r: Vec<BinPoint>,
    /// |data − (model + convection)| on the crop (NaN outside the window or invalid).
    pub residual: Array2<f64>,
    /// Validity on the crop.
    pub valid: Array2<bool>,
    /// Crop: first x index and first y index on the grid.
    pub offset: [usize; 2],
    /// Grid x axis.
    pub x_axis: Axis,
    /// Grid y axis.
    pub y_axis: Axis,
    /// RMS over both components of the residual in the window, recomputed here.
    pub residual_rms: f64,
    /// Valid vectors in the window.
    pub n_points: usize,
}

fn bins(samples: &[(f64, f64)], width: f64, radius: f64) -> Vec<BinPoint> {
    let n = ((radius / width).ceil() as usize).max(1);
    let mut acc = vec![(0usize, 0.0f64, 0.0f64); n];
    for &(r, v) in samples {
        let k = ((r / width) as usize).min(n - 1);
        acc[k].0 += 1;
        acc[k].1 += v;
        acc[k].2 += v * v;
    }
    acc.iter()
        .enumerate()
        .filter(|(_, a)| a.0 > 0)
        .map(|(k, &(c, s, s2))| {
            let mean = s / c as f64;
            let var = if c > 1 {
                ((s2 - c as f64 * mean * mean) / (c - 1) as f64).max(0.0)
            } else {
                0.0
            };
            BinPoint {
                x: (k as f64 + 0.5) * width,
                mean,
                std: var.sqrt(),
                n: c,
            }
        })
        .collect()
}

/// The data round vortex `v` in `field`: profiles in bins one grid spacing wide, and the
/// residual against `model` (when fitted) inside the fitting window.
pub fn neighbourhood(
    field: &PlaneField,
    v: &Vortex,
    model: Option<&FittedModel>,
) -> Option<Neighbourhood> {
    let centre = match model {
        Some(m) => m.centre,
        None => [v.x.or(v.detect_x)?, v.y.or(v.detect_y)?],
    };
    let g = field.grid();
    let (xa, ya) = (g.x(), g.y());
    let h = xa.spacing().abs().max(ya.spacing().abs());
    let radius = v
        .window_radius
        .or(v.equivalent_radius.map(|r| 3.0 * r))
        .filter(|r| r.is_finite() && *r > 0.0)
        .unwrap_or(5.0 * h);
    let span = 1.15 * radius;
    let idx = |a: &Axis, lo: f64, hi: f64| {
        let (i0, i1) = (a.index_of(lo), a.index_of(hi));
        let (i0, i1) = (i0.min(i1).floor().max(0.0), i0.max(i1).ceil());
        let last = (a.len() - 1) as f64;
        (i0.min(last) as usize, i1.min(last).max(0.0) as usize)
    };
    let (ix0, ix1) = idx(xa, centre[0] - span, centre[0] + span);
    let (iy0, iy1) = idx(ya, centre[1] - span, centre[1] + span);
    let (nx, ny) = (ix1 + 1 - ix0, iy1 + 1 - iy0);
    let mut residual = Array2::from_elem((ny, nx), f64::NAN);
    let mut valid = Array2::from_elem((ny, nx), true);
    let conv = model.map_or([0.0, 0.0], |m| m.convection);
    let (mut ut, mut ur) = (Vec::new(), Vec::new());
    let (mut sum2, mut n) = (0.0, 0usize);
    for iy in iy0..=iy1 {
        for ix in ix0..=ix1 {
            let ok = field.valid()[[iy, ix]];
            valid[[iy - iy0, ix - ix0]] = ok;
            let dx = xa.coordinate(ix as f64) - centre[0];
            let dy = ya.coordinate(iy as f64) - centre[1];
            let r = dx.hypot(dy);
            if !ok || r > radius {
                continue;
            }
            let (u, w) = (field.u()[[iy, ix]], field.v()[[iy, ix]]);
            let (u0, v0) = (u - conv[0], w - conv[1]);
            if r > 0.0 {
                ut.push((r, (-dy * u0 + dx * v0) / r));
                ur.push((r, (dx * u0 + dy * v0) / r));
            }
            n += 1;
            if let Some(m) = model {
                let [mu, mv] = m.velocity(dx, dy);
                let (eu, ev) = (u0 - mu, v0 - mv);
                residual[[iy - iy0, ix - ix0]] = eu.hypot(ev);
                sum2 += eu * eu + ev * ev;
            }
        }
    }
    Some(Neighbourhood {
        centre,
        radius,
        u_theta: bins(&ut, h, radius),
        u_r: bins(&ur, h, radius),
        residual,
        valid,
        offset: [ix0, iy0],
        x_axis: *xa,
        y_axis: *ya,
        // Both components count, as in the catalog's residual_rms.
        residual_rms: if n > 0 && model.is_some() {
            (sum2 / (2 * n) as f64).sqrt()
        } else {
            f64::NAN
        },
        n_points: n,
    })
}

impl Neighbourhood {
    /// The residual-map cell at `(x, y)`.
    pub fn cell(&self, x: f64, y: f64) -> Cell {
        let (Some(ix), Some(iy)) = (nearest(&self.x_axis, x), nearest(&self.y_axis, y)) else {
            return Cell::Outside;
        };
        let (Some(jx), Some(jy)) = (
            ix.checked_sub(self.offset[0]),
            iy.checked_sub(self.offset[1]),
        ) else {
            return Cell::Outside;
        };
        if jx >= self.residual.ncols() || jy >= self.residual.nrows() {
            return Cell::Outside;
        }
        if !self.valid[[jy, jx]] {
            return Cell::Invalid;
        }
        let v = self.residual[[jy, jx]];
        if v.is_finite() {
            Cell::Value(v)
        } else {
            Cell::Outside
        }
    }

    /// The largest residual on the crop (for the colour scale).
    pub fn residual_max(&self) -> f64 {
        self.residual
            .iter()
            .copied()
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use vortcat_field::{Grid, Units};

    fn lamb_oseen_field(gamma: f64, rc: f64, conv: [f64; 2]) -> PlaneField {
        let n = 41;
        let h = 0.1;
        let grid = Grid::plane(
            Axis::new("x", n, -2.0, h).unwrap(),
            Axis::new("y", n, -2.0, h).unwrap(),
            Units::default(),
        );
        let f = |ix: usize, iy: usize| {
            let (x, y) = (
                grid.x().coordinate(ix as f64),
                grid.y().coordinate(iy as f64),
            );
            LambOseen.velocity(x, y, &[gamma, rc])
        };
        let u = Array2::from_shape_fn((n, n), |(iy, ix)| f(ix, iy)[0] + conv[0]);
        let v = Array2::from_shape_fn((n, n), |(iy, ix)| f(ix, iy)[1] + conv[1]);
        PlaneField::new(grid, u, v, None, None).unwrap()
    }

    fn row(gamma: f64, rc: f64, conv: [f64; 2]) -> Vortex {
        Vortex {
            x: Some(0.0),
            y: Some(0.0),
            model: "lamb-oseen".into(),
            circulation: Some(gamma),
            core_radius: Some(rc),
            conv_u: Some(conv[0]),
            conv_v: Some(conv[1]),
            window_radius: Some(1.5),
            ..Default::default()
        }
    }

    #[test]
    fn exact_model_leaves_no_residual_and_profile_follows_the_curve() {
        let conv = [0.3, -0.1];
        let field = lamb_oseen_field(2.0, 0.5, conv);
        let v = row(2.0, 0.5, conv);
        let m = FittedModel::from_vortex(&v).unwrap();
        let nb = neighbourhood(&field, &v, Some(&m)).unwrap();
        // Noise-free data, same formula: residual at rounding level.
        assert!(nb.residual_rms < 1e-12, "rms {}", nb.residual_rms);
        assert!(nb.n_points > 600);
        // Bin means of u_θ lie within the bin's spread of the curve at the bin centre; with
        // exact data the spread is the variation of u_θ across the 0.1-wide bin, so allow the
        // curve's change over half a bin.
        for b in &nb.u_theta {
            let slope = (m.u_theta(b.x + 0.05) - m.u_theta(b.x - 0.05)).abs();
            assert!(
                (b.mean - m.u_theta(b.x)).abs() <= slope + 1e-3,
                "bin at r = {}: {} vs {}",
                b.x,
                b.mean,
                m.u_theta(b.x)
            );
        }
        // No radial velocity in Lamb–Oseen data.
        assert!(nb.u_r.iter().all(|b| b.mean.abs() < 1e-12));
    }

    #[test]
    fn vatistas_exponent_is_recovered_from_the_peak_velocity() {
        let (g, rc, n) = (1.5, 0.4, 3.0);
        let peak = 2f64.powf(-1.0 / n) * g / (2.0 * std::f64::consts::PI * rc);
        let v = Vortex {
            model: "vatistas".into(),
            peak_velocity: Some(peak),
            ..row(g, rc, [0.0, 0.0])
        };
        let m = FittedModel::from_vortex(&v).unwrap();
        assert!((m.exponent.unwrap() - n).abs() < 1e-9);
        assert!((m.u_theta(rc) - peak).abs() < 1e-12);
    }
}
