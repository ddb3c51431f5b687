//! The frequency sweep of `[sweep]`: the frequencies at which the coming full-wave solver
//! (`rafter sweep`) computes S-parameters. The capacitance extraction ignores it.

use crate::error::{Ctx, LayoutError, MISSING, fmt_str};
use crate::file::RawSweep;

/// Largest accepted `sweep.points`: every point is a full-wave solve, and the list of
/// frequencies must stay small enough to allocate.
pub const MAX_SWEEP_POINTS: usize = 100_000;

/// How the sweep's frequencies are spread between `start` and `stop`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Spacing {
    /// Evenly spaced: equal differences between neighbours (`spacing = "linear"`, the default).
    Linear,
    /// Geometrically spaced: equal ratios between neighbours (`spacing = "log"`).
    Log,
}

impl Spacing {
    /// The name written in layout files: `linear` or `log`.
    pub fn name(self) -> &'static str {
        match self {
            Spacing::Linear => "linear",
            Spacing::Log => "log",
        }
    }
}

/// A validated frequency sweep: `points` frequencies from `start` to `stop` (both included).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sweep {
    /// First frequency (Hz), finite and positive.
    pub start: f64,
    /// Last frequency (Hz), finite, at least `start`; equal to it only when `points` is 1.
    pub stop: f64,
    /// Number of frequencies, 1 to [`MAX_SWEEP_POINTS`].
    pub points: usize,
    /// How the frequencies are spread.
    pub spacing: Spacing,
}

impl Sweep {
    /// The frequencies (Hz), ascending, `points` of them, the first exactly `start` and the last
    /// exactly `stop` (a single point gives `[start]`).
    ///
    /// Linear: `start + (stop − start)·k/(points − 1)`. Log: `start·(stop/start)^(k/(points − 1))`,
    /// computed as the exponential of the interpolated natural logarithms.
    pub fn frequencies(&self) -> Vec<f64> {
        let n = self.points;
        if n <= 1 {
            return vec![self.start; n];
        }
        let last = (n - 1) as f64;
        let (a, b) = (self.start, self.stop);
        let mut f: Vec<f64> = (0..n)
            .map(|k| match self.spacing {
                Spacing::Linear => a + (b - a) * k as f64 / last,
                Spacing::Log => (a.ln() + k as f64 / last * (b.ln() - a.ln())).exp(),
            })
            .collect();
        f[0] = a;
        f[n - 1] = b;
        f
    }
}

/// Validates `[sweep]`, if present.
pub(crate) fn build(raw: Option<&RawSweep>, ctx: Ctx<'_>) -> Result<Option<Sweep>, LayoutError> {
    let Some(raw) = raw else { return Ok(None) };
    let frequency = |key: &str, value: Option<f64>| -> Result<f64, LayoutError> {
        match value {
            None => Err(ctx.invalid(
                format!("sweep.{key}"),
                MISSING,
                format!("a sweep needs its {key} frequency"),
                format!("add {key} = ... in Hz (e.g. 1e9 for 1 GHz), or remove [sweep]"),
            )),
            Some(f) if !(f.is_finite() && f > 0.0) => Err(ctx.invalid(
                format!("sweep.{key}"),
                format!("{f}"),
                "frequencies must be positive and finite",
                "give the frequency in Hz (e.g. 1e9 for 1 GHz); the sweep cannot include DC",
            )),
            Some(f) => Ok(f),
        }
    };
    let start = frequency("start", raw.start)?;
    let stop = frequency("stop", raw.stop)?;
    let points = match raw.points {
        None => {
            return Err(ctx.invalid(
                "sweep.points",
                MISSING,
                "a sweep needs its number of frequencies",
                "add points = ... (an integer, at least 1)",
            ));
        }
        Some(p) if p < 1 => {
            return Err(ctx.invalid(
                "sweep.points",
                format!("{p}"),
                "the number of frequencies must be at least 1",
                "give points = 1 for a single frequency, or more for a sweep",
            ));
        }
        Some(p) if p as u64 > MAX_SWEEP_POINTS as u64 => {
            return Err(ctx.invalid(
                "sweep.points",
                format!("{p}"),
                format!("more than {MAX_SWEEP_POINTS} frequencies"),
                "every frequency is a full solve; use fewer points (log spacing covers decades with few)",
            ));
        }
        Some(p) => p as usize,
    };
    if stop < start {
        return Err(ctx.invalid(
            "sweep.stop",
            format!("{stop}"),
            format!("the sweep stops below its start ({start} Hz)"),
            "stop is the highest frequency: swap start and stop",
        ));
    }
    if stop == start && points > 1 {
        return Err(ctx.invalid(
            "sweep.stop",
            format!("{stop}"),
            format!("equals start, so the {points} points would all be the same frequency"),
            "raise stop above start, or set points = 1 for a single frequency",
        ));
    }
    let spacing = match raw.spacing.as_deref() {
        None | Some("linear") => Spacing::Linear,
        Some("log") => Spacing::Log,
        Some(other) => {
            return Err(ctx.invalid(
                "sweep.spacing",
                fmt_str(other),
                "unknown spacing",
                "use spacing = \"linear\" (equal steps, the default) or \"log\" (equal ratios)",
            ));
        }
    };
    Ok(Some(Sweep { start, stop, points, spacing }))
}
