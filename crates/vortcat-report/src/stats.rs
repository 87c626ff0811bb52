//! Population statistics of a catalog: count, mean, standard deviation and percentiles of each
//! quantity, for the whole population and split by rotation sense and by chosen model.

use std::fmt;
use std::str::FromStr;

use serde::Serialize;

use crate::error::ReportError;
use crate::survey::{ColumnUnits, Vortex};

/// A per-vortex quantity that can be ranked and summarised.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Quantity {
    /// |Γ|: the magnitude of the circulation (the sign is the sense).
    Circulation,
    /// Core radius rc.
    CoreRadius,
    /// Strain rate γ (Burgers fits only).
    StrainRate,
    /// Peak azimuthal velocity.
    PeakVelocity,
    /// Coefficient of determination R².
    R2,
}

impl Quantity {
    /// All quantities, in display order.
    pub const ALL: [Quantity; 5] = [
        Quantity::Circulation,
        Quantity::CoreRadius,
        Quantity::StrainRate,
        Quantity::PeakVelocity,
        Quantity::R2,
    ];

    /// Name on the command line and in JSON (the catalog column).
    pub fn name(self) -> &'static str {
        match self {
            Quantity::Circulation => "circulation",
            Quantity::CoreRadius => "core_radius",
            Quantity::StrainRate => "strain_rate",
            Quantity::PeakVelocity => "peak_velocity",
            Quantity::R2 => "r2",
        }
    }

    /// Label for tables and plot axes.
    pub fn label(self) -> &'static str {
        match self {
            Quantity::Circulation => "|Γ|",
            Quantity::CoreRadius => "rc",
            Quantity::StrainRate => "γ",
            Quantity::PeakVelocity => "u_θ,max",
            Quantity::R2 => "R²",
        }
    }

    /// The value for one vortex (|Γ| for the circulation); `None` when empty or not finite.
    pub fn value(self, v: &Vortex) -> Option<f64> {
        let x = match self {
            Quantity::Circulation => v.circulation.map(f64::abs),
            Quantity::CoreRadius => v.core_radius,
            Quantity::StrainRate => v.strain_rate,
            Quantity::PeakVelocity => v.peak_velocity.map(f64::abs),
            Quantity::R2 => v.r2,
        };
        x.filter(|x| x.is_finite())
    }

    /// The unit of the quantity from the survey's `units.csv`.
    pub fn unit(self, units: &ColumnUnits) -> String {
        units.of(self.name()).to_string()
    }
}

impl fmt::Display for Quantity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Quantity {
    type Err = ReportError;
    fn from_str(s: &str) -> Result<Self, ReportError> {
        Quantity::ALL
            .into_iter()
            .find(|q| q.name() == s)
            .ok_or_else(|| {
                ReportError::Option(format!(
                    "unknown quantity '{s}' (circulation, core_radius, strain_rate, peak_velocity, r2)"
                ))
            })
    }
}

/// Summary statistics of one sample. Percentiles interpolate linearly between order
/// statistics (the `linear` rule of NumPy's `percentile`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// Number of finite values.
    pub count: usize,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation (n − 1); NaN below two values.
    pub std: f64,
    /// Smallest value.
    pub min: f64,
    /// 5th percentile.
    pub p05: f64,
    /// 25th percentile.
    pub p25: f64,
    /// Median.
    pub median: f64,
    /// 75th percentile.
    pub p75: f64,
    /// 95th percentile.
    pub p95: f64,
    /// Largest value.
    pub max: f64,
}

/// Percentile `p` (0–100) of sorted values, linear interpolation; NaN for an empty slice.
pub fn percentile(sorted: &[f64], p: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let pos = (p / 100.0).clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = pos.ceil() as usize;
    let frac = pos - lo as f64;
    sorted[lo] + (sorted[hi] - sorted[lo]) * frac
}

