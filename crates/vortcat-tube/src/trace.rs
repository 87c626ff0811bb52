//! Core lines: from the strongest point of a tube region, march along the local vortex axis
//! in both directions, re-centring in each normal section.
//!
//! At a point `q` with axis `ê` the *section* is the set of region points within a thin slab
//! `|(x − q)·ê| ≤ t/2` (t = one station spacing, at least one grid spacing) and within the
//! search radius of the axis. Its centroid, weighted by the criterion excess `s − s_threshold`,
//! projected onto the plane through `q`, is the re-centred core point; its area
//! `A = N·V_cell/t` gives the equivalent section radius `a = √(A/π)`. The axis is the weighted
//! mean vorticity of the region points within `max(a, 1.5 h)` of the new point, oriented like
//! the previous step. The march stops when the section is empty, the axis turns by more than
//! 60° in one step, the centre jumps by more than the section radius, or the line closes on
//! itself (a tube wrapping round a periodic box).
//!
//! All positions are physical and *unwrapped*: a line that leaves a periodic box through one
//! face continues outside it, and region points are looked up at their wrapped indices.
//!
//! # Reference
//! Following the vorticity (or swirl) direction and re-centring in normal planes is the usual
//! way to extract vortex core lines from DNS (common practice; e.g. Jiménez et al. 1993 study
//! worms along their axes). The thresholds (60°, one section radius) are our own choices.

use std::collections::HashMap;

/// Geometry of the global grid in physical units.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Geom {
    pub origin: [f64; 3],
    pub spacing: [f64; 3],
    pub n: [usize; 3],
    pub periodic: [bool; 3],
}

impl Geom {
    /// Smallest |spacing|.
    pub fn h(&self) -> f64 {
        self.spacing
            .iter()
            .fold(f64::INFINITY, |m, d| m.min(d.abs()))
    }
    /// Cell volume.
    pub fn cell_volume(&self) -> f64 {
        (self.spacing[0] * self.spacing[1] * self.spacing[2]).abs()
    }
    /// Physical position of an unwrapped integer index `[x, y, z]`.
    pub fn position(&self, i: [i64; 3]) -> [f64; 3] {
        std::array::from_fn(|k| self.origin[k] + i[k] as f64 * self.spacing[k])
    }
    /// Fractional unwrapped index `[x, y, z]` of a position.
    pub fn frac(&self, p: [f64; 3]) -> [f64; 3] {
        std::array::from_fn(|k| (p[k] - self.origin[k]) / self.spacing[k])
    }
    /// Wrapped index of an unwrapped one, `None` outside a non-periodic axis.
    pub fn wrap(&self, i: [i64; 3]) -> Option<[usize; 3]> {
        let mut out = [0; 3];
        for k in 0..3 {
            let n = self.n[k] as i64;
            out[k] = if (0..n).contains(&i[k]) {
                i[k] as usize
            } else if self.periodic[k] {
                i[k].rem_euclid(n) as usize
            } else {
                return None;
            };
        }
        Some(out)
    }
    /// Flat raster index (x fastest, z slowest).
    pub fn flat(&self, i: [usize; 3]) -> u64 {
        ((i[2] as u64 * self.n[1] as u64) + i[1] as u64) * self.n[0] as u64 + i[0] as u64
    }
    /// Index of a flat raster index.
    pub fn unflat(&self, f: u64) -> [usize; 3] {
        let (nx, ny) = (self.n[0] as u64, self.n[1] as u64);
        [
            (f % nx) as usize,
            ((f / nx) % ny) as usize,
            (f / (nx * ny)) as usize,
        ]
    }
    /// Minimum-image form of a displacement on the periodic axes.
    pub fn min_image(&self, mut d: [f64; 3]) -> [f64; 3] {
        for k in 0..3 {
            if self.periodic[k] {
                let l = self.n[k] as f64 * self.spacing[k].abs();
                d[k] -= l * (d[k] / l).round();
            }
        }
        d
    }
}

pub(crate) fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
pub(crate) fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}
pub(crate) fn add(a: [f64; 3], b: [f64; 3], s: f64) -> [f64; 3] {
    [a[0] + s * b[0], a[1] + s * b[1], a[2] + s * b[2]]
}
pub(crate) fn unit(a: [f64; 3]) -> Option<[f64; 3]> {
    let n = norm(a);
    (n > 0.0 && n.is_finite()).then(|| [a[0] / n, a[1] / n, a[2] / n])
}

/// The points of one region, looked up by flat index.
pub(crate) struct RegionPoints<'a> {
    /// Flat index → position in the arrays below.
    pub map: HashMap<u64, u32>,
    /// Criterion strength of each point.
    pub strength: &'a [f32],
    /// Vorticity of each point.
    pub omega: &'a [[f32; 3]],
    /// Detection threshold.
    pub threshold: f64,
}

