//! pn-junction physics shared by the diode and the bipolar transistor.
//!
//! Everything here is a pure function of numbers (no circuit, no stamps), so
//! any junction model can use it:
//!
//! * [`thermal_voltage`] — `V_t = k T / q` with the exact CODATA 2018 constants
//!   ([`BOLTZMANN`], [`ELEMENTARY_CHARGE`]; E. Tiesinga et al., Rev. Mod. Phys. 93,
//!   025010, 2021).
//! * [`exp_guarded`] — `exp(x)` with a linear continuation above
//!   [`EXP_ARG_MAX`] = 80: `exp(80)·(1 + x − 80)`. Value and slope are
//!   continuous at the joint, so Newton still sees a consistent Jacobian, and no
//!   junction current can overflow to ∞ (at IS = 1e-14 A the joint is at
//!   5.5e20 A, far beyond any real device). Common practice.
//! * [`junction_current`] — `I = IS (exp(V/(n V_t)) − 1)` through the guard.
//! * [`critical_voltage`] and [`limit_junction`] — Newton step limiting of a
//!   junction voltage (L. W. Nagel, ERL M520, 1975; from memory, as written in
//!   docs/check-values.md):
//!   `Vcrit = nVt ln(nVt/(√2 IS))`; if `Vnew > Vcrit` and
//!   `|Vnew − Vold| > 2nVt`: with `Vold > 0`,
//!   `Vnew = Vold + nVt ln(1 + (Vnew − Vold)/nVt)` (or `Vcrit` when the log
//!   argument is ≤ 0); otherwise `Vnew = nVt ln(Vnew/nVt)`.
//! * [`Depletion`] — depletion charge and capacitance of a graded junction,
//!   `C = Cj0 (1 − V/Vj)^−m` for `V < FC·Vj`, continued linearly above:
//!   `C = Cj0 (1 − FC)^−(1+m) (1 − FC(1+m) + m V/Vj)`. The charge is the
//!   integral of C from 0, so it is continuous and `dQ/dV = C` on both sides
//!   (forms from memory; the forward linearisation is common practice and
//!   avoids the pole at `V = Vj`).
//! * [`sat_current_at`] — temperature scaling of a saturation current,
//!   `IS(T) = IS·(T/Tm)^(XTI/n)·exp((Eg q/(n k))(1/Tm − 1/T))`, the form
//!   published in I. Getreu, Modeling the Bipolar Transistor, 1976 (from memory).

/// Boltzmann constant k, J/K (CODATA 2018, exact).
pub const BOLTZMANN: f64 = 1.380649e-23;
/// Elementary charge q, C (CODATA 2018, exact).
pub const ELEMENTARY_CHARGE: f64 = 1.602176634e-19;
/// Exponent argument above which [`exp_guarded`] continues linearly.
pub const EXP_ARG_MAX: f64 = 80.0;

/// Thermal voltage `k T / q`, V, at `t_k` kelvin.
pub fn thermal_voltage(t_k: f64) -> f64 {
    BOLTZMANN * t_k / ELEMENTARY_CHARGE
}

/// `(exp(x), d/dx exp(x))`, continued linearly above [`EXP_ARG_MAX`].
/// Finite for every `x` below 1e270 (about 1e268 V across a junction), far
/// beyond any circuit voltage; below −745 it underflows to 0 like `exp`.
pub fn exp_guarded(x: f64) -> (f64, f64) {
    if x > EXP_ARG_MAX {
        let e = EXP_ARG_MAX.exp();
        (e * (1.0 + (x - EXP_ARG_MAX)), e)
    } else {
        let e = x.exp();
        (e, e)
    }
}

/// Ideal junction current and conductance `(IS (exp(v/nVt) − 1), dI/dv)`,
/// with `n_vt` = n·V_t, through [`exp_guarded`].
pub fn junction_current(v: f64, is: f64, n_vt: f64) -> (f64, f64) {
    let x = v / n_vt;
    let (em1, de) = exp_m1_guarded(x);
    (is * em1, is * de / n_vt)
}

/// `(exp(x) − 1, d/dx exp(x))` through the same guard as [`exp_guarded`];
/// uses `exp_m1` below the joint so small-signal currents near zero bias keep
/// full relative precision.
pub fn exp_m1_guarded(x: f64) -> (f64, f64) {
    if x > EXP_ARG_MAX {
        let (e, de) = exp_guarded(x);
        (e - 1.0, de)
    } else {
        (x.exp_m1(), x.exp())
    }
}