impl Summary {
    /// Statistics of the finite values; `None` when there is none.
    pub fn of(values: impl IntoIterator<Item = f64>) -> Option<Self> {
        let mut v: Vec<f64> = values.into_iter().filter(|x| x.is_finite()).collect();
        if v.is_empty() {
            return None;
        }
        v.sort_by(f64::total_cmp);
        let n = v.len();
        let mean = v.iter().sum::<f64>() / n as f64;
        let std = if n > 1 {
            (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
        } else {
            f64::NAN
        };
        Some(Summary {
            count: n,
            mean,
            std,
            min: v[0],
            p05: percentile(&v, 5.0),
            p25: percentile(&v, 25.0),
            median: percentile(&v, 50.0),
            p75: percentile(&v, 75.0),
            p95: percentile(&v, 95.0),
            max: v[n - 1],
        })
    }
}

/// Statistics of one group of vortices.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GroupStats {
    /// `all`, `sense=+1`, `sense=-1`, `sense=0`, or `model=<name>`.
    pub group: String,
    /// Vortices in the group.
    pub vortices: usize,
    /// Vortices in the group with at least one flag.
    pub flagged: usize,
    /// One entry per quantity that has at least one value.
    pub quantities: Vec<QuantityStats>,
}

/// Statistics of one quantity in a group.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct QuantityStats {
    /// The quantity.
    pub quantity: Quantity,
    /// Its unit.
    pub unit: String,
    /// The statistics.
    #[serde(flatten)]
    pub summary: Summary,
}

/// Population statistics: the whole population, then by sense, then by model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PopulationStats {
    /// The groups.
    pub groups: Vec<GroupStats>,
}

fn group(name: String, rows: &[&Vortex], units: &ColumnUnits, only_clean: bool) -> GroupStats {
    let rows: Vec<&&Vortex> = rows
        .iter()
        .filter(|v| !only_clean || v.is_clean())
        .collect();
    GroupStats {
        group: name,
        vortices: rows.len(),
        flagged: rows.iter().filter(|v| !v.is_clean()).count(),
        quantities: Quantity::ALL
            .into_iter()
            .filter_map(|q| {
                Summary::of(rows.iter().filter_map(|v| q.value(v))).map(|summary| QuantityStats {
                    quantity: q,
                    unit: q.unit(units),
                    summary,
                })
            })
            .collect(),
    }
}

/// Statistics of `vortices`, split by sense and by model; with `only_clean`, flagged fits are
/// left out.
pub fn population(vortices: &[Vortex], units: &ColumnUnits, only_clean: bool) -> PopulationStats {
    let all: Vec<&Vortex> = vortices.iter().collect();
    let mut groups = vec![group("all".into(), &all, units, only_clean)];
    for (sense, name) in [(1i8, "sense=+1"), (-1, "sense=-1"), (0, "sense=0")] {
        let sel: Vec<&Vortex> = vortices.iter().filter(|v| v.sense == sense).collect();
        if !sel.is_empty() {
            groups.push(group(name.into(), &sel, units, only_clean));
        }
    }
    let mut models: Vec<&str> = vortices.iter().map(|v| v.model.as_str()).collect();
    models.sort_unstable();
    models.dedup();
    for m in models {
        let sel: Vec<&Vortex> = vortices.iter().filter(|v| v.model == m).collect();
        let name = if m.is_empty() {
            "model=(not fitted)".to_string()
        } else {
            format!("model={m}")
        };
        groups.push(group(name, &sel, units, only_clean));
    }
    PopulationStats { groups }
}

/// Count of fits carrying each flag, most frequent first (ties by name).
pub fn flag_counts(vortices: &[Vortex]) -> Vec<(String, usize)> {
    let mut counts: std::collections::BTreeMap<&str, usize> = Default::default();
    for v in vortices {
        for f in v.flag_list() {
            *counts.entry(f).or_default() += 1;
        }
    }
    let mut out: Vec<(String, usize)> = counts.into_iter().map(|(k, n)| (k.into(), n)).collect();
    out.sort_by(|a, b| b.1.cmp(&a.1).then_with(|| a.0.cmp(&b.0)));
    out
}

