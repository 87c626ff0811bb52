//! Which vortices get a detail card and which snapshots a map, so that the report stays small
//! for any survey size: every flagged fit up to a cap (the most doubtful first), the strongest
//! fits by |Γ|, and a seeded random sample of the rest.

use std::collections::BTreeMap;

use rand::seq::index::sample;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

use crate::survey::Vortex;

/// Why a vortex has a detail card.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Reason {
    /// It carries flags; `rank` is its place among the flagged fits, most doubtful first.
    Flagged {
        /// Place, from 1.
        rank: usize,
    },
    /// Among the strongest by |Γ|.
    Strongest {
        /// Place by |Γ|, from 1.
        rank: usize,
    },
    /// Drawn at random.
    Sample,
}

/// How much a flag weighs when ordering flagged fits (more = more doubtful).
pub fn flag_weight(flag: &str) -> u32 {
    match flag {
        "not_fitted" => 100,
        "not_converged" => 60,
        "singular_covariance" | "parameter_at_bound" => 50,
        "low_r_squared" => 40,
        "centre_moved" | "large_uncertainty" => 25,
        "sense_undetermined" => 20,
        _ => 10,
    }
}

/// Doubt score of a fit: the sum of its flags' weights.
pub fn doubt(v: &Vortex) -> u32 {
    v.flag_list().into_iter().map(flag_weight).sum()
}

/// Catalog indices of the flagged fits, most doubtful first (score, then lower R², then
/// catalog order).
pub fn flagged_order(vortices: &[Vortex]) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..vortices.len())
        .filter(|&i| !vortices[i].is_clean())
        .collect();
    idx.sort_by(|&a, &b| {
        let (va, vb) = (&vortices[a], &vortices[b]);
        doubt(vb)
            .cmp(&doubt(va))
            .then_with(|| {
                let ra = va.r2.unwrap_or(f64::NEG_INFINITY);
                let rb = vb.r2.unwrap_or(f64::NEG_INFINITY);
                ra.total_cmp(&rb)
            })
            .then(a.cmp(&b))
    });
    idx
}

/// The detail selection: `(catalog index, reason)` in display order (flagged first).
pub fn detail(
    vortices: &[Vortex],
    max_flagged: usize,
    top: usize,
    n_sample: usize,
    seed: u64,
) -> Vec<(usize, Reason)> {
    let mut chosen = vec![false; vortices.len()];
    let mut out = Vec::new();
    for (k, i) in flagged_order(vortices)
        .into_iter()
        .take(max_flagged)
        .enumerate()
    {
        chosen[i] = true;
        out.push((i, Reason::Flagged { rank: k + 1 }));
    }
    let mut by_strength: Vec<(usize, f64)> = vortices
        .iter()
        .enumerate()
        .filter_map(|(i, v)| {
            v.circulation
                .filter(|g| g.is_finite())
                .map(|g| (i, g.abs()))
        })
        .collect();
    by_strength.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    for (rank, &(i, _)) in by_strength.iter().take(top).enumerate() {
        if !chosen[i] {
            chosen[i] = true;
            out.push((i, Reason::Strongest { rank: rank + 1 }));
        }
    }
    let rest: Vec<usize> = (0..vortices.len()).filter(|&i| !chosen[i]).collect();
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut drawn: Vec<usize> = sample(&mut rng, rest.len(), n_sample.min(rest.len()))
        .into_iter()
        .map(|k| rest[k])
        .collect();
    drawn.sort_unstable();
    out.extend(drawn.into_iter().map(|i| (i, Reason::Sample)));
    out
}

/// A snapshot: file and stack index.
pub type SnapshotKey = (String, usize);

/// Splits `file#index` into its parts.
pub fn parse_snapshot(id: &str) -> Option<SnapshotKey> {
    let (file, index) = id.rsplit_once('#')?;
    Some((file.to_string(), index.parse().ok()?))
}

