//! The electrothermal steady state and the heating of a transmission
//! (`analyze heat`, docs/thermal.md).
//!
//! **Network.** Each transistor whose part has a heat path gets a junction
//! node; on the shared heatsink (`sink=`) it is tied junction –θ_JC– case
//! –θ_CS– sink (the case node is left out, and its heat capacity put on
//! the sink, when the part gives no `case_sink`), the sink –`sink_ambient`–
//! ambient; off the sink it is junction –θ_JC– case –θ_CA– ambient, or
//! junction –θ_JA– ambient. A diode or a thermistor (a resistor with
//! `ntc_b=`) on the sink is at the sink's temperature and puts its
//! dissipation into the sink. Elements outside
//! the network stay at the ambient.
//!
//! **Coupling.** Thermal time constants (ms to minutes) are far longer
//! than the carrier period, so over one period the temperatures are
//! constant and the average dissipation drives the network. With `x` the
//! rise of every thermal node, one round solves the periodic steady state
//! with each device's model at its temperature (the temperature laws of
//! the model, [`tankwave_devices::instantiate_at`]), takes each device's
//! average dissipation and gives `F(x)`, the network's steady rise for
//! that dissipation. The fixed point `x = F(x)` is found by a secant
//! (Steffensen-like) iteration on the loop gain along the last step,
//! `g = ΔF·Δx / Δx·Δx`, `x ← x + (F(x) − x)/(1 − g)` (plain substitution in
//! the first round and whenever g < 0). It stops when no node moves by more
//! than [`HEAT_TOLERANCE_K`]. The loop gain at the solution is then
//! measured by one more solve 1 K hotter along the solution's direction.
//!
//! **Runaway.** A loop gain ≥ 1 (each kelvin of heating brings back at
//! least a kelvin more), or a junction beyond its rating (or
//! [`VALIDITY_LIMIT_K`] without one) with the iteration still heating, is
//! thermal runaway: reported as [`StageError::Runaway`] with the element,
//! its temperature and dissipation and the loop gain there.
//!
//! **Heating.** With `transmit=`, the network steps from the ambient
//! through the transmission, key down (the self-consistent dissipation)
//! for `mark`, key up (the idle stage, drive off, at the same temperatures)
//! for `space`, exactly per segment ([`tankwave_solve::heat_run`]). The
//! dissipation is held at its hot values throughout (it is not
//! re-solved as the stage warms up).

use tankwave_circuit::{Circuit, ElementId, ElementKind, HeatPath, HeatSpec, ModelParams};
use tankwave_measure::PeriodData;
use tankwave_solve::{
    heat_run, Keying, PeriodicSolution, SteadyParams, ThermalLink, ThermalNetwork,
};

use crate::StageError;

/// The iteration stops when no thermal node moves by more than this, K.
/// The dissipation a steady state gives is good to about 1e−4 of itself;
/// at a few K/W that is millikelvin, so 0.01 K is resolved.
pub const HEAT_TOLERANCE_K: f64 = 0.01;

/// The highest junction temperature the iteration follows when the part
/// states no rating, K (250 °C: beyond it silicon devices stop behaving
/// as the model assumes, common practice).
pub const VALIDITY_LIMIT_K: f64 = 523.15;

/// How far past a junction's limit one step of the iteration may go, K.
pub const OVERSHOOT_K: f64 = 10.0;

/// A failed electrical solve of a round, said with the round and the
/// temperatures it was solved at.
fn in_round(
    e: StageError,
    round: usize,
    devices: &[HeatDevice],
    x: &[f64],
    ambient: f64,
) -> StageError {
    match e {
        StageError::Solve(_) | StageError::Measure(_) | StageError::Devices(_) => {
            let at: Vec<String> = devices
                .iter()
                .map(|d| format!("{} at {:.1} °C", d.name, ambient + x[d.node] - 273.15))
                .collect();
            StageError::Heat {
                what: format!("round {} ({}): {e}", round + 1, at.join(", ")),
            }
        }
        other => other,
    }
}

/// Samples kept of a heating run (for plots and JSON).
pub const HEATING_SAMPLES: usize = 2000;

