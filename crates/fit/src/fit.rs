//! The staged least-squares fit.
//!
//! Stages, in the order a device engineer would take them (each starts from
//! the values the previous ones found):
//! 1. **capacitances**: C_jc0, φ_C, m_C from the collector–base curve and
//!    C_je0, φ_E, m_E from the emitter–base curve, each on its own;
//! 2. **d.c. transport**: I_S, n_F, β_F, I_SE, n_E (and V_A when the curves
//!    hold more than one V_CE) from the gain and base-voltage curves, on
//!    the points at or below the current of peak gain;
//! 3. **high injection and transit time**: I_KF and τ_F with the stage-2
//!    parameters freed again, on every gain and base-voltage point and the
//!    f_T points up to the peak of f_T (a constant τ_F cannot follow f_T
//!    falling at high current: those points are left out, and their misfit
//!    is reported);
//! 4. **saturation**: β_R and r_C from the saturation-voltage curve;
//! 5. **epi layer, then breakdown**: R_CO and γ of the epitaxial collector
//!    (and V_A, when the gain curves are all at one V_CE) from the output
//!    characteristics up to half their top V_CE and the saturation curve;
//!    then BV_CBO and n_av from all of the output characteristics, when
//!    they rise toward breakdown;
//! 6. **all together**: every parameter fitted above, on every point used
//!    above, so that the result is the least-squares optimum of the whole
//!    set (the capacitances also shape f_T, r_C also shifts the gain); the
//!    stages before give it its starting values.
//!
//! Each stage is a Levenberg–Marquardt minimisation (the
//! `levenberg-marquardt` crate, MINPACK's algorithm) of the weighted
//! relative residuals `√w·(model − data)/data` over the unbounded variables
//! of [`crate::knob`]. A parameter a stage needs but the curves do not
//! touch is not fitted and is listed as not determined.
//!
//! **Flat directions.** At the end, the Jacobian of every residual with
//! respect to ln p of every fitted parameter is decomposed (SVD); a right
//! singular vector whose singular value is below `flat_ratio` times the
//! largest is a direction along which the data barely move. The parameters
//! that make up such a direction are named as not determined by the data.

use crate::curve::{Curve, CurveKind, Point};
use crate::error::FitError;
use crate::knob::Knob;
use crate::model;
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra34::{storage::Owned, DMatrix, DVector, Dyn};
use tankwave_circuit::BjtParams;

/// Options of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitParams {
    /// Largest RMS relative error a fitted curve may keep (0.2 = 20 %);
    /// above it the curve "cannot be fitted" and nothing is written.
    pub max_rms: f64,
    /// Singular-value ratio below which a direction counts as flat.
    pub flat_ratio: f64,
    /// f_T points beyond the peak whose value is below this fraction of the
    /// peak are left out of the fit (the model's f_T cannot fall).
    pub ft_fall: f64,
    /// Most residual evaluations per stage, per parameter (the solver's patience).
    pub patience: usize,
    /// Relative standard error above which a fitted parameter is named as
    /// not determined (1.0: ln p uncertain by more than 1, a factor e).
    pub max_std_err: f64,
}

impl Default for FitParams {
    fn default() -> Self {
        FitParams {
            max_rms: 0.2,
            // 1e-4: a unit step of ln p along the direction moves the
            // weighted relative residuals 10⁴ times less than the stiffest
            // direction; noise of a read-off curve (~1 %) then hides it.
            flat_ratio: 1e-4,
            ft_fall: 0.98,
            patience: 200,
            max_std_err: 1.0,
        }
    }
}

/// One point with the model's value there.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointFit {
    /// The data point.
    pub point: Point,
    /// Model value (None where the model reaches no bias).
    pub model: Option<f64>,
    /// Whether the point took part in the fit.
    pub used: bool,
}