/// The vortices ranked by `by`, largest first (smallest first with `ascending`), those without
/// a value left out; at most `top` when given; flagged fits left out with `only_clean`.
/// Ties keep catalog order.
pub fn rank(
    vortices: &[Vortex],
    by: Quantity,
    top: Option<usize>,
    only_clean: bool,
    ascending: bool,
) -> Vec<(&Vortex, f64)> {
    let mut ranked: Vec<(&Vortex, f64)> = vortices
        .iter()
        .filter(|v| !only_clean || v.is_clean())
        .filter_map(|v| by.value(v).map(|x| (v, x)))
        .collect();
    ranked.sort_by(|a, b| {
        if ascending {
            a.1.total_cmp(&b.1)
        } else {
            b.1.total_cmp(&a.1)
        }
    });
    if let Some(n) = top {
        ranked.truncate(n);
    }
    ranked
}

#[cfg(test)]
mod tests {
    use super::*;

    fn v(circ: f64, rc: f64, sense: i8, model: &str, flags: &str) -> Vortex {
        Vortex {
            circulation: Some(circ),
            core_radius: Some(rc),
            sense,
            model: model.into(),
            flags: flags.into(),
            ..Default::default()
        }
    }

    #[test]
    fn percentiles_match_numpy_linear_rule() {
        // numpy.percentile([1, 2, 3, 4], [25, 50, 95]) = [1.75, 2.5, 3.85] (linear rule).
        let s = [1.0, 2.0, 3.0, 4.0];
        assert!((percentile(&s, 25.0) - 1.75).abs() < 1e-12);
        assert!((percentile(&s, 50.0) - 2.5).abs() < 1e-12);
        assert!((percentile(&s, 95.0) - 3.85).abs() < 1e-12);
        assert!(percentile(&[], 50.0).is_nan());
    }

    #[test]
    fn summary_ignores_non_finite_values() {
        let s = Summary::of([1.0, f64::NAN, 3.0, f64::INFINITY]).unwrap();
        assert_eq!(s.count, 2);
        assert!((s.mean - 2.0).abs() < 1e-12);
        // Sample standard deviation of {1, 3}: sqrt(2).
        assert!((s.std - 2f64.sqrt()).abs() < 1e-12);
        assert!(Summary::of([f64::NAN]).is_none());
    }

    #[test]
    fn circulation_ranks_by_magnitude_and_groups_split() {
        let rows = vec![
            v(1.0, 0.1, 1, "lamb-oseen", ""),
            v(-3.0, 0.2, -1, "burgers", "low_r_squared"),
            v(2.0, 0.3, 1, "burgers", ""),
        ];
        let r = rank(&rows, Quantity::Circulation, None, false, false);
        let order: Vec<f64> = r.iter().map(|(_, x)| *x).collect();
        assert_eq!(order.len(), 3);
        assert!((order[0] - 3.0).abs() < 1e-12 && (order[2] - 1.0).abs() < 1e-12);
        let clean = rank(&rows, Quantity::Circulation, Some(1), true, false);
        assert_eq!(clean.len(), 1);
        assert!((clean[0].1 - 2.0).abs() < 1e-12);
        let up = rank(&rows, Quantity::CoreRadius, None, false, true);
        assert!((up[0].1 - 0.1).abs() < 1e-12);

        let stats = population(&rows, &ColumnUnits::default(), false);
        let names: Vec<&str> = stats.groups.iter().map(|g| g.group.as_str()).collect();
        assert_eq!(
            names,
            [
                "all",
                "sense=+1",
                "sense=-1",
                "model=burgers",
                "model=lamb-oseen"
            ]
        );
        assert_eq!(stats.groups[0].vortices, 3);
        assert_eq!(stats.groups[0].flagged, 1);
        let circ = &stats.groups[0].quantities[0];
        assert_eq!(circ.quantity, Quantity::Circulation);
        assert!((circ.summary.median - 2.0).abs() < 1e-12);
        assert_eq!(
            flag_counts(&rows),
            vec![("low_r_squared".to_string(), 1usize)]
        );
    }
}