/// Snapshots that get a map, at most `max`, in catalog order: those with the most flagged
/// fits first, then evenly spaced others. `snapshots` lists every done snapshot in order.
pub fn maps(vortices: &[Vortex], snapshots: &[SnapshotKey], max: usize) -> Vec<SnapshotKey> {
    if max == 0 || snapshots.is_empty() {
        return vec![];
    }
    let mut flagged: BTreeMap<&SnapshotKey, usize> = BTreeMap::new();
    let position: BTreeMap<&SnapshotKey, usize> =
        snapshots.iter().enumerate().map(|(i, s)| (s, i)).collect();
    for v in vortices.iter().filter(|v| !v.is_clean()) {
        let key = (v.file.clone(), v.index);
        if let Some((k, _)) = position.get_key_value(&key) {
            *flagged.entry(k).or_default() += 1;
        }
    }
    let mut pick: Vec<usize> = {
        let mut f: Vec<(&SnapshotKey, usize)> = flagged.into_iter().collect();
        f.sort_by(|a, b| b.1.cmp(&a.1).then(position[a.0].cmp(&position[b.0])));
        f.into_iter()
            .take(max / 2 + max % 2)
            .map(|(k, _)| position[k])
            .collect()
    };
    let mut taken = vec![false; snapshots.len()];
    for &p in &pick {
        taken[p] = true;
    }
    let free = max - pick.len();
    let remaining: Vec<usize> = (0..snapshots.len()).filter(|&i| !taken[i]).collect();
    if free > 0 && !remaining.is_empty() {
        let n = free.min(remaining.len());
        for k in 0..n {
            pick.push(remaining[k * remaining.len() / n]);
        }
    }
    pick.sort_unstable();
    pick.dedup();
    pick.into_iter().map(|i| snapshots[i].clone()).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(file: &str, circ: f64, flags: &str, r2: f64) -> Vortex {
        Vortex {
            file: file.into(),
            circulation: Some(circ),
            flags: flags.into(),
            r2: Some(r2),
            ..Default::default()
        }
    }

    #[test]
    fn flagged_come_first_most_doubtful_first_and_sample_is_seeded() {
        let mut rows: Vec<Vortex> = (0..50).map(|i| row("a", i as f64, "", 0.99)).collect();
        rows[3].flags = "window_clipped_by_edge".into();
        rows[7].flags = "low_r_squared;not_converged".into();
        rows[9].flags = "window_clipped_by_edge".into();
        rows[9].r2 = Some(0.5);
        let sel = detail(&rows, 10, 2, 5, 42);
        let idx: Vec<usize> = sel.iter().map(|s| s.0).collect();
        assert_eq!(&idx[..3], &[7, 9, 3]);
        assert_eq!(sel[3], (49, Reason::Strongest { rank: 1 }));
        assert_eq!(sel[4], (48, Reason::Strongest { rank: 2 }));
        assert_eq!(sel.len(), 10);
        assert_eq!(sel, detail(&rows, 10, 2, 5, 42), "same seed, same sample");
        let mut all: Vec<usize> = idx.clone();
        all.sort_unstable();
        all.dedup();
        assert_eq!(all.len(), idx.len(), "no vortex twice");
        let capped = detail(&rows, 1, 0, 0, 1);
        assert_eq!(capped, vec![(7, Reason::Flagged { rank: 1 })]);
    }

    #[test]
    fn maps_are_bounded_and_prefer_flagged_snapshots() {
        let snaps: Vec<SnapshotKey> = (0..100).map(|i| (format!("f{i}"), 0)).collect();
        let rows = vec![row("f57", 1.0, "low_r_squared", 0.5)];
        let m = maps(&rows, &snaps, 6);
        assert_eq!(m.len(), 6);
        assert!(m.contains(&("f57".to_string(), 0)));
        assert!(maps(&rows, &snaps, 0).is_empty());
        assert_eq!(
            parse_snapshot("/a/b#c.npz#3"),
            Some(("/a/b#c.npz".into(), 3))
        );
    }
}