/// How well one curve is followed.
#[derive(Debug, Clone, PartialEq)]
pub struct CurveFit {
    /// Kind of curve.
    pub kind: CurveKind,
    /// File it came from.
    pub file: String,
    /// Every point.
    pub points: Vec<PointFit>,
    /// RMS error over the points used, in the curve's unit.
    pub rms: f64,
    /// Worst error over the points used, in the curve's unit (signed: model − data).
    pub worst: f64,
    /// RMS relative error over the points used (0.01 = 1 %).
    pub rms_rel: f64,
    /// Worst relative error over the points used (signed).
    pub worst_rel: f64,
    /// Line of the worst point.
    pub worst_line: usize,
    /// RMS relative error over the points left out (None when none were).
    pub left_out_rms_rel: Option<f64>,
}

/// What one stage did.
#[derive(Debug, Clone, PartialEq)]
pub struct StageInfo {
    /// Stage name.
    pub name: &'static str,
    /// Parameters it moved.
    pub knobs: Vec<Knob>,
    /// Residual evaluations.
    pub evaluations: usize,
    /// Half the sum of squared weighted residuals at the end.
    pub objective: f64,
    /// How the solver stopped.
    pub termination: String,
}

/// A parameter the curves leave open, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Undetermined {
    /// The parameter.
    pub knob: Knob,
    /// Why it is not determined.
    pub why: String,
}

/// The outcome of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitResult {
    /// The model parameters (fitted, and defaults where not).
    pub params: BjtParams,
    /// Parameters fitted, in stage order.
    pub fitted: Vec<Knob>,
    /// Parameters the curves do not determine.
    pub undetermined: Vec<Undetermined>,
    /// Fitted parameters that ended at a bound.
    pub at_bound: Vec<Knob>,
    /// Every curve, with the model beside the data.
    pub curves: Vec<CurveFit>,
    /// The stages run.
    pub stages: Vec<StageInfo>,
    /// Singular values of the final Jacobian in ln p (largest first).
    pub singular_values: Vec<f64>,
    /// Relative standard error of each fitted parameter (same order as
    /// `fitted`): the standard error of ln p from the residual scatter,
    /// s²·(JᵀJ)⁻¹ with s² = Σr²/(m − n) (∞ along a flat direction or when
    /// there are no more points than parameters).
    pub std_err: Vec<f64>,
    /// Notes for the reader (points left out and why).
    pub notes: Vec<String>,
}

/// The residual rows of one stage: which curve and which point.
struct Rows<'a> {
    rows: Vec<(CurveKind, &'a Point)>,
}

/// A least-squares problem over some knobs of a base parameter set.
struct Problem<'a> {
    base: BjtParams,
    knobs: Vec<Knob>,
    u: DVector<f64>,
    rows: &'a Rows<'a>,
}

/// Residual given to a point where the model reaches no bias: as if the
/// model were off by 1000 % (steers the solver away, stays finite).
const NO_BIAS_RESIDUAL: f64 = 10.0;

impl Problem<'_> {
    fn params_at(&self, u: &DVector<f64>) -> BjtParams {
        let mut p = self.base.clone();
        for (k, &ui) in self.knobs.iter().zip(u.iter()) {
            k.set(&mut p, k.from_u(ui));
        }
        p
    }

    fn residuals_at(&self, u: &DVector<f64>) -> DVector<f64> {
        let p = self.params_at(u);
        DVector::from_iterator(
            self.rows.rows.len(),
            self.rows
                .rows
                .iter()
                .map(|(kind, pt)| residual(&p, *kind, pt)),
        )
    }
}

fn residual(p: &BjtParams, kind: CurveKind, pt: &Point) -> f64 {
    let sw = pt.w.sqrt();
    match model::value(p, kind, pt) {
        Ok(m) => sw * (m - pt.y) / pt.y,
        Err(_) => sw * NO_BIAS_RESIDUAL,
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.u.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.u.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        Some(self.residuals_at(&self.u))
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        // central differences in u; h = 1e-6 keeps the truncation error
        // (∝ h²) and the rounding error (∝ ε/h) both near 1e-10 relative
        let n = self.u.len();
        let m = self.rows.rows.len();
        let mut j = DMatrix::zeros(m, n);
        for c in 0..n {
            let h = 1e-6 * (1.0 + self.u[c].abs());
            let mut up = self.u.clone();
            up[c] += h;
            let mut dn = self.u.clone();
            dn[c] -= h;
            let col = (self.residuals_at(&up) - self.residuals_at(&dn)) / (2.0 * h);
            j.set_column(c, &col);
        }
        Some(j)
    }
}

