//! Shards: the K-th (0-based) of N consecutive, equal-as-possible parts of a run, so that a
//! run too long for one machine is made by N jobs and joined ([`crate::run::join`]). A shard
//! is a segment (a start and a length) chosen by its index: the first `total mod N` shards
//! are one frame longer than the rest, so the N parts cover the run exactly once.

use std::fmt;
use std::path::{Path, PathBuf};
use std::str::FromStr;

use crate::error::{Error, Result, Setting};

/// The placeholder an output name may hold; each shard writes its index there, zero-padded
/// to the width of the largest index (`{shard}` of 3/12 is `03`), so the shards' names sort
/// in order.
pub const SHARD_PLACEHOLDER: &str = "{shard}";

/// Which part of a run: `index` (0-based) of `count` consecutive parts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Shard {
    /// The part, 0 to `count − 1`.
    pub index: u64,
    /// How many parts the run is cut into, at least 1.
    pub count: u64,
}

impl Shard {
    /// Part `index` of `count`; refuses no parts and an index past the last.
    pub fn new(index: u64, count: u64) -> Result<Shard> {
        if count == 0 {
            return Err(Error::setting(
                Setting::Shard,
                "expected K/N with at least one shard (N ≥ 1), got N = 0",
            ));
        }
        if index >= count {
            return Err(Error::setting(
                Setting::Shard,
                format!(
                    "shard {index}/{count} does not exist: shards are numbered from 0 to {} \
                     (K is 0-based)",
                    count - 1
                ),
            ));
        }
        Ok(Shard { index, count })
    }

    /// The first frame and the number of frames of this part of a run of `total` frames.
    /// Refuses more parts than frames (a part would be empty).
    pub fn part(self, total: u64) -> Result<(u64, u64)> {
        if self.count > total {
            return Err(Error::setting(
                Setting::Shard,
                format!(
                    "{self} cuts a run of {total} samples into {} parts, more than it has \
                     samples; use at most {total} shards or a longer run",
                    self.count
                ),
            ));
        }
        let (q, r) = (total / self.count, total % self.count);
        let first = self.index * q + self.index.min(r);
        Ok((first, q + u64::from(self.index < r)))
    }

    /// `path` with every [`SHARD_PLACEHOLDER`] replaced by this shard's index, zero-padded to
    /// the width of `count − 1`; a path without it is returned as it is.
    pub fn file_name(self, path: &Path) -> PathBuf {
        let text = path.to_string_lossy();
        if !text.contains(SHARD_PLACEHOLDER) {
            return path.to_path_buf();
        }
        let width = (self.count - 1).to_string().len();
        let index = format!("{:0width$}", self.index);
        PathBuf::from(text.replace(SHARD_PLACEHOLDER, &index))
    }
}

impl fmt::Display for Shard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

impl FromStr for Shard {
    type Err = Error;

    /// `K/N`: two whole numbers, K from 0 to N − 1.
    fn from_str(text: &str) -> Result<Shard> {
        let bad = || {
            Error::setting(
                Setting::Shard,
                format!(
                    "expected K/N, two whole numbers such as 3/8 (the 4th of 8 shards, K \
                     0-based), got {text:?}"
                ),
            )
        };
        let (k, n) = text.split_once('/').ok_or_else(bad)?;
        let k = k.trim().parse::<u64>().map_err(|_| bad())?;
        let n = n.trim().parse::<u64>().map_err(|_| bad())?;
        Shard::new(k, n)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parts_cover_the_run_once_and_differ_by_at_most_one_frame() {
        for (total, count) in [(1, 1), (10, 3), (10, 10), (1_000_003, 8), (7, 2), (64, 8)] {
            let mut next = 0;
            let mut sizes = Vec::new();
            for index in 0..count {
                let (first, n) = Shard::new(index, count).unwrap().part(total).unwrap();
                assert_eq!(first, next, "{index}/{count} of {total}");
                sizes.push(n);
                next += n;
            }
            assert_eq!(next, total);
            let (lo, hi) = (sizes.iter().min().unwrap(), sizes.iter().max().unwrap());
            assert!(hi - lo <= 1 && *lo >= 1, "{sizes:?}");
        }
        // 10 into 3: 4, 3, 3.
        assert_eq!(Shard::new(0, 3).unwrap().part(10).unwrap(), (0, 4));
        assert_eq!(Shard::new(2, 3).unwrap().part(10).unwrap(), (7, 3));
        assert!(Shard::new(0, 11).unwrap().part(10).is_err());
    }

    #[test]
    fn k_over_n_parses_and_bad_text_is_named() {
        assert_eq!(
            "3/8".parse::<Shard>().unwrap(),
            Shard { index: 3, count: 8 }
        );
        assert_eq!(
            " 0 / 1".parse::<Shard>().unwrap(),
            Shard { index: 0, count: 1 }
        );
        for bad in ["8/8", "3", "a/8", "-1/8", "3/0", "3/8/9", ""] {
            let e = bad.parse::<Shard>().unwrap_err();
            assert_eq!(e.exit_code(), 2, "{bad}");
            assert!(e.cli_text().contains("--shard"), "{bad}: {e}");
        }
    }

    #[test]
    fn the_placeholder_takes_the_padded_index() {
        let s = Shard::new(3, 12).unwrap();
        assert_eq!(
            s.file_name(Path::new("out/n-{shard}.wav")),
            Path::new("out/n-03.wav")
        );
        let s = Shard::new(7, 8).unwrap();
        assert_eq!(
            s.file_name(Path::new("{shard}/a{shard}.npy")),
            Path::new("7/a7.npy")
        );
        assert_eq!(s.file_name(Path::new("plain.wav")), Path::new("plain.wav"));
    }
}
