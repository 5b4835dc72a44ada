//! Source waveforms: the value over time of an [`ir::Waveform`] and its corners.
//!
//! A source value is `dc_scale·dc + wave_scale·shape(t)` (see
//! [`Waveform::value`]), where the shape is one of
//!
//! * **sine** — `offset + amp·env(t)·sin(2π f (t − start) + phase)` for
//!   `t ≥ start`, `offset` before. The envelope is a raised cosine
//!   `env(t) = ½(1 − cos(π (t − start)/rise))` for `0 ≤ t − start < rise`, and 1
//!   afterwards (1 at once when `rise = 0`). It starts and ends with zero slope,
//!   so switching on a drive does not splash energy into harmonics.
//! * **square** — `base` until `start`, then a linear rise over `rise` to `top`,
//!   `hold` at `top`, a linear fall over `fall` back to `base`, repeated
//!   `every` seconds (0 or ∞ means a single pulse). When `every` is
//!   shorter than `rise + hold + fall` each cycle is cut off there.
//! * **table** — linear between the points `(t_k, v_k)`, held at the first value
//!   before the first point and at the last value after the last one.
//!
//! Corners (transient breakpoints): the square wave's corners, the table's
//! points, the sine's start and the end of its rise.
//!
//! [`check`] refuses non-finite numbers and bad orderings, so [`shape_value`] of
//! a checked shape is never NaN for any time (a NaN time is read as 0).

use crate::error::DeviceError;
use tankwave_circuit::ir::{self, Shape};

/// Largest number of breakpoints one call adds (guards a tiny period over a long window).
pub const MAX_BREAKPOINTS: usize = 1_000_000;

/// Extension methods on [`ir::Waveform`].
pub trait Waveform {
    /// `dc_scale·dc + wave_scale·shape(t)`.
    fn value(&self, t: f64, dc_scale: f64, wave_scale: f64) -> f64;
}

impl Waveform for ir::Waveform {
    fn value(&self, t: f64, dc_scale: f64, wave_scale: f64) -> f64 {
        let s = match &self.shape {
            Some(sh) if wave_scale != 0.0 => wave_scale * shape_value(sh, t),
            _ => 0.0,
        };
        dc_scale * self.dc + s
    }
}

/// The amplitude ramp of a sine's `rise=`, `tau` after its delay: a raised
/// cosine from 0 at `tau = 0` to 1 at `tau = rise` (0 before, 1 after;
/// a step when `rise` is 0). Envelope following drives a keyed stage with
/// it to reproduce what a plain transient of such a source sees.
pub fn rise_ramp(tau: f64, rise: f64) -> f64 {
    if tau <= 0.0 {
        if rise > 0.0 {
            0.0
        } else {
            1.0
        }
    } else if rise > 0.0 && tau < rise {
        0.5 * (1.0 - (std::f64::consts::PI * tau / rise).cos())
    } else {
        1.0
    }
}

/// The value of a shape at time `t` (s).
pub fn shape_value(shape: &Shape, t: f64) -> f64 {
    let t = if t.is_nan() {
        0.0
    } else {
        t.clamp(-f64::MAX, f64::MAX)
    };
    match shape {
        Shape::Sine {
            amp,
            freq,
            phase,
            offset,
            delay,
            rise,
        } => {
            if t < *delay {
                return *offset;
            }
            let tau = t - delay;
            let env = rise_ramp(tau, *rise);
            // Reduce to the fraction of a cycle first: exact for long runs, and
            // finite even when freq·tau overflows.
            let cycles = freq * tau;
            let frac = if cycles.is_finite() {
                cycles - cycles.floor()
            } else {
                0.0
            };
            offset + amp * env * (std::f64::consts::TAU * frac + phase).sin()
        }
        Shape::Square {
            base: low,
            top: high,
            start: delay,
            rise,
            fall,
            hold: width,
            every: period,
        } => {
            if t < *delay {
                return *low;
            }
            let mut tt = t - delay;
            if period.is_finite() && *period > 0.0 {
                tt = tt.rem_euclid(*period);
            }
            if tt < *rise {
                low + (high - low) * tt / rise
            } else if tt < rise + width {
                *high
            } else if tt < rise + width + fall {
                high - (high - low) * (tt - rise - width) / fall
            } else {
                *low
            }
        }
        Shape::Table(pts) => table_value(pts, t),
    }
}

