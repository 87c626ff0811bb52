//! Detection settings with documented defaults and a validating builder.

use crate::criterion::Criterion;
use crate::error::DetectError;
use crate::gradient::{EdgeOrder, GradientScheme};

/// Multiple of the field rms used by [`Threshold::Default`] for the derivative criteria.
///
/// Wu & Christensen (2006, *J. Fluid Mech.* 568, 55–76) identify spanwise vortices in PIV
/// planes where the swirling strength exceeds 1.5 times its rms (value from memory); the same
/// rms-relative rule is applied here to every derivative criterion's strength. It adapts to
/// the noise level and magnitude of each snapshot, at the price of depending on how much of
/// the field the vortices occupy.
pub const DEFAULT_RMS_MULTIPLE: f64 = 1.5;

/// Default minimum region size in cells (voxels in 3D).
///
/// A 3×3 block: the Lamb–Oseen and Burgers fits downstream have 5–7 free parameters (centre,
/// circulation, core radius, background velocity), so a region of fewer than 9 vectors cannot
/// constrain them; it also removes isolated noise responses, whose extent is about one stencil
/// width. Our own choice (common practice in spirit, no single literature value).
pub const DEFAULT_MIN_CELLS: usize = 9;

/// Default Γ1/Γ2 neighbourhood radius in grid steps (a disc of 13 points incl. the centre).
///
/// Graftieaux et al. (2001) evaluate Γ on a small neighbourhood and note the trade-off between
/// smoothing (large neighbourhoods) and noise (small ones); 2 steps is the smallest disc that
/// reaches beyond the 8 nearest neighbours. Our choice.
pub const DEFAULT_GAMMA_RADIUS: usize = 2;

/// Default threshold on |Γ1| (dimensionless).
///
/// Graftieaux et al. (2001) locate centres at the extremum of Γ1 (|Γ1| ≈ 0.9–1 there, from
/// memory) and give no region threshold. For an axisymmetric vortex Γ1 depends only on the
/// geometry of the neighbourhood (every velocity is tangential), not on the vortex size, so a
/// Γ1 region is about as large as the neighbourhood whatever the core size. 0.4 is the value of
/// Γ1 at one neighbourhood radius from the centre of an axisymmetric vortex for radius 2
/// (0.43 by our own evaluation of the discrete formula), so that the region holds the 9+
/// cells the minimum size asks for. Γ1 candidates give a centre and a sense; their area and
/// radius describe the neighbourhood, not the core. Our choice.
pub const DEFAULT_GAMMA1_THRESHOLD: f64 = 0.4;

/// How the detection threshold on the criterion strength is chosen. The strength is
/// [`Criterion::strength`] of the raw value; a point belongs to a core when its strength is
/// strictly greater than the threshold.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Threshold {
    /// The criterion's documented default ([`Threshold::default_for`]).
    #[default]
    Default,
    /// A fixed value in the units of the strength (1/s for λci and ω, 1/s² for Q and λ2,
    /// 1/s⁶ or 1/s² for Δ in 3D or 2D, dimensionless for Γ1 and Γ2).
    Absolute(f64),
    /// A multiple (> 0) of the rms of the strength's positive part `max(s, 0)` over all points
    /// where it is computable. Non-positive strengths (strain-dominated points by the
    /// criterion's own zero threshold: Q < 0, λ2 > 0) count as 0, so strong strain around a
    /// vortex does not raise the threshold above the vortex itself. For λci and |ω| (never
    /// negative) this is the plain rms.
    RelativeToRms(f64),
    /// The given percentile (0 < p < 100) of the strength over computable points.
    Percentile(f64),
}

impl Threshold {
    /// The default rule of each criterion:
    /// - λci, ω, Q, λ2, Δ: [`DEFAULT_RMS_MULTIPLE`] × rms (Wu & Christensen 2006 for λci). The
    ///   theoretical thresholds (Q > 0, λ2 < 0, λci > 0, Δ > 0) are not usable on measured
    ///   data: noise makes them positive at a large fraction of points.
    /// - Γ2: 2/π, the core boundary of Graftieaux et al. (2001).
    /// - Γ1: [`DEFAULT_GAMMA1_THRESHOLD`] (see there; our choice).
    pub fn default_for(criterion: Criterion) -> Threshold {
        match criterion {
            Criterion::Gamma1 => Threshold::Absolute(DEFAULT_GAMMA1_THRESHOLD),
            Criterion::Gamma2 => Threshold::Absolute(2.0 / std::f64::consts::PI),
            _ => Threshold::RelativeToRms(DEFAULT_RMS_MULTIPLE),
        }
    }

