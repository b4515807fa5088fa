//! The points of a sweep: the varied parameters (`--vary NAME=START:STOP:COUNT`), the
//! cartesian product they span, numbered from 0 with the first parameter varying slowest,
//! and the shards (`--shard I/N`) that divide the points between runs.
//!
//! Invariants: point `p`'s values are a pure function of `p` and the parameters, so points
//! are generated one at a time and never stored; shard I of N runs the points with
//! `p % N == I`, with 0 <= I < N.

use serde::{Deserialize, Serialize};

/// Most points one sweep may have.
pub const MAX_POINTS: usize = 1_000_000;

/// One varied parameter.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Vary {
    /// Parameter name.
    pub name: String,
    /// First value.
    pub start: f64,
    /// Last value.
    pub stop: f64,
    /// Number of values, >= 1.
    pub count: usize,
}

impl Vary {
    /// Parses `NAME=START:STOP:COUNT`.
    pub fn parse(s: &str) -> Result<Vary, String> {
        let form = "write --vary NAME=START:STOP:COUNT, for example gap=0.2:1.0:5";
        let (name, range) = s
            .split_once('=')
            .ok_or_else(|| format!("--vary {s}: no `=`: {form}"))?;
        let name = name.trim();
        if name.is_empty() {
            return Err(format!("--vary {s}: no parameter name: {form}"));
        }
        let parts: Vec<&str> = range.split(':').map(str::trim).collect();
        let [a, b, c] = parts[..] else {
            return Err(format!(
                "--vary {s}: `{range}` has {} part(s), not three: {form}",
                parts.len()
            ));
        };
        let number = |t: &str, what: &str| -> Result<f64, String> {
            match t.parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(format!("--vary {s}: {what} `{t}` is not a finite number")),
            }
        };
        let start = number(a, "START")?;
        let stop = number(b, "STOP")?;
        let count: usize = c
            .parse()
            .ok()
            .filter(|&n| n >= 1)
            .ok_or_else(|| format!("--vary {s}: COUNT `{c}` must be a whole number >= 1"))?;
        if count == 1 && start != stop {
            return Err(format!(
                "--vary {s}: with COUNT 1 there is one value: write {name}={start}:{start}:1"
            ));
        }
        Ok(Vary {
            name: name.to_string(),
            start,
            stop,
            count,
        })
    }

    /// Value number k (0-based): evenly spaced, the last exactly STOP; inner values rounded
    /// to 15 significant digits, so that 0.3 + 0.3 is written and used as 0.6, not
    /// 0.6000000000000001.
    pub fn value(&self, k: usize) -> f64 {
        if self.count == 1 || k == 0 {
            self.start
        } else if k + 1 == self.count {
            self.stop
        } else {
            let v = self.start + (self.stop - self.start) * k as f64 / (self.count - 1) as f64;
            format!("{v:.14e}").parse().unwrap_or(v)
        }
    }
}

/// Total number of points of the cartesian product.
pub fn point_count(vary: &[Vary]) -> Result<usize, String> {
    vary.iter().try_fold(1usize, |n, v| {
        n.checked_mul(v.count)
            .filter(|&n| n <= MAX_POINTS)
            .ok_or_else(|| format!("the sweep has more than {MAX_POINTS} points"))
    })
}

/// The parameter values of point `index`: the first parameter varies slowest.
pub fn point_values(vary: &[Vary], index: usize) -> Vec<f64> {
    let mut rest = index;
    let mut ks = vec![0; vary.len()];
    for (k, v) in ks.iter_mut().zip(vary).rev() {
        *k = rest % v.count;
        rest /= v.count;
    }
    ks.iter().zip(vary).map(|(&k, v)| v.value(k)).collect()
}

/// A shard: points with index % count == index.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// I, 0-based.
    pub index: usize,
    /// N.
    pub count: usize,
}

impl Shard {
    /// Parses `I/N` (0 <= I < N).
    pub fn parse(s: &str) -> Result<Shard, String> {
        let bad = || {
            format!(
                "--shard {s}: write I/N with 0 <= I < N, for example 0/4 .. 3/4 (I counts from 0)"
            )
        };
        let (i, n) = s.split_once('/').ok_or_else(bad)?;
        let index: usize = i.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if count == 0 {
            return Err(format!("--shard {s}: N must be at least 1"));
        }
        if index >= count {
            return Err(format!(
                "--shard {s}: I counts from 0, so it must be below N ({}/{count} is the last shard)",
                count - 1
            ));
        }
        Ok(Shard { index, count })
    }

    /// True when this shard runs point `p`.
    pub fn runs(&self, p: usize) -> bool {
        p % self.count == self.index
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vary_parses_and_spaces_values() {
        let v = Vary::parse("gap=0.2:1.0:5").unwrap();
        assert_eq!((v.name.as_str(), v.count), ("gap", 5));
        let vals: Vec<f64> = (0..5).map(|k| v.value(k)).collect();
        assert_eq!(vals[0], 0.2);
        assert_eq!(vals[4], 1.0);
        assert_eq!(vals[2], 0.6);
        assert_eq!(Vary::parse("g=0.3:0.9:3").unwrap().value(1), 0.6);
        assert!(Vary::parse("gap=0.2:1.0").is_err());
        assert!(Vary::parse("gap=0.2:1.0:0").is_err());
        assert!(Vary::parse("gap=a:1.0:2").is_err());
        assert!(Vary::parse("=0:1:2").is_err());
        assert!(Vary::parse("gap=0:1:1").is_err());
        assert!(Vary::parse("gap=1:1:1").is_ok());
    }

    #[test]
    fn first_parameter_varies_slowest() {
        let vary = vec![
            Vary::parse("a=0:1:2").unwrap(),
            Vary::parse("b=10:30:3").unwrap(),
        ];
        assert_eq!(point_count(&vary).unwrap(), 6);
        let pts: Vec<Vec<f64>> = (0..6).map(|p| point_values(&vary, p)).collect();
        assert_eq!(pts[0], vec![0.0, 10.0]);
        assert_eq!(pts[1], vec![0.0, 20.0]);
        assert_eq!(pts[2], vec![0.0, 30.0]);
        assert_eq!(pts[3], vec![1.0, 10.0]);
        assert_eq!(pts[5], vec![1.0, 30.0]);
    }

    #[test]
    fn shard_is_zero_based_and_validated() {
        let s = Shard::parse("1/3").unwrap();
        assert!(s.runs(1) && s.runs(4) && !s.runs(0) && !s.runs(2));
        assert!(Shard::parse("3/3").is_err());
        assert!(Shard::parse("0/0").is_err());
        assert!(Shard::parse("-1/3").is_err());
        assert!(Shard::parse("1").is_err());
    }

    #[test]
    fn point_count_refuses_huge_sweeps() {
        let v = Vary::parse("a=0:1:1001").unwrap();
        assert!(point_count(&[v.clone(), v]).is_err());
    }
}