impl RegionPoints<'_> {
    /// Calls `f(position, weight, vorticity)` for every region point within `radius` of `c`,
    /// in a fixed (index) order.
    fn ball(&self, g: &Geom, c: [f64; 3], radius: f64, mut f: impl FnMut([f64; 3], f64, [f64; 3])) {
        let fc = g.frac(c);
        let r: [f64; 3] = std::array::from_fn(|k| radius / g.spacing[k].abs());
        let lo: [i64; 3] = std::array::from_fn(|k| (fc[k] - r[k]).floor() as i64);
        let hi: [i64; 3] = std::array::from_fn(|k| (fc[k] + r[k]).ceil() as i64);
        let r2 = radius * radius;
        for iz in lo[2]..=hi[2] {
            for iy in lo[1]..=hi[1] {
                for ix in lo[0]..=hi[0] {
                    let i = [ix, iy, iz];
                    let Some(wi) = g.wrap(i) else { continue };
                    let Some(&k) = self.map.get(&g.flat(wi)) else {
                        continue;
                    };
                    let p = g.position(i);
                    let d = [p[0] - c[0], p[1] - c[1], p[2] - c[2]];
                    if dot(d, d) > r2 {
                        continue;
                    }
                    let k = k as usize;
                    let w = (f64::from(self.strength[k]) - self.threshold).max(0.0);
                    let o = self.omega[k].map(f64::from);
                    f(p, w, o);
                }
            }
        }
    }

    /// Weighted mean vorticity direction near `c`, oriented along `like` (if given).
    fn axis(&self, g: &Geom, c: [f64; 3], radius: f64, like: Option<[f64; 3]>) -> Option<[f64; 3]> {
        let mut s = [0.0; 3];
        self.ball(g, c, radius, |_, w, o| s = add(s, o, w));
        let mut e = unit(s)?;
        if let Some(l) = like {
            if dot(e, l) < 0.0 {
                e = e.map(|x| -x);
            }
        }
        Some(e)
    }

    /// The section through `q` normal to `e`: re-centred point and equivalent radius.
    fn section(
        &self,
        g: &Geom,
        q: [f64; 3],
        e: [f64; 3],
        radius: f64,
        t: f64,
    ) -> Option<([f64; 3], f64)> {
        let (mut sw, mut sp, mut count) = (0.0, [0.0; 3], 0usize);
        let reach = (radius * radius + 0.25 * t * t).sqrt();
        self.ball(g, q, reach, |p, w, _| {
            let d = [p[0] - q[0], p[1] - q[1], p[2] - q[2]];
            let along = dot(d, e);
            if along.abs() > 0.5 * t {
                return;
            }
            let radial = add(d, e, -along);
            if dot(radial, radial) > radius * radius {
                return;
            }
            count += 1;
            sw += w;
            sp = add(sp, radial, w);
        });
        if count == 0 || sw <= 0.0 {
            return None;
        }
        let c = add(q, sp, 1.0 / sw);
        let area = count as f64 * g.cell_volume() / t;
        Some((c, (area / std::f64::consts::PI).sqrt()))
    }
}

/// One point of a core line.
#[derive(Debug, Clone, Copy)]
pub(crate) struct LinePoint {
    /// Position (unwrapped, physical).
    pub centre: [f64; 3],
    /// Unit axis.
    pub axis: [f64; 3],
    /// Equivalent radius of the section.
    pub radius: f64,
}

/// A traced core line.
#[derive(Debug, Clone)]
pub(crate) struct CoreLine {
    /// Points from one end to the other, one station spacing apart.
    pub points: Vec<LinePoint>,
    /// The line closed on itself (a tube wrapping round a periodic box).
    pub closed: bool,
}

impl CoreLine {
    /// Arc length of the polyline (plus the closing segment of a closed line).
    pub fn length(&self, step: f64) -> f64 {
        let open: f64 = self
            .points
            .windows(2)
            .map(|w| {
                let d = [
                    w[1].centre[0] - w[0].centre[0],
                    w[1].centre[1] - w[0].centre[1],
                    w[1].centre[2] - w[0].centre[2],
                ];
                norm(d)
            })
            .sum();
        if self.closed && !self.points.is_empty() {
            open + step
        } else {
            open
        }
    }
}

