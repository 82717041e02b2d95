//! A rehearsed fault for the simulated link (`redress run --simulate --fault-drill …`): the
//! stream stalls, or its device vanishes for a while, at a set time after start. It lets an
//! operator check the watchdog, the restart settings and the alerts on the figures before a
//! real device ever fails, and it is how the tests drive those paths without a sound card.

use std::fmt;
use std::time::Duration;

/// What goes wrong, and when (measured from the service's start).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FaultDrill {
    /// The simulated stream stops delivering audio for good at `at` (a wedged driver): no
    /// device error is reported, the engine's frame counter just stops.
    Stall { at: Duration },
    /// The simulated device is reported gone at `at` and cannot be opened again until
    /// `at + away` (a device unplugged and plugged back, a sound server restarted).
    Loss { at: Duration, away: Duration },
}

/// A `--fault-drill` value that does not parse.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FaultDrillError {
    pub value: String,
    pub why: String,
}

impl fmt::Display for FaultDrillError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "--fault-drill {:?}: {}\n  help: write `stall@SECONDS` (the stream stops for good that \
             long after start) or `loss@SECONDS+SECONDS` (the device vanishes, and comes back \
             after the second figure), e.g. `loss@5+3`",
            self.value, self.why
        )
    }
}

impl std::error::Error for FaultDrillError {}

/// Longest delay or absence a drill may name (a day): anything longer is a typing slip.
const LONGEST: f64 = 86_400.0;

impl std::str::FromStr for FaultDrill {
    type Err = FaultDrillError;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let fail = |why: &str| FaultDrillError {
            value: text.to_string(),
            why: why.to_string(),
        };
        let seconds = |s: &str, what: &str| -> Result<Duration, FaultDrillError> {
            let v: f64 = s
                .trim()
                .parse()
                .map_err(|_| fail(&format!("{what} {s:?} is not a number of seconds")))?;
            if !(v.is_finite() && (0.0..=LONGEST).contains(&v)) {
                return Err(fail(&format!(
                    "{what} must be between 0 and {LONGEST} seconds"
                )));
            }
            Ok(Duration::from_secs_f64(v))
        };
        let (kind, when) = text
            .split_once('@')
            .ok_or_else(|| fail("no `@` between the fault and its time"))?;
        match kind.trim() {
            "stall" => Ok(FaultDrill::Stall {
                at: seconds(when, "the time")?,
            }),
            "loss" => {
                let (at, away) = when.split_once('+').ok_or_else(|| {
                    fail("a loss needs how long the device stays away: `+SECONDS`")
                })?;
                Ok(FaultDrill::Loss {
                    at: seconds(at, "the time")?,
                    away: seconds(away, "the absence")?,
                })
            }
            other => Err(fail(&format!(
                "unknown fault {other:?}; the drills are `stall` and `loss`"
            ))),
        }
    }
}

impl FaultDrill {
    /// When the fault begins, from the service's start.
    pub fn at(&self) -> Duration {
        match *self {
            FaultDrill::Stall { at } | FaultDrill::Loss { at, .. } => at,
        }
    }

    /// Whether a simulated device may be opened `elapsed` after the service's start.
    pub fn device_present(&self, elapsed: Duration) -> bool {
        match *self {
            FaultDrill::Stall { .. } => true,
            FaultDrill::Loss { at, away } => elapsed < at || elapsed >= at + away,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_drills_parse() {
        assert_eq!(
            "stall@2.5".parse::<FaultDrill>(),
            Ok(FaultDrill::Stall {
                at: Duration::from_millis(2500)
            })
        );
        assert_eq!(
            "loss@3+4".parse::<FaultDrill>(),
            Ok(FaultDrill::Loss {
                at: Duration::from_secs(3),
                away: Duration::from_secs(4)
            })
        );
    }

    #[test]
    fn bad_drills_are_refused_with_a_help_line() {
        for bad in [
            "stall",
            "loss@3",
            "melt@3",
            "stall@-1",
            "stall@nan",
            "loss@1+1e9",
        ] {
            let e = bad.parse::<FaultDrill>().expect_err(bad);
            assert!(e.to_string().contains("help:"), "{e}");
        }
    }

    #[test]
    fn a_lost_device_is_away_only_for_its_absence() {
        let drill: FaultDrill = "loss@3+4".parse().unwrap();
        let s = Duration::from_secs_f64;
        assert!(drill.device_present(s(2.9)));
        assert!(!drill.device_present(s(3.0)));
        assert!(!drill.device_present(s(6.9)));
        assert!(drill.device_present(s(7.0)));
    }
}
