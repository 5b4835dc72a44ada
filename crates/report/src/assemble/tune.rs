//! Figures of a tuning run: the goal mapped on a grid around the optimum,
//! as a heat map over two tuned parameters or as one curve per parameter.

use std::collections::BTreeMap;

use tankwave_study::{TuneFigures, TuneGoal, TuneMap};

use super::{safe_name, Drawn};
use crate::plot::{self, PlotParams};

/// Name and unit of a tuning goal's figure as plotted, and the factor from
/// the tuner's value to the plotted one (efficiency is plotted in percent).
pub fn goal_axis(goal: TuneGoal) -> (&'static str, &'static str, f64) {
    match goal {
        TuneGoal::MaximisePout => ("output power", "W", 1.0),
        TuneGoal::MaximiseEfficiencyAt { .. } => ("efficiency", "%", 100.0),
        TuneGoal::MinimiseInputVswr => ("input VSWR", ":1", 1.0),
    }
}

/// What a tuning goal asks for, in words.
fn goal_phrase(goal: TuneGoal) -> String {
    match goal {
        TuneGoal::MaximisePout => "largest output power".to_string(),
        TuneGoal::MaximiseEfficiencyAt { pout_min } => format!(
            "largest efficiency with at least {} out",
            crate::si(pout_min, "W")
        ),
        TuneGoal::MinimiseInputVswr => "smallest input VSWR".to_string(),
    }
}

/// Points that give less than the efficiency goal's minimum output power
/// (none for the other goals).
fn short_of_power<'a>(
    goal: TuneGoal,
    figures: impl Iterator<Item = &'a Option<TuneFigures>>,
) -> usize {
    match goal {
        TuneGoal::MaximiseEfficiencyAt { pout_min } => figures
            .filter(|f| {
                f.as_ref()
                    .and_then(|f| f.pout)
                    .is_some_and(|p| p < pout_min)
            })
            .count(),
        _ => 0,
    }
}

/// The title's remark on points short of the minimum output power.
fn short_text(goal: TuneGoal, n: usize) -> String {
    match goal {
        TuneGoal::MaximiseEfficiencyAt { pout_min } if n > 0 => {
            format!("; {n} points give less than {}", crate::si(pout_min, "W"))
        }
        _ => String::new(),
    }
}