/// Run one stage: move `knobs` of `p` to fit `rows`.
fn run_stage(
    name: &'static str,
    p: &mut BjtParams,
    knobs: &[Knob],
    rows: &Rows<'_>,
    fp: &FitParams,
) -> StageInfo {
    let u = DVector::from_iterator(knobs.len(), knobs.iter().map(|k| k.to_u(k.get(p))));
    let problem = Problem {
        base: p.clone(),
        knobs: knobs.to_vec(),
        u,
        rows,
    };
    let (done, report) = LevenbergMarquardt::new()
        .with_patience(fp.patience)
        .minimize(problem);
    *p = done.params_at(&done.u);
    StageInfo {
        name,
        knobs: knobs.to_vec(),
        evaluations: report.number_of_evaluations,
        objective: report.objective_function,
        termination: format!("{:?}", report.termination),
    }
}

fn curve(curves: &[Curve], kind: CurveKind) -> Option<&Curve> {
    curves.iter().find(|c| c.kind == kind)
}

/// Distinct values (relative spacing above 1e-6).
fn distinct(mut v: Vec<f64>) -> usize {
    v.sort_by(f64::total_cmp);
    v.dedup_by(|a, b| (*a - *b).abs() <= 1e-6 * b.abs());
    v.len()
}

/// Fit the model to `curves` (at most one of each kind).
pub fn fit(curves: &[Curve], pnp: bool, fp: &FitParams) -> Result<FitResult, FitError> {
    // a power curve checks the fitted model in a stage; it is not fitted
    let kept: Vec<Curve> = curves
        .iter()
        .filter(|c| c.kind != CurveKind::Power)
        .cloned()
        .collect();
    let curves = &kept[..];
    if curves.is_empty() {
        return Err(FitError::NoCurves);
    }
    let mut p = BjtParams {
        pnp,
        ..BjtParams::default()
    };
    let mut fitted = Vec::new();
    let mut undetermined = Vec::new();
    let mut stages = Vec::new();
    let mut notes = Vec::new();
    let not_given = |knobs: &[Knob], why: &str, out: &mut Vec<Undetermined>| {
        for &k in knobs {
            out.push(Undetermined {
                knob: k,
                why: why.to_string(),
            })
        }
    };

    // --- stage 1: capacitances
    for (kind, knobs) in [
        (
            CurveKind::OutputCap,
            [Knob::CapBc, Knob::PotentialBc, Knob::GradingBc],
        ),
        (
            CurveKind::InputCap,
            [Knob::CapBe, Knob::PotentialBe, Knob::GradingBe],
        ),
    ] {
        let Some(c) = curve(curves, kind) else {
            not_given(
                &knobs,
                "no capacitance curve for this junction (left off)",
                &mut undetermined,
            );
            continue;
        };
        let low = c
            .points
            .iter()
            .filter(|q| q.w > 0.0)
            .min_by(|a, b| a.a.total_cmp(&b.a))
            .copied()
            .unwrap_or(c.points[0]);
        knobs[1].set(&mut p, 0.7);
        knobs[2].set(&mut p, 0.4);
        knobs[0].set(&mut p, low.y * (1.0 + low.a / 0.7).powf(0.4));
        let rows = Rows {
            rows: used_points(c).map(|q| (kind, q)).collect(),
        };
        stages.push(run_stage("capacitances", &mut p, &knobs, &rows, fp));
        fitted.extend(knobs);
    }

    // --- stage 2: d.c. transport
    let gain = curve(curves, CurveKind::Gain);
    let vbe = curve(curves, CurveKind::BaseVoltage);
    let peak = gain.and_then(|g| {
        used_points(g)
            .max_by(|a, b| a.y.total_cmp(&b.y))
            .map(|q| (q.a, q.y))
    });
    let mut dc_knobs = Vec::new();
    if gain.is_some() || vbe.is_some() {
        // starting values: I_S from the lowest base-voltage point (n = 1),
        // β_F a little above the peak gain, I_SE from the gain shortfall
        // at the lowest current with n_E = 2
        let vt = tankwave_devices::junction::thermal_voltage(p.t_measured);
        if let Some(v) = vbe {
            if let Some(q) = used_points(v).min_by(|a, b| a.a.total_cmp(&b.a)) {
                p.sat_current = (q.a / (q.y / vt).exp()).clamp(1e-19, 1e-7);
            }
            dc_knobs.extend([Knob::SatCurrent, Knob::Ideality]);
        } else {
            p.sat_current = 1e-13;
            not_given(
                &[Knob::SatCurrent, Knob::Ideality],
                "no base-voltage curve",
                &mut undetermined,
            );
        }
        if let (Some(g), Some((_, gpk))) = (gain, peak) {
            p.gain_fwd = gpk * 1.1;
            dc_knobs.push(Knob::Beta);
            let low = used_points(g)
                .min_by(|a, b| a.a.total_cmp(&b.a))
                .copied()
                .expect("a parsed curve has points");
            if low.y < 0.9 * gpk {
                let vbe0 = vt * (low.a / p.sat_current).ln();
                let short = (low.a / low.y - low.a / p.gain_fwd).max(low.a / p.gain_fwd * 0.1);
                p.leak_be_emission = 2.0;
                p.leak_be = (short / (vbe0 / (2.0 * vt)).exp()).clamp(1e-21, 1e-5);
                dc_knobs.extend([Knob::LeakBe, Knob::LeakBeIdeality]);
            } else {
                not_given(
                    &[Knob::LeakBe, Knob::LeakBeIdeality],
                    "the gain does not fall at low current (recombination left off)",
                    &mut undetermined,
                );
            }
        } else {
            not_given(&[Knob::Beta], "no gain curve", &mut undetermined);
        }
        let vces: Vec<f64> = gain
            .into_iter()
            .chain(vbe)
            .flat_map(|c| used_points(c).map(|q| q.b))
            .collect();
        if distinct(vces) >= 2 {
            p.early_fwd = 100.0;
            dc_knobs.push(Knob::Early);
        } else {
            not_given(
                &[Knob::Early],
                "every gain and base-voltage point is at one V_CE (left off: ∞)",
                &mut undetermined,
            );
        }
        let limit = peak.map_or(f64::INFINITY, |(i, _)| i);
        let rows = Rows {
            rows: gain
                .into_iter()
                .chain(vbe)
                .flat_map(|c| {
                    used_points(c)
                        .filter(move |q| q.a <= limit)
                        .map(move |q| (c.kind, q))
                })
                .collect(),
        };
        if rows.rows.len() > dc_knobs.len() && !dc_knobs.is_empty() {
            stages.push(run_stage("d.c. transport", &mut p, &dc_knobs, &rows, fp));
        }
        fitted.extend(dc_knobs.iter().copied());
    } else {
        not_given(
            &[Knob::SatCurrent, Knob::Beta, Knob::Ideality],
            "no gain or base-voltage curve",
            &mut undetermined,
        );
    }

    // --- stage 3: high injection and transit time
    let ft = curve(curves, CurveKind::Transition);
    let mut hi_knobs = dc_knobs.clone();
    if let (Some(g), Some((ipk, gpk))) = (gain, peak) {
        if used_points(g).any(|q| q.a > ipk && q.y < 0.95 * gpk) {
            // start where the gain has fallen to about half: I_KF near there
            let fall = used_points(g)
                .filter(|q| q.a > ipk)
                .min_by(|a, b| (a.y - 0.5 * gpk).abs().total_cmp(&(b.y - 0.5 * gpk).abs()))
                .map_or(10.0 * ipk, |q| q.a);
            p.knee_fwd = fall;
            hi_knobs.push(Knob::Knee);
        } else {
            not_given(
                &[Knob::Knee],
                "the gain does not fall at high current (left off: ∞)",
                &mut undetermined,
            );
        }
    } else {
        not_given(&[Knob::Knee], "no gain curve", &mut undetermined);
    }
    let mut ft_limit = f64::INFINITY;
    if let Some(f) = ft {
        if let Some(top) = used_points(f).max_by(|a, b| a.y.total_cmp(&b.y)) {
            p.transit_fwd = 0.8 / (2.0 * std::f64::consts::PI * top.y);
            let beyond: Vec<&Point> = used_points(f)
                .filter(|q| q.a > top.a && q.y < fp.ft_fall * top.y)
                .collect();
            if let Some(first) = beyond.iter().min_by(|a, b| a.a.total_cmp(&b.a)) {
                ft_limit = first.a * (1.0 - 1e-12);
                notes.push(format!(
                    "{}: {} f_T point(s) from {} up fall below {:.0} % of the peak; a constant transit time cannot follow a falling f_T, so they are left out of the fit (their misfit is reported)",
                    f.file,
                    beyond.len(),
                    tankwave_circuit::si::si_prefixed(first.a, "A", 3),
                    fp.ft_fall * 100.0
                ));
            }
        }
        hi_knobs.push(Knob::Transit);
        if p.cj_be == 0.0 && p.cj_bc == 0.0 {
            notes.push(
                "f_T is fitted with no junction capacitances (no capacitance curves): τ_F takes up all the charge"
                    .into(),
            );
        }
    } else {
        not_given(
            &[Knob::Transit],
            "no f_T curve (left off: 0)",
            &mut undetermined,
        );
    }
    if hi_knobs.len() > dc_knobs.len() {
        let ft_rows = ft.into_iter().flat_map(|c| {
            used_points(c)
                .filter(|q| q.a <= ft_limit)
                .map(move |q| (c.kind, q))
        });
        let rows = Rows {
            rows: gain
                .into_iter()
                .chain(vbe)
                .flat_map(|c| used_points(c).map(move |q| (c.kind, q)))
                .chain(ft_rows)
                .collect(),
        };
        stages.push(run_stage(
            "high injection and transit time",
            &mut p,
            &hi_knobs,
            &rows,
            fp,
        ));
        fitted.extend(hi_knobs[dc_knobs.len()..].iter().copied());
    }

    // --- stage 4: saturation
    if let Some(s) = curve(curves, CurveKind::Saturation) {
        let knobs = [Knob::BetaReverse, Knob::RCollector];
        p.gain_rev = 1.0;
        // start r_C from the slope of the two extreme points
        let lo = used_points(s).min_by(|a, b| a.a.total_cmp(&b.a));
        let hi = used_points(s).max_by(|a, b| a.a.total_cmp(&b.a));
        p.r_collector = match (lo, hi) {
            (Some(l), Some(h)) if h.a > l.a => ((h.y - l.y) / (h.a - l.a)).clamp(1e-4, 100.0),
            _ => 0.1,
        };
        let rows = Rows {
            rows: used_points(s).map(|q| (s.kind, q)).collect(),
        };
        stages.push(run_stage("saturation", &mut p, &knobs, &rows, fp));
        fitted.extend(knobs);
    } else {
        not_given(
            &[Knob::BetaReverse, Knob::RCollector],
            "no saturation curve (β_R = 1, r_C off)",
            &mut undetermined,
        );
    }

    // --- stage 5: the epitaxial collector from the output characteristics
    // below the avalanche rise (with the saturation curve when there is
    // one), then the breakdown from the whole of them
    if let Some(o) = curve(curves, CurveKind::Output) {
        let mut knobs = vec![Knob::REpi, Knob::EpiGamma];
        // the output curves span V_CE: they set the Early voltage when the
        // gain and base-voltage curves could not
        if !fitted.contains(&Knob::Early) {
            // β_F took the Early factor of the one V_CE; they part here
            knobs.extend([Knob::Early, Knob::Beta]);
            p.early_fwd = 100.0;
            undetermined.retain(|u: &Undetermined| u.knob != Knob::Early);
        }
        // the saturation stage's r_C holds the layer's drop too: start the
        // layer with most of it
        p.r_epi = (0.8 * p.r_collector).max(0.01);
        p.r_collector *= 0.2;
        p.epi_gamma = 1e-11;
        let top = used_points(o).map(|q| q.a).fold(0.0, f64::max);
        let mut rows: Vec<(CurveKind, &Point)> = used_points(o)
            .filter(|q| q.a <= 0.5 * top)
            .map(|q| (o.kind, q))
            .collect();
        if let Some(s) = curve(curves, CurveKind::Saturation) {
            rows.extend(used_points(s).map(|q| (s.kind, q)));
        }
        stages.push(run_stage("epi layer", &mut p, &knobs, &Rows { rows }, fp));
        for k in knobs {
            if !fitted.contains(&k) {
                fitted.push(k);
            }
        }
        if output_rises(o) {
            let knobs = [Knob::Breakdown, Knob::AvalancheExponent];
            p.bv_cbo = 2.0 * top;
            p.avalanche_exp = 4.0;
            let rows = Rows {
                rows: used_points(o).map(|q| (o.kind, q)).collect(),
            };
            stages.push(run_stage("breakdown", &mut p, &knobs, &rows, fp));
            fitted.extend(knobs);
        } else {
            not_given(
                &[Knob::Breakdown, Knob::AvalancheExponent],
                "the output curves show no avalanche rise (avalanche left off)",
                &mut undetermined,
            );
        }
    } else {
        // effects that are off unless data show them: a note, not a gap
        notes.push(
            "no output characteristics (--ic-vce): the epitaxial collector and avalanche \
             multiplication are left off"
                .to_string(),
        );
    }

    // --- stage 6: every fitted parameter on every used point together, so
    // the result is the least-squares optimum of the whole set (the stages
    // before only give it its starting values)
    if stages.len() > 1 {
        let rows = Rows {
            rows: all_rows(curves, ft_limit),
        };
        stages.push(run_stage("all together", &mut p, &fitted, &rows, fp));
    }

    // --- the curves under the final parameters
    let mut out_curves = Vec::new();
    for c in curves {
        let limit = if c.kind == CurveKind::Transition {
            ft_limit
        } else {
            f64::INFINITY
        };
        let points: Vec<PointFit> = c
            .points
            .iter()
            .map(|q| PointFit {
                point: *q,
                model: model::value(&p, c.kind, q).ok(),
                used: q.w > 0.0 && q.a <= limit,
            })
            .collect();
        out_curves.push(summarise(c, points)?);
    }
    for cf in &out_curves {
        if cf.rms_rel > fp.max_rms {
            return Err(FitError::CannotFit {
                file: cf.file.clone(),
                line: cf.worst_line,
                curve: cf.kind.word(),
                rms_pct: cf.rms_rel * 100.0,
                worst_pct: cf.worst_rel.abs() * 100.0,
                limit_pct: fp.max_rms * 100.0,
            });
        }
    }

    // --- flat directions of the final Jacobian (in ln p)
    let (singular_values, std_err, flats) =
        flat_directions(&p, &fitted, curves, ft_limit, fp.flat_ratio);
    for (ratio, members) in flats {
        for &k in &members {
            let others: Vec<&str> = members
                .iter()
                .filter(|o| **o != k)
                .map(|o| o.symbol())
                .collect();
            let with = if others.is_empty() {
                "alone".to_string()
            } else {
                format!("with {}", others.join(", "))
            };
            if !undetermined.iter().any(|u| u.knob == k) {
                undetermined.push(Undetermined {
                    knob: k,
                    why: format!(
                        "moves {with} along a flat direction of the fit (singular value {ratio:.1e} of the largest): the curves do not pin it"
                    ),
                });
            }
        }
    }
    for (n, &k) in fitted.iter().enumerate() {
        let se = std_err.get(n).copied().unwrap_or(f64::INFINITY);
        if se > fp.max_std_err && !undetermined.iter().any(|u| u.knob == k) {
            undetermined.push(Undetermined {
                knob: k,
                why: if se.is_finite() {
                    format!(
                        "standard error {:.0} % of its value: the curves barely constrain it",
                        se * 100.0
                    )
                } else {
                    "no more points than parameters: no error estimate".to_string()
                },
            });
        }
    }
    let at_bound = fitted
        .iter()
        .copied()
        .filter(|k| k.at_bound(k.get(&p)))
        .collect();
    Ok(FitResult {
        params: p,
        fitted,
        undetermined,
        at_bound,
        curves: out_curves,
        stages,
        singular_values,
        std_err,
        notes,
    })
}