    /// The threshold value for a set of strengths (NaN values are skipped).
    ///
    /// Errors: [`DetectError::NothingComputable`] for a relative rule with no computable value.
    pub fn resolve(
        &self,
        criterion: Criterion,
        strengths: impl Iterator<Item = f64>,
    ) -> Result<f64, DetectError> {
        let values: Vec<f64> = strengths.collect();
        self.resolve_at(criterion, values.len(), |i| values[i])
    }

    /// [`Self::resolve`] over `strength_at(0..len)`, without collecting the strengths: the
    /// detection thresholds the criterion field of a plane in place.
    pub(crate) fn resolve_at(
        &self,
        criterion: Criterion,
        len: usize,
        strength_at: impl Fn(usize) -> f64,
    ) -> Result<f64, DetectError> {
        let rule = match self {
            Threshold::Default => Threshold::default_for(criterion),
            t => *t,
        };
        let nothing = || DetectError::NothingComputable {
            criterion: criterion.name(),
            points: 0,
        };
        match rule {
            Threshold::Absolute(t) => Ok(t),
            Threshold::RelativeToRms(k) => {
                // Mean square of the positive part over the computable values. Four
                // interleaved partial sums (value i into lane i mod 4) and a NaN adds 0
                // (`f64::max` returns the other operand): one running sum would be a chain of
                // dependent additions, the slowest part of thresholding a plane. Fixed lane
                // order, so the result is reproducible.
                let (mut lanes, mut n) = ([0.0f64; 4], 0usize);
                let full = len - len % 4;
                let mut add = |lane: &mut f64, x: f64| {
                    let p = x.max(0.0);
                    *lane += p * p;
                    n += usize::from(!x.is_nan());
                };
                for i in (0..full).step_by(4) {
                    for (l, lane) in lanes.iter_mut().enumerate() {
                        add(lane, strength_at(i + l));
                    }
                }
                for i in full..len {
                    add(&mut lanes[i - full], strength_at(i));
                }
                if n == 0 {
                    return Err(nothing());
                }
                let sum = (lanes[0] + lanes[1]) + (lanes[2] + lanes[3]);
                Ok(k * (sum / n as f64).sqrt())
            }
            Threshold::Percentile(p) => {
                let mut v: Vec<f64> = (0..len).map(strength_at).filter(|s| !s.is_nan()).collect();
                if v.is_empty() {
                    return Err(nothing());
                }
                // Nearest-rank percentile on the sorted values.
                let rank = ((p / 100.0) * (v.len() - 1) as f64).round() as usize;
                let (_, x, _) = v.select_nth_unstable_by(rank, f64::total_cmp);
                Ok(*x)
            }
            Threshold::Default => unreachable!("resolved above"),
        }
    }
}

/// Splitting of regions that hold several separated peaks (e.g. a vortex pair about to merge).
///
/// Within a connected region the cells are flooded from the highest strength down; two
/// sub-regions that meet at a *saddle* of strength `s` stay separate when
/// `s ≤ saddle_ratio × (lower peak)` and both hold at least `min_basin_cells` cells at that
/// moment; otherwise the lower one merges into the higher. This is the persistence rule of
/// topological peak finding. Defaults: a dip to half the weaker peak (a 50 % drop between two
/// maxima is far beyond the ~10 % fluctuation that 5 % velocity noise causes on the
/// least-squares λci of a resolved core, by the noise gains in [`crate::gradient`]) and 4 cells
/// (a 2×2 block: the smallest basin with a well-defined maximum and quadratic peak fit). Our
/// own choices.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SplitSettings {
    /// Saddle-to-lower-peak ratio below which two peaks are kept apart, in (0, 1).
    pub saddle_ratio: f64,
    /// Minimum cells of each basin when the peaks meet. The detection uses the larger of this
    /// and the minimum region size, so a split never produces a part that would be dropped.
    pub min_basin_cells: usize,
}

impl Default for SplitSettings {
    fn default() -> Self {
        Self {
            saddle_ratio: 0.5,
            min_basin_cells: 4,
        }
    }
}

