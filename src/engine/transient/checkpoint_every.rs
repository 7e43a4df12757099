//! `--checkpoint-every`: a whole number of accepted steps (`--checkpoint-every 20`) or an interval of simulated
//! time with a unit (`--checkpoint-every "30 min"`).

use crate::case::units::{parse_quantity, Dimension};
use crate::exit::InputError;

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum CheckpointEvery {
    Steps(usize),
    /// Simulated seconds.
    Time(f64),
}

impl CheckpointEvery {
    pub fn parse(text: &str) -> Result<Self, InputError> {
        let text = text.trim();
        if let Ok(n) = text.parse::<usize>() {
            return if n == 0 {
                Err(InputError("--checkpoint-every must be at least 1 step".into()))
            } else {
                Ok(CheckpointEvery::Steps(n))
            };
        }
        let q = parse_quantity(text).map_err(|e| {
            InputError(format!(
                "--checkpoint-every {text:?} is neither a number of steps nor a time with a unit such as \"30 min\" ({e})"
            ))
        })?;
        if q.dimension != Dimension::TIME || q.si.is_nan() || q.si <= 0.0 || !q.si.is_finite() {
            return Err(InputError(format!(
                "--checkpoint-every {text:?} must be a positive whole number of steps or a positive time such as \"30 min\""
            )));
        }
        Ok(CheckpointEvery::Time(q.si))
    }

    /// Whether a checkpoint is due at (`steps`, `time`) after the last one at (`last_steps`, `last_time`).
    pub fn due(self, steps: usize, time: f64, last_steps: usize, last_time: f64, eps: f64) -> bool {
        match self {
            CheckpointEvery::Steps(n) => steps >= last_steps + n,
            CheckpointEvery::Time(dt) => time >= last_time + dt - eps,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_or_time_with_unit() {
        assert_eq!(CheckpointEvery::parse("20").unwrap(), CheckpointEvery::Steps(20));
        assert_eq!(CheckpointEvery::parse("30 min").unwrap(), CheckpointEvery::Time(1800.0));
        assert!(CheckpointEvery::parse("0").is_err());
        assert!(CheckpointEvery::parse("3 um").is_err());
        assert!(CheckpointEvery::parse("soon").is_err());
        assert!(CheckpointEvery::Steps(5).due(10, 0.0, 5, 0.0, 0.0));
        assert!(!CheckpointEvery::Steps(5).due(9, 0.0, 5, 0.0, 0.0));
        assert!(CheckpointEvery::Time(60.0).due(0, 120.0, 0, 60.0, 1e-9));
    }
}