/// Traces the core line of a region from its strongest point `peak` (unwrapped index).
/// `step` is the station spacing, `max_radius` the largest search radius.
pub(crate) fn trace(
    g: &Geom,
    region: &RegionPoints<'_>,
    peak: [i64; 3],
    step: f64,
    max_radius: f64,
) -> CoreLine {
    let h = g.h();
    let t = step.max(h);
    let p0 = g.position(peak);
    let e0 = region.axis(g, p0, 2.0 * h, None).unwrap_or([0.0, 0.0, 1.0]);
    let clamp_r = |a: f64| (2.0 * a + 2.0 * h).clamp(3.0 * h, max_radius.max(3.0 * h));
    let (c0, a0, e0) = {
        let (_, a) = region.section(g, p0, e0, 3.0 * h, t).unwrap_or((p0, h));
        let (c, a) = region.section(g, p0, e0, clamp_r(a), t).unwrap_or((p0, a));
        let e = region.axis(g, c, a.max(1.5 * h), Some(e0)).unwrap_or(e0);
        (c, a, e)
    };
    let start = LinePoint {
        centre: c0,
        axis: e0,
        radius: a0,
    };
    let max_len: f64 = (0..3)
        .map(|k| g.n[k] as f64 * g.spacing[k].abs())
        .sum::<f64>()
        * 2.0;
    let march = |sign: f64, stop_near: Option<[f64; 3]>| -> (Vec<LinePoint>, bool) {
        let mut out: Vec<LinePoint> = Vec::new();
        let mut p = start;
        p.axis = p.axis.map(|x| sign * x);
        let mut travelled = 0.0;
        loop {
            let q = add(p.centre, p.axis, step);
            let r = clamp_r(p.radius);
            let Some((c, a)) = region.section(g, q, p.axis, r, t) else {
                break;
            };
            let fc = g.frac(c);
            if (0..3).any(|k| !g.periodic[k] && !(0.0..=(g.n[k] - 1) as f64).contains(&fc[k])) {
                break; // left a non-periodic domain
            }
            let shift = norm([c[0] - q[0], c[1] - q[1], c[2] - q[2]]);
            if shift > p.radius.max(2.0 * h) {
                break;
            }
            let Some(e) = region.axis(g, c, a.max(1.5 * h), Some(p.axis)) else {
                break;
            };
            if dot(e, p.axis) < 0.5 {
                break;
            }
            if out.len() >= 2 {
                let back = stop_near.unwrap_or(start.centre);
                let d = g.min_image([c[0] - back[0], c[1] - back[1], c[2] - back[2]]);
                if norm(d) < 0.5 * step {
                    return (out, true);
                }
            }
            travelled += step;
            if travelled > max_len {
                break;
            }
            p = LinePoint {
                centre: c,
                axis: e,
                radius: a,
            };
            out.push(p);
        }
        (out, false)
    };
    let (forward, closed) = march(1.0, None);
    if closed {
        let mut points = vec![start];
        points.extend(forward);
        return CoreLine {
            points,
            closed: true,
        };
    }
    let far_end = forward.last().map(|p| p.centre);
    let (backward, closed) = march(-1.0, far_end);
    let mut points: Vec<LinePoint> = backward
        .into_iter()
        .rev()
        .map(|mut p| {
            p.axis = p.axis.map(|x| -x);
            p
        })
        .collect();
    points.push(start);
    points.extend(forward);
    CoreLine { points, closed }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn straight_region_gives_a_straight_line_of_the_right_length() {
        // A straight cylinder of radius 2.5 along x through a 30 × 12 × 12 box, vorticity +x:
        // the line must lie on the axis and span the box (up to one step at each end).
        let g = Geom {
            origin: [0.0; 3],
            spacing: [1.0; 3],
            n: [30, 12, 12],
            periodic: [false; 3],
        };
        let (mut map, mut strength, mut omega) = (HashMap::new(), vec![], vec![]);
        for z in 0..12 {
            for y in 0..12 {
                for x in 0..30 {
                    let (dy, dz) = (y as f64 - 5.5, z as f64 - 5.5);
                    if dy * dy + dz * dz <= 6.25 {
                        map.insert(g.flat([x, y, z]), strength.len() as u32);
                        strength.push(2.0 - 0.1 * (dy * dy + dz * dz) as f32);
                        omega.push([1.0, 0.0, 0.0]);
                    }
                }
            }
        }
        let region = RegionPoints {
            map,
            strength: &strength,
            omega: &omega,
            threshold: 1.0,
        };
        let line = trace(&g, &region, [10, 5, 5], 2.0, 10.0);
        assert!(!line.closed);
        for p in &line.points {
            // Symmetric section about (5.5, 5.5): exact centroid up to rounding.
            assert!((p.centre[1] - 5.5).abs() < 1e-9 && (p.centre[2] - 5.5).abs() < 1e-9);
            assert!((p.axis[0] - 1.0).abs() < 1e-12);
        }
        let len = line.length(2.0);
        assert!((26.0..=29.0).contains(&len), "length {len}");
        // Periodic along x: the same cylinder is a closed loop of length 30.
        let g = Geom {
            periodic: [true, false, false],
            ..g
        };
        let line = trace(&g, &region, [10, 5, 5], 2.0, 10.0);
        assert!(line.closed);
        assert!((line.length(2.0) - 30.0).abs() < 1e-9);
    }
}