/// Every point that takes part in the fit (f_T only up to `ft_limit`).
fn all_rows(curves: &[Curve], ft_limit: f64) -> Vec<(CurveKind, &Point)> {
    curves
        .iter()
        .flat_map(|c| {
            let lim = if c.kind == CurveKind::Transition {
                ft_limit
            } else {
                f64::INFINITY
            };
            used_points(c)
                .filter(move |q| q.a <= lim)
                .map(move |q| (c.kind, q))
        })
        .collect()
}

/// Whether the output curves rise toward breakdown: at some base current,
/// the current at the highest V_CE is more than 5 % above the straight line
/// through the points at the middle and at three quarters of that curve's
/// V_CE range (the Early effect is such a line; multiplication bends it
/// upward).
fn output_rises(o: &Curve) -> bool {
    let mut ibs: Vec<f64> = used_points(o).map(|q| q.b).collect();
    ibs.sort_by(f64::total_cmp);
    ibs.dedup_by(|a, b| (*a - *b).abs() <= 1e-6 * b.abs());
    ibs.iter().any(|&ib| {
        let mut pts: Vec<&Point> = used_points(o)
            .filter(|q| (q.b - ib).abs() <= 1e-6 * ib)
            .collect();
        pts.sort_by(|a, b| a.a.total_cmp(&b.a));
        let n = pts.len();
        if n < 4 {
            return false;
        }
        let (m, q, t) = (pts[n / 2], pts[3 * n / 4], pts[n - 1]);
        if !(q.a > m.a && t.a > q.a) {
            return false;
        }
        let line = q.y + (q.y - m.y) / (q.a - m.a) * (t.a - q.a);
        t.y > 1.05 * line
    })
}