/// A device in the thermal network.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatDevice {
    /// The element.
    pub element: ElementId,
    /// Its name.
    pub name: String,
    /// Whether it is a transistor (else a diode or a thermistor on the sink).
    pub transistor: bool,
    /// The thermal node whose temperature it is at.
    pub node: usize,
    /// Junction temperature rating, K (`None`: not given).
    pub rating_k: Option<f64>,
    /// Self-consistent temperature, K.
    pub temperature_k: f64,
    /// Self-consistent average dissipation, W.
    pub dissipation_w: f64,
    /// Dissipation key up (the idle stage), W (`None`: no keying asked).
    pub idle_w: Option<f64>,
    /// Peak temperature over the transmission, K, and when, s.
    pub peak: Option<(f64, f64)>,
    /// A thermistor's resistance at its self-consistent temperature, Ω
    /// (`None`: not a thermistor).
    pub resistance_ohm: Option<f64>,
}

/// One round of the electrothermal iteration.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatRound {
    /// Temperature of each device the round was solved at, K.
    pub temperatures_k: Vec<f64>,
    /// Dissipation of each device, W.
    pub dissipation_w: Vec<f64>,
    /// Largest change the network asks for, max |F(x) − x|, K.
    pub change_k: f64,
    /// The loop gain estimated along the last step (none in the first round).
    pub gain: Option<f64>,
}

/// The rounds of an electrothermal iteration that ran away: how it got
/// there (the error's text lists them; `run --plots` draws them).
#[derive(Debug, Clone, PartialEq)]
pub struct RunawayTrail {
    /// Ambient temperature, K.
    pub ambient_k: f64,
    /// Each device of the network: its name and junction rating, K.
    pub devices: Vec<(String, Option<f64>)>,
    /// The rounds, in order (temperatures in the order of `devices`).
    pub rounds: Vec<HeatRound>,
}

impl std::fmt::Display for RunawayTrail {
    /// `rounds at q1: 25.0, 61.3, 97.0, 160.0 °C` (the hottest device).
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let hottest = (0..self.devices.len()).max_by(|&a, &b| {
            let last = |i: usize| {
                self.rounds
                    .last()
                    .and_then(|r| r.temperatures_k.get(i).copied())
                    .unwrap_or(0.0)
            };
            last(a).total_cmp(&last(b))
        });
        let Some(i) = hottest else {
            return write!(f, "no rounds");
        };
        let temps: Vec<String> = self
            .rounds
            .iter()
            .filter_map(|r| r.temperatures_k.get(i))
            .map(|t| format!("{:.1}", t - 273.15))
            .collect();
        write!(
            f,
            "the rounds solved {} at {} °C",
            self.devices[i].0,
            temps.join(", ")
        )
    }
}

/// Temperatures over a transmission.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatingCurve {
    /// Sample times, s.
    pub times: Vec<f64>,
    /// Temperature of each device at each sample, K (`[sample][device]`).
    pub temperatures_k: Vec<Vec<f64>>,
    /// The keying: mark, space and length, s.
    pub keying: Keying,
}

/// What `analyze heat` found.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatOutcome {
    /// Ambient temperature, K.
    pub ambient_k: f64,
    /// The thermal node names.
    pub nodes: Vec<String>,
    /// The devices in the network.
    pub devices: Vec<HeatDevice>,
    /// The rounds, in order.
    pub rounds: Vec<HeatRound>,
    /// Loop gain of the heat feedback at the solution (< 1).
    pub loop_gain: f64,
    /// The heating over the transmission, when `transmit=` was given.
    pub heating: Option<HeatingCurve>,
}

impl HeatOutcome {
    /// Put the self-consistent junction temperatures (and the peaks of the
    /// transmission) into the transistor figures, which without
    /// `analyze heat` hold T_ambient + Rth·P.
    pub fn apply(&self, m: &mut tankwave_measure::Metrics) {
        for d in self.devices.iter().filter(|d| d.transistor) {
            m.set_junction_temperature(
                d.element,
                d.temperature_k,
                d.peak.map(|p| p.0),
                self.ambient_k,
            );
        }
    }
}

/// Nodes, capacities and links of a network being built.
struct Builder<'a> {
    names: &'a mut Vec<String>,
    heat: &'a mut Vec<f64>,
    links: &'a mut Vec<ThermalLink>,
}