/// Everything [`crate::detect_plane`] and [`crate::detect_volume`] need. Build with
/// [`DetectionSettings::builder`]; the defaults (each documented on its constant or type) are
/// the swirling strength λci with the least-squares gradient, 2nd-order edges, 1.5 × rms
/// threshold, 9-cell minimum regions, peak splitting on, Γ radius 2.
#[derive(Debug, Clone, PartialEq)]
pub struct DetectionSettings {
    criterion: Criterion,
    scheme: GradientScheme,
    edge_order: EdgeOrder,
    threshold: Threshold,
    min_cells: usize,
    split: Option<SplitSettings>,
    gamma_radius: usize,
}

impl Default for DetectionSettings {
    fn default() -> Self {
        Self {
            criterion: Criterion::default(),
            scheme: GradientScheme::default(),
            edge_order: EdgeOrder::default(),
            threshold: Threshold::Default,
            min_cells: DEFAULT_MIN_CELLS,
            split: Some(SplitSettings::default()),
            gamma_radius: DEFAULT_GAMMA_RADIUS,
        }
    }
}

impl DetectionSettings {
    /// A builder starting from the defaults.
    pub fn builder() -> DetectionSettingsBuilder {
        DetectionSettingsBuilder {
            s: DetectionSettings::default(),
        }
    }

    /// The criterion.
    pub fn criterion(&self) -> Criterion {
        self.criterion
    }
    /// The gradient scheme.
    pub fn scheme(&self) -> GradientScheme {
        self.scheme
    }
    /// The one-sided edge order.
    pub fn edge_order(&self) -> EdgeOrder {
        self.edge_order
    }
    /// The threshold rule.
    pub fn threshold(&self) -> Threshold {
        self.threshold
    }
    /// Minimum region size in cells.
    pub fn min_cells(&self) -> usize {
        self.min_cells
    }
    /// Peak-splitting settings (`None` = no splitting).
    pub fn split(&self) -> Option<SplitSettings> {
        self.split
    }
    /// Γ1/Γ2 neighbourhood radius in grid steps.
    pub fn gamma_radius(&self) -> usize {
        self.gamma_radius
    }
}

/// Validating builder of [`DetectionSettings`].
#[derive(Debug, Clone)]
pub struct DetectionSettingsBuilder {
    s: DetectionSettings,
}

impl DetectionSettingsBuilder {
    /// Sets the criterion.
    pub fn criterion(mut self, c: Criterion) -> Self {
        self.s.criterion = c;
        self
    }
    /// Sets the gradient scheme.
    pub fn scheme(mut self, g: GradientScheme) -> Self {
        self.s.scheme = g;
        self
    }
    /// Sets the edge order.
    pub fn edge_order(mut self, e: EdgeOrder) -> Self {
        self.s.edge_order = e;
        self
    }
    /// Sets the threshold rule.
    pub fn threshold(mut self, t: Threshold) -> Self {
        self.s.threshold = t;
        self
    }
    /// Sets the minimum region size (cells, ≥ 1).
    pub fn min_cells(mut self, n: usize) -> Self {
        self.s.min_cells = n;
        self
    }
    /// Sets or disables peak splitting.
    pub fn split(mut self, s: Option<SplitSettings>) -> Self {
        self.s.split = s;
        self
    }
    /// Sets the Γ neighbourhood radius (grid steps, ≥ 1).
    pub fn gamma_radius(mut self, r: usize) -> Self {
        self.s.gamma_radius = r;
        self
    }