fn used_points(c: &Curve) -> impl Iterator<Item = &Point> + Clone {
    c.points.iter().filter(|q| q.w > 0.0)
}

fn summarise(c: &Curve, points: Vec<PointFit>) -> Result<CurveFit, FitError> {
    let (mut s2, mut r2, mut n) = (0.0, 0.0, 0usize);
    let (mut worst, mut worst_rel, mut worst_line) = (0.0f64, 0.0f64, 0usize);
    let (mut out2, mut nout) = (0.0, 0usize);
    for pf in &points {
        let Some(m) = pf.model else {
            if pf.used {
                return Err(FitError::NoBias {
                    file: c.file.clone(),
                    line: pf.point.line,
                    why: "after fitting".into(),
                });
            }
            continue;
        };
        let e = m - pf.point.y;
        let rel = e / pf.point.y;
        if pf.used {
            s2 += e * e;
            r2 += rel * rel;
            n += 1;
            if rel.abs() >= worst_rel.abs() {
                worst = e;
                worst_rel = rel;
                worst_line = pf.point.line;
            }
        } else if pf.point.w > 0.0 {
            out2 += rel * rel;
            nout += 1;
        }
    }
    let n = n.max(1) as f64;
    Ok(CurveFit {
        kind: c.kind,
        file: c.file.clone(),
        points,
        rms: (s2 / n).sqrt(),
        worst,
        rms_rel: (r2 / n).sqrt(),
        worst_rel,
        worst_line,
        left_out_rms_rel: (nout > 0).then(|| (out2 / nout as f64).sqrt()),
    })
}