fn table_value(pts: &[(f64, f64)], t: f64) -> f64 {
    let (Some(first), Some(last)) = (pts.first(), pts.last()) else {
        return 0.0;
    };
    if t <= first.0 {
        return first.1;
    }
    if t >= last.0 {
        return last.1;
    }
    // First point with time > t; it exists and is not the first (t > first.0, t < last.0).
    let k = pts.partition_point(|p| p.0 <= t);
    let (t0, v0) = pts[k - 1];
    let (t1, v1) = pts[k];
    let dt = t1 - t0;
    if dt > 0.0 {
        v0 + (v1 - v0) * (t - t0) / dt
    } else {
        v1
    }
}

/// Append the corners of `shape` in `[t0, t1)` to `out` (in increasing order,
/// at most [`MAX_BREAKPOINTS`]).
pub fn breakpoints(shape: &Shape, t0: f64, t1: f64, out: &mut Vec<f64>) {
    if t0.partial_cmp(&t1) != Some(std::cmp::Ordering::Less) {
        return;
    }
    let push = |t: f64, out: &mut Vec<f64>| {
        if t >= t0 && t < t1 && t.is_finite() {
            out.push(t);
        }
    };
    match shape {
        Shape::Sine { delay, rise, .. } => {
            push(*delay, out);
            if *rise > 0.0 {
                push(delay + rise, out);
            }
        }
        Shape::Square {
            start: delay,
            rise,
            fall,
            hold: width,
            every: period,
            ..
        } => {
            let corners = [0.0, *rise, rise + width, rise + width + fall];
            let periodic = period.is_finite() && *period > 0.0;
            let start = out.len();
            if !periodic {
                for c in corners {
                    push(delay + c, out);
                }
            } else {
                // First cycle that can have a corner at or after t0.
                let k0 = ((t0 - delay - rise - width - fall) / period)
                    .floor()
                    .max(0.0);
                let mut k = k0;
                loop {
                    let base = delay + k * period;
                    if base >= t1 || out.len() - start >= MAX_BREAKPOINTS {
                        break;
                    }
                    for c in corners {
                        // A corner beyond the period belongs to a truncated cycle.
                        if c <= *period {
                            push(base + c, out);
                        }
                    }
                    k += 1.0;
                }
            }
            let tail = &mut out[start..];
            tail.sort_by(f64::total_cmp);
            let mut keep = start;
            for i in start..out.len() {
                if keep == start || out[i] > out[keep - 1] {
                    out[keep] = out[i];
                    keep += 1;
                }
            }
            out.truncate(keep);
        }
        Shape::Table(pts) => {
            for &(t, _) in pts {
                push(t, out);
            }
        }
    }
}

fn bad(element: &str, param: &'static str, value: f64, reason: &'static str) -> DeviceError {
    DeviceError::BadParameter {
        element: element.to_string(),
        param,
        value,
        reason,
    }
}