/// The plots of a tuning run from the goal mapped around the optimum
/// (`map`): for two parameters the goal over both (`tune-X-Y.svg`, the
/// optimum ringed), otherwise the goal against each parameter with the
/// others at the optimum (`tune-X.svg`). `units` gives each parameter's
/// unit, `file` names the stage in the titles. Points without a value are
/// left out (curves) or blank (heat map), and the titles say so. A plot
/// that cannot be drawn is noted instead.
pub fn tune_figures(
    file: &str,
    goal: TuneGoal,
    map: &TuneMap,
    optimum: &BTreeMap<String, f64>,
    units: &BTreeMap<String, String>,
) -> Drawn {
    let p = PlotParams::for_source(file);
    let (z_name, z_unit, k) = goal_axis(goal);
    let value = |f: &Option<TuneFigures>| f.as_ref().and_then(|f| goal.figure(f)).map(|v| v * k);
    let unit_of = |n: &str| units.get(n).cloned().unwrap_or_default();
    let mut d = Drawn::default();
    if let Some(s) = &map.surface {
        let values: Vec<Vec<f64>> = s
            .figures
            .iter()
            .map(|row| row.iter().map(|f| value(f).unwrap_or(f64::NAN)).collect())
            .collect();
        let n_short = short_of_power(goal, s.figures.iter().flatten());
        let surface = plot::Surface {
            title: format!(
                "Tuning {} and {} for {}{}",
                s.x_param,
                s.y_param,
                goal_phrase(goal),
                short_text(goal, n_short)
            ),
            x_name: s.x_param.clone(),
            x_unit: unit_of(&s.x_param),
            y_name: s.y_param.clone(),
            y_unit: unit_of(&s.y_param),
            z_name: z_name.to_string(),
            z_unit: z_unit.to_string(),
            xs: s.xs.clone(),
            ys: s.ys.clone(),
            values,
            optimum: match (optimum.get(&s.x_param), optimum.get(&s.y_param)) {
                (Some(&x), Some(&y)) => Some((x, y)),
                _ => None,
            },
        };
        d.add(
            format!(
                "tune-{}-{}.svg",
                safe_name(&s.x_param),
                safe_name(&s.y_param)
            ),
            format!(
                "{z_name} over {} and {} around the optimum (ringed).",
                s.x_param, s.y_param
            ),
            plot::surface_plot(&surface, &p),
        );
    }
    for c in &map.curves {
        let pts: Vec<(f64, f64)> =
            c.xs.iter()
                .zip(&c.figures)
                .filter_map(|(x, f)| Some((*x, value(f)?)))
                .collect();
        let left_out = c.xs.len().saturating_sub(pts.len());
        let n_short = short_of_power(goal, c.figures.iter());
        let title = format!(
            "Tuning {} for {}{}{}",
            c.param,
            goal_phrase(goal),
            if left_out > 0 {
                format!(
                    "; {left_out} of {} points gave no value and are left out",
                    c.xs.len()
                )
            } else {
                String::new()
            },
            short_text(goal, n_short)
        );
        let xs: Vec<f64> = pts.iter().map(|p| p.0).collect();
        let ys: Vec<f64> = pts.iter().map(|p| p.1).collect();
        d.add(
            format!("tune-{}.svg", safe_name(&c.param)),
            format!("{z_name} against {} around the optimum.", c.param),
            plot::tuning_curve_plot(
                &title,
                &c.param,
                &unit_of(&c.param),
                z_name,
                z_unit,
                &xs,
                &ys,
                optimum.get(&c.param).copied(),
                &p,
            ),
        );
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_study::TuneCurve;

    #[test]
    fn goal_axes_and_phrases() {
        assert_eq!(
            goal_axis(TuneGoal::MaximisePout),
            ("output power", "W", 1.0)
        );
        let eff = TuneGoal::MaximiseEfficiencyAt { pout_min: 20.0 };
        assert_eq!(goal_axis(eff), ("efficiency", "%", 100.0));
        assert_eq!(
            goal_phrase(eff),
            "largest efficiency with at least 20.0 W out"
        );
        assert_eq!(
            goal_phrase(TuneGoal::MinimiseInputVswr),
            "smallest input VSWR"
        );
    }

    /// A curve point without a value is left out and the title says how
    /// many; points short of the efficiency goal's power are counted.
    #[test]
    fn curve_titles_count_missing_and_short_points() {
        let fig = |pout: f64, eff: Option<f64>| {
            Some(TuneFigures {
                pout: Some(pout),
                efficiency: eff,
                input_vswr: None,
            })
        };
        let map = TuneMap {
            curves: vec![TuneCurve {
                param: "c1".into(),
                xs: vec![1.0, 2.0, 3.0, 4.0],
                figures: vec![
                    fig(5.0, Some(0.5)),
                    None,
                    fig(25.0, Some(0.6)),
                    fig(21.0, None),
                ],
            }],
            surface: None,
            evaluations: 4,
            failed: 1,
            first_failure: None,
        };
        let optimum: BTreeMap<String, f64> = [("c1".to_string(), 3.0)].into_iter().collect();
        let units = [("c1".to_string(), "F".to_string())].into_iter().collect();
        let goal = TuneGoal::MaximiseEfficiencyAt { pout_min: 20.0 };
        let d = tune_figures("t.tank", goal, &map, &optimum, &units);
        assert!(d.notes.is_empty(), "{:?}", d.notes);
        assert_eq!(d.figures.len(), 1);
        assert_eq!(d.figures[0].name, "tune-c1.svg");
        let svg = &d.figures[0].svg;
        assert!(
            svg.contains("Tuning c1 for largest efficiency with at least 20.0 W out; 2 of 4 points gave no value and are left out; 1 points give less than 20.0 W"),
            "{svg}"
        );
    }
}