    /// Checks every setting and returns the settings.
    ///
    /// Errors: [`DetectError::InvalidSetting`] naming the setting and its value.
    pub fn build(self) -> Result<DetectionSettings, DetectError> {
        let s = self.s;
        let bad = |name: &'static str, value: String, reason: &'static str| {
            Err(DetectError::InvalidSetting {
                name,
                value,
                reason,
            })
        };
        match s.threshold {
            Threshold::Absolute(t) if !t.is_finite() => {
                return bad("threshold", t.to_string(), "must be finite")
            }
            Threshold::RelativeToRms(k) if !(k.is_finite() && k > 0.0) => {
                return bad(
                    "threshold",
                    k.to_string(),
                    "an rms multiple must be finite and > 0",
                )
            }
            Threshold::Percentile(p) if !(p > 0.0 && p < 100.0) => {
                return bad(
                    "threshold",
                    p.to_string(),
                    "a percentile must be in (0, 100)",
                )
            }
            _ => {}
        }
        if s.min_cells == 0 {
            return bad("min_cells", "0".into(), "must be at least 1");
        }
        if s.gamma_radius == 0 {
            return bad("gamma_radius", "0".into(), "must be at least 1 grid step");
        }
        if let Some(sp) = s.split {
            if !(sp.saddle_ratio > 0.0 && sp.saddle_ratio < 1.0) {
                return bad(
                    "saddle_ratio",
                    sp.saddle_ratio.to_string(),
                    "must be in (0, 1)",
                );
            }
            if sp.min_basin_cells == 0 {
                return bad("min_basin_cells", "0".into(), "must be at least 1");
            }
        }
        Ok(s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn builder_rejects_out_of_range_values_and_names_them() {
        let e = DetectionSettings::builder()
            .threshold(Threshold::Percentile(120.0))
            .build()
            .unwrap_err();
        assert_eq!(
            e,
            DetectError::InvalidSetting {
                name: "threshold",
                value: "120".into(),
                reason: "a percentile must be in (0, 100)"
            }
        );
        assert!(DetectionSettings::builder().min_cells(0).build().is_err());
        assert!(DetectionSettings::builder()
            .threshold(Threshold::Absolute(f64::NAN))
            .build()
            .is_err());
        assert!(DetectionSettings::builder()
            .threshold(Threshold::RelativeToRms(-1.0))
            .build()
            .is_err());
        assert!(DetectionSettings::builder()
            .split(Some(SplitSettings {
                saddle_ratio: 1.0,
                min_basin_cells: 4
            }))
            .build()
            .is_err());
        assert_eq!(
            DetectionSettings::builder().build().unwrap(),
            DetectionSettings::default()
        );
    }

    #[test]
    fn rms_and_percentile_rules() {
        // rms of the positive part of (3, 4, −5, NaN) over computable values:
        // √((9 + 16 + 0)/3) (definition above).
        let v = [3.0, 4.0, -5.0, f64::NAN];
        let t = Threshold::RelativeToRms(2.0)
            .resolve(Criterion::Q, v.iter().copied())
            .unwrap();
        assert_relative_eq!(t, 2.0 * (25.0_f64 / 3.0).sqrt(), max_relative = 1e-15);
        // Nearest-rank 50th percentile of 0..=10 is 5 (rank (0.5·10).round() = 5).
        let w: Vec<f64> = (0..=10).map(f64::from).collect();
        let t = Threshold::Percentile(50.0)
            .resolve(Criterion::Q, w.iter().copied())
            .unwrap();
        assert_relative_eq!(t, 5.0, max_relative = 1e-15);
        let t = Threshold::Default
            .resolve(Criterion::Gamma2, w.iter().copied())
            .unwrap();
        assert_relative_eq!(t, 2.0 / std::f64::consts::PI, max_relative = 1e-15);
        assert!(Threshold::RelativeToRms(1.0)
            .resolve(Criterion::Q, [f64::NAN].into_iter())
            .is_err());
    }

    #[test]
    fn rms_rule_counts_every_lane_and_the_remainder() {
        // 1..=1001 with every seventh value NaN and the negatives of 1..=5 (positive part 0):
        // the sum of the squares of integers is exact in f64 at this size, so the four-lane sum
        // must give Σk² over the kept k exactly (Σ_{k≤n} k² = n(n+1)(2n+1)/6).
        let mut v: Vec<f64> = (1..=1001)
            .map(|k| if k % 7 == 0 { f64::NAN } else { k as f64 })
            .collect();
        v.extend((1..=5).map(|k| -(k as f64)));
        let all = 1001.0 * 1002.0 * 2003.0 / 6.0;
        let sevens = 49.0 * (143.0 * 144.0 * 287.0 / 6.0);
        let kept = 1001 - 143 + 5;
        let t = Threshold::RelativeToRms(1.0)
            .resolve(Criterion::Q, v.iter().copied())
            .unwrap();
        // Exact: every partial sum is an integer below 2⁵³, and √ is correctly rounded.
        assert_eq!(t.to_bits(), ((all - sevens) / kept as f64).sqrt().to_bits());
    }
}