impl Builder<'_> {
    fn node(&mut self, name: String, c: f64) -> usize {
        self.names.push(name);
        self.heat.push(c);
        self.names.len() - 1
    }
    fn link(&mut self, a: usize, b: Option<usize>, resistance: f64) {
        self.links.push(ThermalLink { a, b, resistance });
    }
}

/// The junction–case part of a transistor's heat path, its far end tied
/// to `to`: one junction node (`junction_heat`) behind θ_JC, or the Cauer
/// ladder of the part's Foster terms (nodes `NAME.junction`, `NAME.die1`, …).
/// Returns the junction node.
fn junction_path(
    nw: &mut Builder<'_>,
    name: &str,
    p: &tankwave_circuit::BjtParams,
    to: Option<usize>,
) -> Result<usize, StageError> {
    if p.lumped_junction() {
        let j = nw.node(format!("{name}.junction"), p.heat_junction);
        nw.link(j, to, p.rth_jc);
        return Ok(j);
    }
    let (r, tau): (Vec<f64>, Vec<f64>) = p.foster_terms().into_iter().unzip();
    let setup = |e: tankwave_solve::ThermalError| StageError::HeatSetup {
        what: format!("{name}: its Foster ladder: {e}"),
    };
    let cauer = tankwave_solve::FosterLadder::new(r, tau)
        .and_then(|f| f.to_cauer())
        .map_err(setup)?;
    let first = nw.names.len();
    for (k, c) in cauer.c.iter().enumerate() {
        let n = if k == 0 {
            format!("{name}.junction")
        } else {
            format!("{name}.die{k}")
        };
        nw.node(n, *c);
    }
    let n = cauer.r.len();
    for (k, r) in cauer.r.iter().enumerate() {
        let b = if k + 1 < n { Some(first + k + 1) } else { to };
        nw.link(first + k, b, *r);
    }
    Ok(first)
}

/// The thermal network of `c` for `spec`, and the devices in it.
pub fn network(
    c: &Circuit,
    spec: &HeatSpec,
) -> Result<(ThermalNetwork, Vec<HeatDevice>), StageError> {
    let mut names: Vec<String> = Vec::new();
    let mut heat: Vec<f64> = Vec::new();
    let mut links: Vec<ThermalLink> = Vec::new();
    let mut devices = Vec::new();
    let bad = |element: &str, why: String| StageError::HeatSetup {
        what: format!("{element}: {why}"),
    };
    let sink = match spec.sink_ambient {
        Some(r) if !spec.sink.is_empty() => {
            names.push("sink".to_string());
            heat.push(spec.sink_heat);
            links.push(ThermalLink {
                a: 0,
                b: None,
                resistance: r,
            });
            Some(0)
        }
        _ => None,
    };
    for (id, el) in c.element_ids() {
        let on_sink = spec.sink.contains(&id);
        match &el.kind {
            ElementKind::Bjt { model, .. } => {
                let Some(ModelParams::Bjt(p)) = c.models.get(model.index()).map(|m| &m.params)
                else {
                    continue;
                };
                let rating_k = p.max_tj.is_finite().then_some(p.max_tj);
                let mut nw = Builder {
                    names: &mut names,
                    heat: &mut heat,
                    links: &mut links,
                };
                let j = match (p.heat_path(on_sink && sink.is_some()), sink) {
                    (HeatPath::SinkWithoutJunctionCase, _) => {
                        return Err(bad(
                            &el.name,
                            "on the heatsink its part needs thermal { junction_case= } or a Foster ladder"
                                .into(),
                        ));
                    }
                    (HeatPath::Sink { case: true }, Some(s)) => {
                        let k = nw.node(format!("{}.case", el.name), p.heat_case);
                        nw.link(k, Some(s), p.rth_cs);
                        junction_path(&mut nw, &el.name, p, Some(k))?
                    }
                    (HeatPath::Sink { case: false }, Some(s)) => {
                        nw.heat[s] += p.heat_case;
                        junction_path(&mut nw, &el.name, p, Some(s))?
                    }
                    (HeatPath::Case, _) => {
                        let k = nw.node(format!("{}.case", el.name), p.heat_case);
                        nw.link(k, None, p.rth_sink);
                        junction_path(&mut nw, &el.name, p, Some(k))?
                    }
                    (HeatPath::Direct, _) => {
                        let j = nw.node(format!("{}.junction", el.name), p.heat_junction);
                        nw.link(j, None, p.rth_ja);
                        j
                    }
                    // no heat path given: the transistor stays at the ambient
                    (HeatPath::Absent | HeatPath::Sink { .. }, _) => continue,
                };
                devices.push(HeatDevice {
                    element: id,
                    name: el.name.clone(),
                    transistor: true,
                    node: j,
                    rating_k,
                    temperature_k: c.temperature_k,
                    dissipation_w: 0.0,
                    idle_w: None,
                    peak: None,
                    resistance_ohm: None,
                });
            }
            ElementKind::Diode { .. } | ElementKind::Resistor { ntc_b: Some(_), .. } => {
                if let (true, Some(s)) = (on_sink, sink) {
                    devices.push(HeatDevice {
                        element: id,
                        name: el.name.clone(),
                        transistor: false,
                        node: s,
                        rating_k: None,
                        temperature_k: c.temperature_k,
                        dissipation_w: 0.0,
                        idle_w: None,
                        peak: None,
                        resistance_ohm: None,
                    });
                }
            }
            _ => {}
        }
    }
    if !devices.iter().any(|d| d.transistor) {
        return Err(StageError::HeatSetup {
            what: "no transistor has a heat path: give its part thermal { junction_case= … } \
                   or junction_ambient=, or put it on the heatsink"
                .into(),
        });
    }
    let net = ThermalNetwork::new(names, heat, links).map_err(|e| StageError::HeatSetup {
        what: e.to_string(),
    })?;
    Ok((net, devices))
}