/// Critical voltage `nVt ln(nVt/(√2 IS))`, V: the voltage where the junction's
/// current-curve radius of curvature is smallest; limiting starts above it.
pub fn critical_voltage(n_vt: f64, is: f64) -> f64 {
    n_vt * (n_vt / (std::f64::consts::SQRT_2 * is)).ln()
}

/// Limit a new junction voltage `vnew` against the previous one `vold`
/// (see the module doc). Returns the voltage to use and whether it was changed.
pub fn limit_junction(vnew: f64, vold: f64, n_vt: f64, vcrit: f64) -> (f64, bool) {
    if vnew > vcrit && (vnew - vold).abs() > 2.0 * n_vt {
        let v = if vold > 0.0 {
            let arg = 1.0 + (vnew - vold) / n_vt;
            if arg > 0.0 {
                vold + n_vt * arg.ln()
            } else {
                vcrit
            }
        } else {
            n_vt * (vnew / n_vt).ln()
        };
        (v, true)
    } else {
        (vnew, false)
    }
}

/// Saturation current at temperature `t` (K) from its value `is` at `t_meas`
/// (K): `IS·(T/Tm)^(XTI/n)·exp((Eg q/(n k))(1/Tm − 1/T))`, `eg_ev` in eV
/// (Getreu 1976, from memory).
pub fn sat_current_at(is: f64, n: f64, xti: f64, eg_ev: f64, t_meas: f64, t: f64) -> f64 {
    let ratio = t / t_meas;
    let eg_over_k = eg_ev * ELEMENTARY_CHARGE / BOLTZMANN; // kelvin
    is * ratio.powf(xti / n) * ((eg_over_k / n) * (1.0 / t_meas - 1.0 / t)).exp()
}

/// A parameter outside its valid range: `(name, value, reason)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParamIssue {
    /// Which parameter, in the diode's stage-file spelling (`cj0`, `v_junction`,
    /// `grading`, `linear_from`); other models map these to their own names.
    pub param: &'static str,
    /// Its value.
    pub value: f64,
    /// The valid range.
    pub reason: &'static str,
}

/// Depletion charge of a graded junction (see the module doc).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Depletion {
    /// Zero-bias capacitance C_j0, F (≥ 0).
    pub cj0: f64,
    /// Built-in potential V_j, V (> 0).
    pub vj: f64,
    /// Grading exponent m (≥ 0).
    pub m: f64,
    /// Fraction F_C of V_j above which C is continued linearly (0 ≤ F_C < 1).
    pub fc: f64,
}

impl Depletion {
    /// Check the ranges that keep [`Depletion::eval`] finite.
    pub fn validate(&self) -> Result<(), ParamIssue> {
        let issue = |param, value, reason| {
            Err(ParamIssue {
                param,
                value,
                reason,
            })
        };
        if !(self.cj0.is_finite() && self.cj0 >= 0.0) {
            return issue("cj0", self.cj0, "must be finite and ≥ 0");
        }
        if !(self.vj.is_finite() && self.vj > 0.0) {
            return issue("v_junction", self.vj, "must be finite and > 0");
        }
        if !(self.m.is_finite() && self.m >= 0.0) {
            return issue("grading", self.m, "must be finite and ≥ 0");
        }
        if !(self.fc.is_finite() && (0.0..1.0).contains(&self.fc)) {
            return issue("linear_from", self.fc, "must satisfy 0 ≤ F_C < 1");
        }
        Ok(())
    }

    /// Charge below the corner: ∫₀^v Cj0 (1 − u/Vj)^−m du.
    fn q_power(&self, v: f64) -> f64 {
        let x = 1.0 - v / self.vj;
        if (self.m - 1.0).abs() < 1e-12 {
            -self.cj0 * self.vj * x.ln()
        } else {
            self.cj0 * self.vj / (1.0 - self.m) * (1.0 - x.powf(1.0 - self.m))
        }
    }