/// Check a waveform for numbers that would make its value undefined.
/// `element` names the source in the error.
pub fn check(w: &ir::Waveform, element: &str) -> Result<(), DeviceError> {
    let fin = |p: &'static str, v: f64| {
        if v.is_finite() {
            Ok(())
        } else {
            Err(bad(element, p, v, "must be finite"))
        }
    };
    let nonneg = |p: &'static str, v: f64| {
        if v.is_finite() && v >= 0.0 {
            Ok(())
        } else {
            Err(bad(element, p, v, "must be finite and ≥ 0"))
        }
    };
    fin("dc", w.dc)?;
    match &w.shape {
        None => Ok(()),
        Some(Shape::Sine {
            amp,
            freq,
            phase,
            offset,
            delay,
            rise,
        }) => {
            fin("amp", *amp)?;
            nonneg("freq", *freq)?;
            fin("phase", *phase)?;
            fin("offset", *offset)?;
            fin("start", *delay)?;
            nonneg("rise", *rise)
        }
        Some(Shape::Square {
            base: low,
            top: high,
            start: delay,
            rise,
            fall,
            hold: width,
            every: period,
        }) => {
            fin("base", *low)?;
            fin("top", *high)?;
            fin("start", *delay)?;
            nonneg("rise", *rise)?;
            nonneg("fall", *fall)?;
            nonneg("hold", *width)?;
            if period.is_nan() || *period < 0.0 {
                return Err(bad(
                    element,
                    "every",
                    *period,
                    "must be ≥ 0 (0 or ∞ = single pulse)",
                ));
            }
            Ok(())
        }
        Some(Shape::Table(pts)) => {
            let mut prev = f64::NEG_INFINITY;
            for &(t, v) in pts {
                fin("table time", t)?;
                fin("table value", v)?;
                if t <= prev {
                    return Err(bad(
                        element,
                        "table time",
                        t,
                        "times must increase strictly",
                    ));
                }
                prev = t;
            }
            Ok(())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::{PI, TAU};

    fn sine(rise: f64) -> Shape {
        Shape::Sine {
            amp: 2.0,
            freq: 1e6,
            phase: 0.3,
            offset: 0.5,
            delay: 1e-6,
            rise,
        }
    }

    // Closed form: the definition in ir::Shape::Sine and the module doc.
    #[test]
    fn sine_matches_closed_form() {
        let s = sine(0.0);
        assert_eq!(shape_value(&s, 0.0), 0.5);
        assert_eq!(shape_value(&s, 0.999e-6), 0.5);
        for k in 0..50 {
            let t = 1e-6 + k as f64 * 3.7e-8;
            let want = 0.5 + 2.0 * (TAU * 1e6 * (t - 1e-6) + 0.3).sin();
            // Same formula evaluated in a different order: rounding only.
            assert!((shape_value(&s, t) - want).abs() < 1e-12);
        }
    }

    #[test]
    fn sine_rise_is_raised_cosine() {
        let rise = 4e-6;
        let s = sine(rise);
        for k in 0..=40 {
            let tau = k as f64 * 1e-7;
            let t = 1e-6 + tau;
            let env = if tau < rise {
                0.5 * (1.0 - (PI * tau / rise).cos())
            } else {
                1.0
            };
            let want = 0.5 + 2.0 * env * (TAU * 1e6 * tau + 0.3).sin();
            assert!((shape_value(&s, t) - want).abs() < 1e-12, "t={t}");
        }
        // Continuous at the delay (envelope starts at 0) and at the end of the rise.
        assert!((shape_value(&s, 1e-6) - 0.5).abs() < 1e-15);
        let e = 1e-15;
        let before = shape_value(&s, 1e-6 + rise - e);
        let after = shape_value(&s, 1e-6 + rise + e);
        // Slope ≤ 2π f amp ≈ 1.3e7 /s; over 2e-15 s that is < 1e-7.
        assert!((before - after).abs() < 1e-7);
    }

    #[test]
    fn pulse_matches_definition() {
        let p = Shape::Square {
            base: -1.0,
            top: 3.0,
            start: 1.0,
            rise: 0.5,
            fall: 0.25,
            hold: 2.0,
            every: 5.0,
        };
        let cases = [
            (0.0, -1.0),
            (1.0, -1.0),
            (1.25, 1.0),  // halfway up
            (1.5, 3.0),   // top
            (3.0, 3.0),   // still high
            (3.625, 1.0), // halfway down: 1 + 0.5 + 2 + 0.125
            (3.75, -1.0), // low again
            (5.9, -1.0),
            (6.25, 1.0), // next period halfway up
            (11.25, 1.0),
        ];
        for (t, want) in cases {
            assert!((shape_value(&p, t) - want).abs() < 1e-12, "t={t}");
        }
        let mut bp = Vec::new();
        breakpoints(&p, 0.0, 7.0, &mut bp);
        assert_eq!(bp, vec![1.0, 1.5, 3.5, 3.75, 6.0, 6.5]);
        bp.clear();
        breakpoints(&p, 3.6, 6.2, &mut bp);
        assert_eq!(bp, vec![3.75, 6.0]);
    }

    #[test]
    fn single_pulse_and_zero_edges() {
        let p = Shape::Square {
            base: 0.0,
            top: 1.0,
            start: 0.0,
            rise: 0.0,
            fall: 0.0,
            hold: 1.0,
            every: 0.0,
        };
        assert_eq!(shape_value(&p, 0.0), 1.0);
        assert_eq!(shape_value(&p, 0.5), 1.0);
        assert_eq!(shape_value(&p, 1.0), 0.0);
        assert_eq!(shape_value(&p, 100.0), 0.0);
        let mut bp = Vec::new();
        breakpoints(&p, 0.0, 10.0, &mut bp);
        assert_eq!(bp, vec![0.0, 1.0]);
    }

    #[test]
    fn pwl_interpolates_and_holds() {
        let w = Shape::Table(vec![(1.0, 2.0), (2.0, 4.0), (4.0, 0.0)]);
        let cases = [
            (0.0, 2.0),
            (1.0, 2.0),
            (1.5, 3.0),
            (2.0, 4.0),
            (3.0, 2.0),
            (4.0, 0.0),
            (9.0, 0.0),
        ];
        for (t, want) in cases {
            assert!((shape_value(&w, t) - want).abs() < 1e-15, "t={t}");
        }
        let mut bp = Vec::new();
        breakpoints(&w, 1.5, 4.0, &mut bp);
        assert_eq!(bp, vec![2.0]);
        assert_eq!(shape_value(&Shape::Table(vec![]), 1.0), 0.0);
    }

    #[test]
    fn sine_breakpoints() {
        let mut bp = Vec::new();
        breakpoints(&sine(2e-6), 0.0, 1.0, &mut bp);
        assert_eq!(bp, vec![1e-6, 3e-6]);
        bp.clear();
        breakpoints(&sine(0.0), 0.0, 1.0, &mut bp);
        assert_eq!(bp, vec![1e-6]);
    }

    #[test]
    fn scales_apply_to_parts() {
        let w = ir::Waveform {
            dc: 10.0,
            shape: Some(Shape::Table(vec![(0.0, 1.0)])),
        };
        assert_eq!(w.value(5.0, 1.0, 1.0), 11.0);
        assert_eq!(w.value(5.0, 0.5, 0.0), 5.0);
        assert_eq!(w.value(5.0, 0.0, 2.0), 2.0);
    }

    #[test]
    fn check_refuses_bad_numbers() {
        let mut w = ir::Waveform {
            dc: 0.0,
            shape: Some(Shape::Table(vec![(1.0, 0.0), (1.0, 1.0)])),
        };
        assert!(check(&w, "v1").is_err());
        w.shape = Some(sine(-1.0));
        assert!(check(&w, "v1").is_err());
        w.shape = Some(sine(1.0));
        assert!(check(&w, "v1").is_ok());
        w.dc = f64::NAN;
        assert!(check(&w, "v1").is_err());
    }

    #[test]
    fn never_nan_for_odd_times() {
        let shapes = [
            sine(1e-6),
            Shape::Square {
                base: 0.0,
                top: 1.0,
                start: 0.0,
                rise: 0.0,
                fall: 0.0,
                hold: 0.0,
                every: 1e-9,
            },
            Shape::Table(vec![(0.0, 1.0), (1.0, 2.0)]),
        ];
        for s in &shapes {
            for t in [
                f64::NAN,
                f64::INFINITY,
                f64::NEG_INFINITY,
                1e300,
                -1e300,
                0.0,
            ] {
                assert!(shape_value(s, t).is_finite(), "{s:?} at {t}");
            }
        }
    }
}