fn period_data<'a>(c: &'a Circuit, s: &'a PeriodicSolution) -> PeriodData<'a> {
    let n_nodes = c.nodes.len().min(s.x.len());
    PeriodData {
        circuit: c,
        freq: s.freq,
        node_voltages: &s.x[..n_nodes],
        terminal_currents: &s.terminal_currents,
        transport_currents: &s.transport_currents,
        harmonics: s.harmonics,
        node_floors: s.info.floor.get(..n_nodes).unwrap_or(&[]),
    }
}

/// One electrical solve with every device at `ambient + x[node]`: the
/// solution and each device's dissipation.
fn solve_at(
    c: &Circuit,
    p: &SteadyParams,
    devices: &[HeatDevice],
    x: &[f64],
    warm: Option<&PeriodicSolution>,
) -> Result<(PeriodicSolution, Vec<f64>), StageError> {
    let mut temps = vec![None; c.elements.len()];
    for d in devices {
        temps[d.element.index()] = Some(c.temperature_k + x[d.node]);
    }
    let set = tankwave_devices::instantiate_at(c, &temps).map_err(StageError::Devices)?;
    let mut p = p.clone();
    if let Some(w) = warm {
        let start: Vec<f64> =
            w.x.iter()
                .map(|u| u.first().copied().unwrap_or(0.0))
                .collect();
        p.shooting.initial = Some(start.clone());
        p.balance.initial = Some(start);
    }
    let s = tankwave_solve::steady(c, &set, &p)?;
    let all =
        tankwave_measure::average_absorbed(&period_data(c, &s)).map_err(StageError::Measure)?;
    let diss = devices.iter().map(|d| all[d.element.index()]).collect();
    Ok((s, diss))
}