    /// `(Q(v), C(v) = dQ/dv)` in C and F. Requires [`Depletion::validate`].
    pub fn eval(&self, v: f64) -> (f64, f64) {
        if self.cj0 == 0.0 {
            return (0.0, 0.0);
        }
        let vc = self.fc * self.vj;
        if v < vc {
            let x = 1.0 - v / self.vj;
            (self.q_power(v), self.cj0 * x.powf(-self.m))
        } else {
            let f2 = (1.0 - self.fc).powf(1.0 + self.m);
            let f3 = 1.0 - self.fc * (1.0 + self.m);
            let k = self.cj0 / f2;
            let dv = v - vc;
            let q = self.q_power(vc) + k * (f3 * dv + self.m / (2.0 * self.vj) * (v * v - vc * vc));
            (q, k * (f3 + self.m * v / self.vj))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // docs/check-values.md, "Constants": CODATA 2018 thermal voltages.
    #[test]
    fn thermal_voltage_codata() {
        // Values given to 12 digits; f64 rounding is far below 1e-12 V.
        assert!((thermal_voltage(300.15) - 0.025864925786).abs() < 1e-12);
        assert!((thermal_voltage(300.0) - 0.025851999786).abs() < 1e-12);
    }

    // docs/check-values.md, "Junction voltage limiting" (Nagel 1975, memory):
    // IS 1e-14 A, 300.15 K, n = 1. Values printed to 9 decimals, so 1e-9 V.
    #[test]
    fn critical_voltage_and_limiting_vectors() {
        let vt = thermal_voltage(300.15);
        let vc = critical_voltage(vt, 1e-14);
        assert!((vc - 0.730289720).abs() < 1e-9, "{vc}");
        let cases = [
            (5.0, 0.6, 0.733006066, true),
            (1.0, 0.65, 0.719223387, true),
            (0.70, 0.69, 0.70, false),
            (3.0, 0.0, 0.122948401, true),
        ];
        for (vn, vo, want, lim) in cases {
            let (v, l) = limit_junction(vn, vo, vt, vc);
            assert!((v - want).abs() < 1e-9, "({vn}, {vo}) → {v}, want {want}");
            assert_eq!(l, lim);
        }
        // The fallback branch: a huge negative old value makes the log argument ≤ 0
        // only when vnew < vold, which with vnew > vcrit needs vold > vcrit + 2nVt.
        let (v, l) = limit_junction(0.8, 5.0, vt, vc);
        assert_eq!((v, l), (vc, true));
    }

    #[test]
    fn exp_guard_is_continuous_with_slope() {
        // h = 2^-10 keeps 80 + h exact; above the joint the continuation is linear.
        let h = 1.0 / 1024.0;
        let (a, da) = exp_guarded(EXP_ARG_MAX);
        let (b, db) = exp_guarded(EXP_ARG_MAX + h);
        assert_eq!(a, EXP_ARG_MAX.exp());
        assert!(((b - a) / h - da).abs() / da < 1e-12);
        // Below the joint, exp's own slope tends to the same value.
        let (c, _) = exp_guarded(EXP_ARG_MAX - h);
        assert!(((a - c) / h - da).abs() / da < 1e-3); // one-sided: error ≈ h/2
        assert_eq!(da, db);
        assert!(exp_guarded(1e269).0.is_finite());
        assert_eq!(exp_guarded(-1000.0), (0.0, 0.0));
        assert_eq!(exp_guarded(1.0).0, 1f64.exp());
    }

    fn fd(d: &Depletion, v: f64, h: f64) -> f64 {
        (d.eval(v + h).0 - d.eval(v - h).0) / (2.0 * h)
    }

    #[test]
    fn depletion_capacitance_is_charge_slope_both_sides_of_corner() {
        for &m in &[0.33, 0.5, 1.0, 1.5] {
            let d = Depletion {
                cj0: 2e-12,
                vj: 0.75,
                m,
                fc: 0.5,
            };
            d.validate().unwrap();
            let vc = d.fc * d.vj;
            // Closed form below the corner: Cj = Cj0 (1 − V/Vj)^−m, the
            // abrupt/graded junction depletion capacitance (I. Getreu,
            // Modeling the Bipolar Transistor, 1976; from memory, as in
            // check-values.md).
            for v in [-20.0, -1.0, 0.0, 0.2] {
                let c = d.eval(v).1;
                let want = 2e-12 * (1.0 - v / 0.75).powf(-m);
                assert!((c - want).abs() < 1e-12 * want, "m={m} v={v}");
            }
            // h = 1e-6 V: central difference error ~ h²·C''/6, relative < 1e-9 here.
            for v in [-20.0, -1.0, 0.0, 0.2, vc - 1e-4, vc + 1e-4, 0.5, 0.9, 2.0] {
                let c = d.eval(v).1;
                let cfd = fd(&d, v, 1e-6);
                assert!(
                    (c - cfd).abs() < 1e-7 * c,
                    "m={m} v={v}: C {c:e} vs dQ/dV {cfd:e}"
                );
            }
            // Continuity at the corner: charge and capacitance from both sides.
            let (ql, cl) = d.eval(vc - 1e-12);
            let (qr, cr) = d.eval(vc);
            assert!((ql - qr).abs() < 1e-22, "m={m}");
            assert!((cl - cr).abs() < 1e-9 * cr, "m={m}");
            assert!((cr - 2e-12 * (1.0f64 - d.fc).powf(-m)).abs() < 1e-9 * cr);
            assert_eq!(d.eval(0.0).0, 0.0);
        }
        // Above the corner C is linear in V: equal steps give equal increments.
        let d = Depletion {
            cj0: 1e-12,
            vj: 0.8,
            m: 0.4,
            fc: 0.6,
        };
        let (c1, c2, c3) = (d.eval(1.0).1, d.eval(2.0).1, d.eval(3.0).1);
        assert!(((c2 - c1) - (c3 - c2)).abs() < 1e-9 * c1);
    }

    #[test]
    fn depletion_validation() {
        let ok = Depletion {
            cj0: 1e-12,
            vj: 0.7,
            m: 0.5,
            fc: 0.5,
        };
        assert!(ok.validate().is_ok());
        assert_eq!(
            Depletion { fc: 1.0, ..ok }.validate().unwrap_err().param,
            "linear_from"
        );
        assert_eq!(
            Depletion { vj: 0.0, ..ok }.validate().unwrap_err().param,
            "v_junction"
        );
        assert_eq!(
            Depletion { m: -1.0, ..ok }.validate().unwrap_err().param,
            "grading"
        );
        assert_eq!(
            Depletion {
                cj0: f64::NAN,
                ..ok
            }
            .validate()
            .unwrap_err()
            .param,
            "cj0"
        );
    }

    // Getreu 1976 form (from memory), written out independently here as
    // IS·exp( (T/Tm − 1)·Eg/(n·Vt(T)) + (XTI/n)·ln(T/Tm) ) — algebraically equal.
    #[test]
    fn saturation_current_temperature_scaling() {
        let (is, n, xti, eg, tm) = (1e-14, 1.2, 3.0, 1.11, 298.15);
        for t in [250.0, 298.15, 350.0, 400.0] {
            let vt = thermal_voltage(t);
            let want = is * ((t / tm - 1.0) * eg / (n * vt) + (xti / n) * (t / tm).ln()).exp();
            let got = sat_current_at(is, n, xti, eg, tm, t);
            assert!(
                (got - want).abs() < 1e-12 * want,
                "T={t}: {got:e} vs {want:e}"
            );
        }
        assert_eq!(sat_current_at(is, n, xti, eg, tm, tm), is);
        // Physical sanity (common practice): silicon IS roughly doubles every ~5 K near room temperature.
        let r = sat_current_at(1e-14, 1.0, 3.0, 1.11, 300.0, 305.0) / 1e-14;
        assert!(r > 1.8 && r < 2.4, "{r}");
    }

    #[test]
    fn junction_current_and_slope() {
        // Shockley's ideal-junction law I = IS (exp(V/Vt) − 1), slope
        // IS exp(V/Vt)/Vt (W. Shockley, Bell Syst. Tech. J. 28, 1949; from
        // memory). Tolerance 1e-15 relative: the same expression evaluated
        // twice, so only rounding can differ.
        let vt = thermal_voltage(300.0);
        let (i, g) = junction_current(0.6, 1e-14, vt);
        assert!((i - 1e-14 * ((0.6 / vt).exp() - 1.0)).abs() < 1e-15 * i.abs());
        assert!((g - 1e-14 * (0.6 / vt).exp() / vt).abs() < 1e-15 * g);
        assert_eq!(junction_current(0.0, 1e-14, vt).0, 0.0);
    }
}