/// Flat directions: (ratio of the singular value to the largest, knobs
/// with |component| ≥ 0.3).
type Flats = Vec<(f64, Vec<Knob>)>;

/// Singular values of the Jacobian in ln p over every used point, the
/// relative standard errors and the flat directions.
fn flat_directions(
    p: &BjtParams,
    knobs: &[Knob],
    curves: &[Curve],
    ft_limit: f64,
    flat_ratio: f64,
) -> (Vec<f64>, Vec<f64>, Flats) {
    let rows = all_rows(curves, ft_limit);
    if knobs.is_empty() || rows.is_empty() {
        return (Vec::new(), vec![f64::INFINITY; knobs.len()], Vec::new());
    }
    let res =
        |p: &BjtParams| -> Vec<f64> { rows.iter().map(|(k, q)| residual(p, *k, q)).collect() };
    let mut j = DMatrix::zeros(rows.len(), knobs.len());
    for (c, k) in knobs.iter().enumerate() {
        let v = k.get(p);
        // central difference in ln p, h = 1e-5 (relative step)
        let h: f64 = 1e-5;
        let mut up = p.clone();
        k.set(&mut up, v * h.exp());
        let mut dn = p.clone();
        k.set(&mut dn, v * (-h).exp());
        let (ru, rd) = (res(&up), res(&dn));
        for r in 0..rows.len() {
            j[(r, c)] = (ru[r] - rd[r]) / (2.0 * h);
        }
    }
    let r0 = res(p);
    let dof = rows.len() as f64 - knobs.len() as f64;
    let s2 = if dof > 0.0 {
        r0.iter().map(|r| r * r).sum::<f64>() / dof
    } else {
        f64::INFINITY
    };
    // SVD needs at least as many rows as columns for all directions; pad with zeros
    if j.nrows() < j.ncols() {
        j = j.resize_vertically(knobs.len(), 0.0);
    }
    let svd = j.svd(false, true);
    let Some(vt) = svd.v_t else {
        return (Vec::new(), vec![f64::INFINITY; knobs.len()], Vec::new());
    };
    let sv: Vec<f64> = svd.singular_values.iter().copied().collect();
    let top = sv.iter().copied().fold(0.0, f64::max);
    // (JᵀJ)⁻¹ = V Σ⁻² Vᵀ: its diagonal, direction by direction
    let std_err: Vec<f64> = (0..knobs.len())
        .map(|c| {
            let mut v = 0.0;
            for (i, &si) in sv.iter().enumerate() {
                let comp = vt[(i, c)];
                if si <= top * 1e-14 {
                    if comp.abs() > 1e-8 {
                        return f64::INFINITY;
                    }
                    continue;
                }
                v += comp * comp / (si * si);
            }
            (s2 * v).sqrt()
        })
        .collect();
    let mut order: Vec<usize> = (0..sv.len()).collect();
    order.sort_by(|&a, &b| sv[b].total_cmp(&sv[a]));
    let mut flats = Vec::new();
    for &i in &order {
        let ratio = if top > 0.0 { sv[i] / top } else { 0.0 };
        if ratio < flat_ratio {
            let members: Vec<Knob> = knobs
                .iter()
                .enumerate()
                .filter(|(c, _)| vt[(i, *c)].abs() >= 0.3)
                .map(|(_, k)| *k)
                .collect();
            flats.push((ratio, members));
        }
    }
    (order.iter().map(|&i| sv[i]).collect(), std_err, flats)
}
