//! Drive scaling: the amplitude of the sine wave of the circuit's `input`
//! source multiplied by a factor, for searches at reduced drive (tuning "as
//! on the bench" at a fraction of the drive, reported at full drive).

use tankwave_circuit::{Circuit, ElementKind, Shape};
use tankwave_study::TuneContext;

/// Why the drive could not be scaled.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum DriveError {
    /// The stage names no `input` element.
    #[error("reduced-drive tuning needs an `input` source")]
    NoInput,
    /// The `input` element is not a voltage or current source (or not an
    /// element of the circuit at all, when `element` is `None`).
    #[error("the `input` element is not a source")]
    NotSource {
        /// The element's name.
        element: Option<String>,
    },
    /// The `input` source has no sine wave whose amplitude could be scaled.
    #[error("reduced-drive tuning needs a sine drive")]
    NotSine {
        /// The source's name.
        element: String,
    },
}

/// Multiply the amplitude of the sine wave of the circuit's `input` source
/// (voltage or current) by `k`. The DC value and every other element stay
/// as they are.
pub fn scale_drive(c: &mut Circuit, k: f64) -> Result<(), DriveError> {
    let id = c.input.ok_or(DriveError::NoInput)?;
    let element = match c.elements.get_mut(id.index()) {
        Some(e) => e,
        None => return Err(DriveError::NotSource { element: None }),
    };
    let name = element.name.clone();
    match &mut element.kind {
        ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } => {
            match &mut wave.shape {
                Some(Shape::Sine { amp, .. }) => {
                    *amp *= k;
                    Ok(())
                }
                _ => Err(DriveError::NotSine { element: name }),
            }
        }
        _ => Err(DriveError::NotSource {
            element: Some(name),
        }),
    }
}

/// Prepare a variant for a tuning objective: scale its drive by
/// [`TuneContext::drive_scale`] (see [`scale_drive`]) and make every
/// `analyze steady` use [`TuneContext::method`] when one is given.
pub fn apply_context(c: &mut Circuit, ctx: &TuneContext) -> Result<(), DriveError> {
    if ctx.drive_scale != 1.0 {
        scale_drive(c, ctx.drive_scale)?;
    }
    if let Some(m) = ctx.method {
        for a in &mut c.analyses {
            if let tankwave_circuit::Analysis::Steady { method, .. } = a {
                *method = m;
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn circuit(text: &str) -> Circuit {
        match tankwave_circuit::load_str("t.tank", text, &Default::default()) {
            Ok(e) => e.circuit,
            Err(e) => panic!("test stage must elaborate: {:?}", e.diagnostics),
        }
    }

    fn drive_amp(c: &Circuit) -> Option<f64> {
        let e = c.elements.get(c.input?.index())?;
        match &e.kind {
            ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } => {
                match wave.shape {
                    Some(Shape::Sine { amp, .. }) => Some(amp),
                    _ => None,
                }
            }
            _ => None,
        }
    }

    #[test]
    fn drive_scaling_scales_only_the_sine_amplitude() {
        let mut c = circuit(
            "voltage vdrv src gnd wave=sine(amp=10V, freq=1MHz) internal=50Ohm\n\
             resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n",
        );
        scale_drive(&mut c, 0.25).expect("a sine drive scales");
        assert_eq!(drive_amp(&c), Some(2.5));
    }

    #[test]
    fn drive_scaling_refuses_what_it_cannot_scale() {
        let mut no_input = circuit("voltage v1 a gnd dc=1V\nresistor r1 a gnd 1Ohm\n");
        assert_eq!(scale_drive(&mut no_input, 0.5), Err(DriveError::NoInput));
        let mut dc = circuit("voltage v1 a gnd dc=1V\nresistor r1 a gnd 1Ohm\ninput v1\n");
        let e = scale_drive(&mut dc, 0.5).expect_err("a DC source has no sine");
        assert!(matches!(&e, DriveError::NotSine { element } if element == "v1"));
        assert_eq!(e.to_string(), "reduced-drive tuning needs a sine drive");
    }
}
