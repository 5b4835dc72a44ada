//! Source waveforms in `wave=`: `sine(…)`, `square(…)` (named arguments from
//! [`tankwave_netlist::vocab::WAVEFORMS`]) and `table(time: value, …)`.

use super::{fmt_num, Cx};
use crate::ir::Shape;
use crate::models::Range;
use tankwave_netlist::ast::WaveAst;
use tankwave_netlist::suggest::did_you_mean;
use tankwave_netlist::vocab::{self, Place};
use tankwave_netlist::{Slot, Span};

/// The named arguments of a waveform as given: value and span, by position in the vocabulary.
struct Args {
    names: &'static [&'static str],
    got: Vec<Option<(f64, Span)>>,
}

impl Args {
    fn get(&self, i: usize) -> Option<f64> {
        self.got.get(i).copied().flatten().map(|x| x.0)
    }
}

impl<'a> Cx<'a> {
    /// A waveform whose levels are in `slot` (volts or amperes).
    pub(super) fn wave(&mut self, w: &'a WaveAst, slot: Slot) -> Option<Shape> {
        match w.shape.name.as_str() {
            "table" => self.table(w, slot),
            "sine" => {
                let args = self.wave_args(w, slot)?;
                self.sine(w, &args)
            }
            "square" => {
                let args = self.wave_args(w, slot)?;
                self.square(w, &args)
            }
            other => {
                // The parser refuses other shapes; a shape it let through is
                // refused here too rather than read as some default.
                let names: Vec<&str> = vocab::WAVEFORMS.iter().map(|(n, _)| *n).collect();
                let help = did_you_mean(other, names.iter());
                self.error(
                    "unknown-keyword",
                    w.shape.span,
                    format!("unknown waveform '{other}' ({})", names.join(", ")),
                )
                .help = help;
                None
            }
        }
    }

    fn table(&mut self, w: &WaveAst, slot: Slot) -> Option<Shape> {
        let mut pts = Vec::new();
        let mut spans = Vec::new();
        let mut ok = true;
        for (t, v) in &w.points {
            let tv = self.value(t, Slot::Time, "table time");
            let vv = self.value(v, slot, "table value");
            match (tv, vv) {
                (Some(a), Some(b)) => {
                    pts.push((a, b));
                    spans.push(t.span);
                }
                _ => ok = false,
            }
        }
        if !ok {
            return None;
        }
        if pts.len() < 2 {
            self.error(
                "bad-value",
                w.span,
                format!(
                    "table needs at least two time: value points, got {}",
                    pts.len()
                ),
            );
            return None;
        }
        for (i, win) in pts.windows(2).enumerate() {
            if win[1].0 <= win[0].0 {
                self.error(
                    "bad-value",
                    spans[i + 1],
                    format!(
                        "table times must increase, got {} after {}",
                        fmt_num(win[1].0),
                        fmt_num(win[0].0)
                    ),
                );
                return None;
            }
        }
        Some(Shape::Table(pts))
    }

    /// The named arguments of `sine` or `square`: unknown, retired and
    /// duplicate names, each value in its slot.
    fn wave_args(&mut self, w: &WaveAst, slot: Slot) -> Option<Args> {
        let name = w.shape.name.as_str();
        let names = vocab::waveform_args(name).unwrap_or(&[]);
        let mut got: Vec<Option<(f64, Span)>> = vec![None; names.len()];
        let mut ok = true;
        for a in &w.args {
            let n = &a.name;
            let Some(idx) = names.iter().position(|x| *x == n.name) else {
                self.unknown_wave_arg(name, names, n);
                ok = false;
                continue;
            };
            let arg = names[idx];
            if got[idx].is_some() {
                self.error(
                    "duplicate-option",
                    n.span,
                    format!("{name} argument '{arg}' given twice"),
                );
                ok = false;
                continue;
            }
            let s = arg_slot(name, arg, slot);
            let range = if s == Slot::Time {
                Range::NonNegative
            } else {
                Range::Any
            };
            match self.value_in(&a.value, s, &format!("{name} {arg}"), range) {
                Some(v) => got[idx] = Some((v, a.value.span)),
                None => ok = false,
            }
        }
        ok.then_some(Args { names, got })
    }

    fn unknown_wave_arg(&mut self, name: &str, names: &[&str], n: &tankwave_netlist::ast::Ident) {
        if let Some(r) = vocab::retired(&n.name, Place::WaveArgument) {
            if names.contains(&r.new) {
                self.error("old-spelling", n.span, vocab::retired_message(r));
                return;
            }
        }
        let help = did_you_mean(&n.name, names.iter())
            .or_else(|| Some(format!("{name} takes: {}", names.join(", "))));
        self.error(
            "unknown-option",
            n.span,
            format!("{name} has no argument '{}'", n.name),
        )
        .help = help;
    }

    /// A required waveform argument (`missing-option` if absent).
    fn need_arg(&mut self, w: &WaveAst, args: &Args, i: usize) -> Option<f64> {
        let v = args.get(i);
        if v.is_none() {
            self.error(
                "missing-option",
                w.span,
                format!("{} needs {}=", w.shape.name, args.names[i]),
            );
        }
        v
    }

    fn sine(&mut self, w: &WaveAst, args: &Args) -> Option<Shape> {
        let amp = self.need_arg(w, args, 0);
        let freq = self.need_arg(w, args, 1);
        let (amp, freq) = (amp?, freq?);
        if freq <= 0.0 {
            let sp = args.got[1].map(|x| x.1).unwrap_or(w.span);
            self.error(
                "bad-value",
                sp,
                format!("sine freq must be > 0 Hz, got {}", fmt_num(freq)),
            );
            return None;
        }
        Some(Shape::Sine {
            amp,
            freq,
            phase: args.get(2).unwrap_or(0.0).to_radians(),
            offset: args.get(3).unwrap_or(0.0),
            delay: args.get(4).unwrap_or(0.0),
            rise: args.get(5).unwrap_or(0.0),
        })
    }

    fn square(&mut self, w: &WaveAst, args: &Args) -> Option<Shape> {
        let base = self.need_arg(w, args, 0);
        let top = self.need_arg(w, args, 1);
        Some(Shape::Square {
            base: base?,
            top: top?,
            start: args.get(2).unwrap_or(0.0),
            rise: args.get(3).unwrap_or(0.0),
            fall: args.get(4).unwrap_or(0.0),
            hold: args.get(5).unwrap_or(0.0),
            every: args.get(6).unwrap_or(0.0),
        })
    }
}

/// The unit slot of a waveform argument: frequencies, angles and times have
/// their own; levels and amplitudes take the source's.
fn arg_slot(shape: &str, arg: &str, level: Slot) -> Slot {
    match (shape, arg) {
        ("sine", "freq") => Slot::Frequency,
        ("sine", "phase") => Slot::Angle,
        (_, "start" | "rise" | "fall" | "hold" | "every") => Slot::Time,
        _ => level,
    }
}
