//! Shards: a deterministic 1/N share of a survey's snapshots, for job arrays on a cluster.
//!
//! The survey's snapshots are ordered once (sorted inputs, then stack index). Shard K of N
//! (K from 0) takes the contiguous block `[K·T/N, (K+1)·T/N)` of the T snapshots: blocks differ
//! in size by at most one snapshot, a stack is split only where a block ends, and the shards
//! together are the whole survey, each snapshot exactly once.

use std::ops::Range;

use anyhow::{anyhow, bail};
use serde::{Deserialize, Serialize};

/// One shard of a survey.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// 0-based index.
    pub index: usize,
    /// Number of shards.
    pub count: usize,
}

impl Shard {
    /// Parses `K/N` (0 ≤ K < N) or `auto` (from SLURM's job-array variables).
    pub fn parse(text: &str, env: impl Fn(&str) -> Option<String>) -> anyhow::Result<Self> {
        if text == "auto" {
            return Self::from_slurm(env);
        }
        let (k, n) = text
            .split_once('/')
            .ok_or_else(|| anyhow!("--shard takes K/N (e.g. 0/16) or auto, got '{text}'"))?;
        let index: usize = k
            .trim()
            .parse()
            .map_err(|_| anyhow!("--shard {text}: K is not a whole number"))?;
        let count: usize = n
            .trim()
            .parse()
            .map_err(|_| anyhow!("--shard {text}: N is not a whole number"))?;
        Self::new(index, count)
    }

    /// A validated shard.
    pub fn new(index: usize, count: usize) -> anyhow::Result<Self> {
        if count == 0 {
            bail!("--shard: the number of shards must be at least 1");
        }
        if index >= count {
            bail!("--shard {index}/{count}: K counts from 0 and must be below N");
        }
        Ok(Self { index, count })
    }

    /// From `SLURM_ARRAY_TASK_ID` with `SLURM_ARRAY_TASK_MIN` and `SLURM_ARRAY_TASK_MAX` (or
    /// `SLURM_ARRAY_TASK_COUNT`): K = ID − MIN, N = MAX − MIN + 1 (or COUNT).
    pub fn from_slurm(env: impl Fn(&str) -> Option<String>) -> anyhow::Result<Self> {
        let get = |name: &str| -> anyhow::Result<Option<usize>> {
            match env(name) {
                None => Ok(None),
                Some(v) => v
                    .trim()
                    .parse()
                    .map(Some)
                    .map_err(|_| anyhow!("--shard auto: {name}='{v}' is not a whole number")),
            }
        };
        let id = get("SLURM_ARRAY_TASK_ID")?.ok_or_else(|| {
            anyhow!("--shard auto: SLURM_ARRAY_TASK_ID is not set (not inside a SLURM job array); give --shard K/N")
        })?;
        let min = get("SLURM_ARRAY_TASK_MIN")?.unwrap_or(0);
        let count = match (get("SLURM_ARRAY_TASK_MAX")?, get("SLURM_ARRAY_TASK_COUNT")?) {
            (Some(max), _) if max >= min => max - min + 1,
            (_, Some(count)) => count,
            _ => bail!("--shard auto: need SLURM_ARRAY_TASK_MAX or SLURM_ARRAY_TASK_COUNT"),
        };
        if id < min {
            bail!("--shard auto: SLURM_ARRAY_TASK_ID {id} is below SLURM_ARRAY_TASK_MIN {min}");
        }
        Self::new(id - min, count)
    }

    /// The block of `total` snapshots this shard takes.
    pub fn range(&self, total: usize) -> Range<usize> {
        let start = self.index * total / self.count;
        let end = (self.index + 1) * total / self.count;
        start..end
    }

    /// Output subfolder, e.g. `shard-0003-of-0016`.
    pub fn folder(&self) -> String {
        format!("shard-{:04}-of-{:04}", self.index, self.count)
    }

    /// Parses a folder name written by [`Shard::folder`].
    pub fn from_folder(name: &str) -> Option<Self> {
        let rest = name.strip_prefix("shard-")?;
        let (k, n) = rest.split_once("-of-")?;
        Self::new(k.parse().ok()?, n.parse().ok()?).ok()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn no_env(_: &str) -> Option<String> {
        None
    }

    proptest! {
        #[test]
        fn shards_are_disjoint_complete_and_balanced(total in 0usize..5000, count in 1usize..200) {
            let mut next = 0;
            let (mut smallest, mut largest) = (usize::MAX, 0);
            for index in 0..count {
                let r = Shard::new(index, count).unwrap().range(total);
                prop_assert_eq!(r.start, next, "contiguous, no gap, no overlap");
                next = r.end;
                smallest = smallest.min(r.len());
                largest = largest.max(r.len());
            }
            prop_assert_eq!(next, total, "complete");
            prop_assert!(largest - smallest <= 1, "balanced");
        }
    }

    #[test]
    fn parse_forms() {
        assert_eq!(
            Shard::parse("3/16", no_env).unwrap(),
            Shard {
                index: 3,
                count: 16
            }
        );
        assert!(Shard::parse("16/16", no_env).is_err());
        assert!(Shard::parse("3-16", no_env).is_err());
        assert!(Shard::parse("a/4", no_env).is_err());
        assert!(Shard::parse("auto", no_env)
            .unwrap_err()
            .to_string()
            .contains("SLURM_ARRAY_TASK_ID"));
    }

    #[test]
    fn auto_reads_slurm_array_variables() {
        let env = |vars: &'static [(&'static str, &'static str)]| {
            move |k: &str| {
                vars.iter()
                    .find(|(n, _)| *n == k)
                    .map(|(_, v)| v.to_string())
            }
        };
        let s = Shard::parse(
            "auto",
            env(&[
                ("SLURM_ARRAY_TASK_ID", "5"),
                ("SLURM_ARRAY_TASK_MIN", "1"),
                ("SLURM_ARRAY_TASK_MAX", "8"),
            ]),
        )
        .unwrap();
        assert_eq!(s, Shard { index: 4, count: 8 });
        let s = Shard::parse(
            "auto",
            env(&[
                ("SLURM_ARRAY_TASK_ID", "2"),
                ("SLURM_ARRAY_TASK_COUNT", "4"),
            ]),
        )
        .unwrap();
        assert_eq!(s, Shard { index: 2, count: 4 });
        assert!(Shard::parse("auto", env(&[("SLURM_ARRAY_TASK_ID", "2")])).is_err());
    }

    #[test]
    fn folder_names_round_trip() {
        let s = Shard::new(3, 16).unwrap();
        assert_eq!(s.folder(), "shard-0003-of-0016");
        assert_eq!(Shard::from_folder("shard-0003-of-0016"), Some(s));
        assert_eq!(Shard::from_folder("shard-0016-of-0016"), None);
    }
}