fn node_power(n: usize, devices: &[HeatDevice], diss: &[f64]) -> Vec<f64> {
    let mut p = vec![0.0; n];
    for (d, w) in devices.iter().zip(diss) {
        // a device cannot cool its node below the ambient by delivering power
        p[d.node] += w.max(0.0);
    }
    p
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Solve the periodic steady state of `c` (`p`) together with the
/// temperatures of the network `spec` describes; then follow the heating
/// of the transmission if asked. Returns the electrical solution at the
/// self-consistent temperatures and what was found.
pub fn electrothermal(
    c: &Circuit,
    p: &SteadyParams,
    spec: &HeatSpec,
    warm: Option<&[f64]>,
) -> Result<(PeriodicSolution, HeatOutcome), StageError> {
    let (net, mut devices) = network(c, spec)?;
    let n = net.len();
    let ambient = c.temperature_k;
    let limit = |d: &HeatDevice| d.rating_k.unwrap_or(VALIDITY_LIMIT_K);
    let mut p0 = p.clone();
    if let Some(w) = warm {
        p0.shooting.initial = Some(w.to_vec());
        p0.balance.initial = Some(w.to_vec());
    }
    let rise_of = |devices: &[HeatDevice], diss: &[f64]| -> Result<Vec<f64>, StageError> {
        net.steady_rise(&node_power(n, devices, diss))
            .map_err(|e| StageError::Heat {
                what: e.to_string(),
            })
    };
    let mut rounds: Vec<HeatRound> = Vec::new();
    let mut x = vec![0.0; n];
    let mut prev: Option<(Vec<f64>, Vec<f64>)> = None; // (x, F(x)) of the last round
    let mut warm_sol: Option<PeriodicSolution> = None;
    let runaway = |devices: &[HeatDevice],
                   rounds: &[HeatRound],
                   x: &[f64],
                   diss: &[f64],
                   gain: f64,
                   why: &str| {
        // the hottest transistor names where it happens
        let (k, d) = devices
            .iter()
            .enumerate()
            .filter(|(_, d)| d.transistor)
            .max_by(|a, b| x[a.1.node].total_cmp(&x[b.1.node]))
            .expect("a transistor is in the network");
        StageError::Runaway {
            element: d.name.clone(),
            temperature_k: ambient + x[d.node],
            dissipation_w: diss[k],
            loop_gain: gain,
            why: why.to_string(),
            trail: Box::new(RunawayTrail {
                ambient_k: ambient,
                devices: devices
                    .iter()
                    .map(|d| (d.name.clone(), d.rating_k))
                    .collect(),
                rounds: rounds.to_vec(),
            }),
        }
    };
    for round in 0..spec.rounds {
        let solved = if round == 0 {
            solve_at(c, &p0, &devices, &x, None)
        } else {
            solve_at(c, p, &devices, &x, warm_sol.as_ref())
        };
        let (sol, diss) = solved.map_err(|e| in_round(e, round, &devices, &x, ambient))?;
        let fx = rise_of(&devices, &diss)?;
        let d: Vec<f64> = fx.iter().zip(&x).map(|(f, x)| f - x).collect();
        let change = d.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let gain = prev.as_ref().and_then(|(px, pf)| {
            let dx: Vec<f64> = x.iter().zip(px).map(|(a, b)| a - b).collect();
            let df: Vec<f64> = fx.iter().zip(pf).map(|(a, b)| a - b).collect();
            let dd = dot(&dx, &dx);
            (dd > 0.0).then(|| dot(&df, &dx) / dd)
        });
        rounds.push(HeatRound {
            temperatures_k: devices.iter().map(|dv| ambient + x[dv.node]).collect(),
            dissipation_w: diss.clone(),
            change_k: change,
            gain,
        });
        if change <= HEAT_TOLERANCE_K {
            // converged: the electrical solution at x; measure the loop gain
            let norm = dot(&x, &x).sqrt();
            let u: Vec<f64> = if norm > 0.0 {
                x.iter().map(|v| v / norm).collect()
            } else {
                vec![1.0 / (n as f64).sqrt(); n]
            };
            let xh: Vec<f64> = x.iter().zip(&u).map(|(a, b)| a + b).collect();
            let (_, dh) = solve_at(c, p, &devices, &xh, Some(&sol))?;
            let fh = rise_of(&devices, &dh)?;
            let g = dot(
                &fh.iter().zip(&fx).map(|(a, b)| a - b).collect::<Vec<_>>(),
                &u,
            );
            if g >= 1.0 || !g.is_finite() {
                return Err(runaway(
                    &devices,
                    &rounds,
                    &x,
                    &diss,
                    g,
                    "the heat feedback has a loop gain of 1 or more at the only balance found",
                ));
            }
            if let Some(dv) = devices.iter().find(|dv| ambient + x[dv.node] > limit(dv)) {
                let why = format!(
                    "the stage balances only at {:.1} °C, above the junction limit of {:.1} °C",
                    ambient + x[dv.node] - 273.15,
                    limit(dv) - 273.15
                );
                return Err(runaway(&devices, &rounds, &x, &diss, g, &why));
            }
            for (dv, w) in devices.iter_mut().zip(&diss) {
                dv.temperature_k = ambient + x[dv.node];
                dv.dissipation_w = *w;
                if let Some(ElementKind::Resistor {
                    r, ntc_b: Some(b), ..
                }) = c.elements.get(dv.element.index()).map(|e| &e.kind)
                {
                    dv.resistance_ohm = Some(tankwave_circuit::thermistor_resistance(
                        *r,
                        *b,
                        dv.temperature_k,
                    ));
                }
            }
            let mut out = HeatOutcome {
                ambient_k: ambient,
                nodes: net.names().to_vec(),
                devices,
                rounds,
                loop_gain: g,
                heating: None,
            };
            if let Some(length) = spec.transmit {
                heating(c, p, spec, &net, &mut out, &x, &sol, length)?;
            }
            return Ok((sol, out));
        }
        let g = gain.unwrap_or(0.0);
        if g >= 1.0 {
            return Err(runaway(
                &devices,
                &rounds,
                &x,
                &diss,
                g,
                "each kelvin of heating brings back a kelvin or more (loop gain ≥ 1)",
            ));
        }
        if let Some(dv) = devices
            .iter()
            .find(|dv| ambient + x[dv.node] > limit(dv) && d[dv.node] > 0.0)
        {
            let why = format!(
                "still heating past the junction limit of {:.1} °C",
                limit(dv) - 273.15
            );
            return Err(runaway(&devices, &rounds, &x, &diss, g, &why));
        }
        let step = 1.0 / (1.0 - g.max(0.0));
        prev = Some((x.clone(), fx));
        for (xi, di) in x.iter_mut().zip(&d) {
            // never below the ambient
            *xi = (*xi + step * di).max(0.0);
        }
        // never more than OVERSHOOT_K past a junction's limit: a runaway is
        // then seen there, not as a model pushed far outside its range
        for dv in &devices {
            let cap = limit(dv) + OVERSHOOT_K - ambient;
            if x[dv.node] > cap {
                let k = cap / x[dv.node];
                for xi in x.iter_mut() {
                    *xi *= k;
                }
            }
        }
        warm_sol = Some(sol);
    }
    Err(StageError::Heat {
        what: format!(
            "the electrothermal iteration did not settle in {} rounds (last change {:.3} K; \
             raise rounds=)",
            spec.rounds,
            rounds.last().map(|r| r.change_k).unwrap_or(f64::NAN)
        ),
    })
}

/// The heating over the transmission (see the module docs).
#[allow(clippy::too_many_arguments)]
fn heating(
    c: &Circuit,
    p: &SteadyParams,
    spec: &HeatSpec,
    net: &ThermalNetwork,
    out: &mut HeatOutcome,
    x: &[f64],
    sol: &PeriodicSolution,
    length: f64,
) -> Result<(), StageError> {
    let modes = net.modes().map_err(|e| StageError::HeatSetup {
        what: format!("{e} (transmit= follows the heating over time: give junction_heat=, case_heat= and sink_heat=)"),
    })?;
    let n = net.len();
    let on: Vec<f64> = node_power(
        n,
        &out.devices,
        &out.devices
            .iter()
            .map(|d| d.dissipation_w)
            .collect::<Vec<_>>(),
    );
    let off = if spec.space > 0.0 && spec.mark < length {
        let mut idle = c.clone();
        crate::drive::scale_drive(&mut idle, 0.0)?;
        let (_, diss) = solve_at(&idle, p, &out.devices, x, Some(sol))?;
        for (d, w) in out.devices.iter_mut().zip(&diss) {
            d.idle_w = Some(*w);
        }
        node_power(n, &out.devices, &diss)
    } else {
        vec![0.0; n]
    };
    let keying = Keying {
        mark: spec.mark.min(length),
        space: spec.space,
        length,
    };
    let run =
        heat_run(&modes, &on, &off, keying, 4, HEATING_SAMPLES).map_err(|e| StageError::Heat {
            what: e.to_string(),
        })?;
    let ambient = out.ambient_k;
    for d in &mut out.devices {
        d.peak = Some((ambient + run.peak[d.node], run.peak_at[d.node]));
    }
    out.heating = Some(HeatingCurve {
        times: run.times,
        temperatures_k: run
            .rises
            .iter()
            .map(|r| out.devices.iter().map(|d| ambient + r[d.node]).collect())
            .collect(),
        keying,
    });
    Ok(())
}
