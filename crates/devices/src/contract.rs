//! The device contract every element is written against.
//!
//! The circuit equations are written in charge-oriented MNA form
//!
//! ```text
//!     F(x, t) = i(x, t) + d/dt q(x) = 0
//! ```
//!
//! where `x` holds the node voltages followed by the extra unknowns (branch
//! currents of voltage sources and inductors, internal nodes of devices),
//! `i` collects resistive currents (and the algebraic parts of branch
//! equations, including independent sources), and `q` collects charges and
//! (negated) fluxes. Each row of a node is a KCL sum of currents *leaving*
//! the node through the devices.
//!
//! A device, given `x`, adds its contributions to `i`, `q`, `G = ∂i/∂x` and
//! `C = ∂q/∂x` through a [`Stamp`]. Every analysis uses only this:
//! DC solves `i = 0`; transient discretises `dq/dt`; AC uses `G + jωC` at the
//! operating point with [`Device::ac_excitation`]; harmonic balance samples
//! `i` and `q` over a period; shooting reuses the transient step.
//!
//! Junction limiting: when [`EvalCtx::limit`] is set, a nonlinear device may
//! replace the junction voltages implied by `x` with limited ones (kept in its
//! slice of the state vector between calls). It then stamps the Newton
//! linearisation about the limited point, `i(v_lim) + G·(v − v_lim)`, so the
//! residual stays consistent with `x`, and reports that it limited.

use crate::figure::OpFigure;
use tankwave_circuit::{ElementId, NodeId, Terminal, Unit};

/// Unknown index: `None` is ground (and is ignored by a [`Stamp`]).
pub type Idx = Option<usize>;

/// Receives a device's contributions. Entries at ground (`None`) are dropped by
/// the implementer.
pub trait Stamp {
    /// Add `v` to the resistive current / residual of row `row`.
    fn add_i(&mut self, row: Idx, v: f64);
    /// Add `v` to the charge / flux of row `row`.
    fn add_q(&mut self, row: Idx, v: f64);
    /// Add `v` to `G[row][col] = ∂i_row/∂x_col`.
    fn add_g(&mut self, row: Idx, col: Idx, v: f64);
    /// Add `v` to `C[row][col] = ∂q_row/∂x_col`.
    fn add_c(&mut self, row: Idx, col: Idx, v: f64);
}

/// Conditions of one evaluation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EvalCtx {
    /// Time, s (DC analyses use 0).
    pub time: f64,
    /// Multiplier on the constant (dc) part of every independent source (source stepping).
    pub dc_scale: f64,
    /// Multiplier on the time-varying part of every independent source (drive continuation).
    pub wave_scale: f64,
    /// Conductance a nonlinear device puts across each junction, S.
    pub junction_leak: f64,
    /// Apply junction limiting (Newton iterations) or evaluate exactly at `x`.
    pub limit: bool,
}

impl Default for EvalCtx {
    fn default() -> Self {
        Self {
            time: 0.0,
            dc_scale: 1.0,
            wave_scale: 1.0,
            junction_leak: 1e-12,
            limit: false,
        }
    }
}

/// What an evaluation reports besides its stamps.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct EvalInfo {
    /// A junction voltage was limited: the Newton step is not yet converged.
    pub limited: bool,
}

/// Kind of an unknown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum UnknownKind {
    /// A node voltage (V).
    Voltage,
    /// A branch current (A).
    Current,
}

impl UnknownKind {
    /// The unit its values are in: volts for a voltage, amperes for a current.
    pub fn unit(self) -> Unit {
        match self {
            UnknownKind::Voltage => Unit::Volt,
            UnknownKind::Current => Unit::Ampere,
        }
    }
}

/// One unknown of an instantiated circuit: its place in the state vector
/// `x` (and in [`DeviceSet::names`] and [`DeviceSet::kinds`]). Get one from
/// the circuit's handles with [`DeviceSet::voltage_of`],
/// [`DeviceSet::branch_of`] and [`DeviceSet::internal_of`]; only a name a
/// person typed is looked up by [`DeviceSet::unknown`].
///
/// An element handle is not an unknown:
///
/// ```compile_fail
/// use tankwave_devices::UnknownId;
/// fn unknown_only(_: UnknownId) {}
/// unknown_only(tankwave_circuit::ElementId::new(0));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct UnknownId(u32);

impl UnknownId {
    /// The unknown `x[index]`.
    pub fn new(index: usize) -> UnknownId {
        // The analysis-memory bound of elaboration (`bounds.rs`) keeps the
        // unknowns of any accepted circuit far below 2³².
        UnknownId(u32::try_from(index).expect("unknown indices fit in 32 bits"))
    }
    /// Its index in the state vector.
    pub fn index(self) -> usize {
        self.0 as usize
    }
    /// The voltage unknown of node `n` (`None` for ground). The node
    /// voltages are the first unknowns, in node order, in every
    /// [`DeviceSet`]; this is the one place that rule is written, for
    /// readers holding a solution without its device set.
    /// [`DeviceSet::voltage_of`] also checks that the node is of the circuit.
    pub fn voltage(n: NodeId) -> Option<UnknownId> {
        n.index().map(UnknownId::new)
    }
}

/// One element, written once, serving every analysis.
pub trait Device: Send + Sync + std::fmt::Debug {
    /// The element of [`tankwave_circuit::Circuit::elements`] it was built from.
    fn element(&self) -> ElementId;
    /// External terminal unknowns in the element's terminal order (ground = `None`).
    fn terminals(&self) -> &[Idx];
    /// True when `i` is affine in `x` and `q` linear in `x` (G and C constant).
    fn is_linear(&self) -> bool;
    /// Number of state slots it keeps between evaluations (for limiting).
    fn state_len(&self) -> usize {
        0
    }
    /// Initialise its state slots (called once before an analysis).
    fn init_state(&self, _state: &mut [f64]) {}
    /// Add i, q, G, C at `x` under `ctx`. `state` is this device's slice.
    fn eval(&self, x: &[f64], ctx: &EvalCtx, state: &mut [f64], out: &mut dyn Stamp) -> EvalInfo;
    /// Add the right-hand side of a unit small-signal excitation of this source
    /// (`G + jωC) X = b`: for a voltage source, `b` on its branch row; for a current
    /// source, on its node rows). Non-sources add nothing.
    fn ac_excitation(&self, _out: &mut dyn FnMut(usize, f64)) {}
    /// Times in `[t0, t1)` where its waveform has a corner (transient breakpoints).
    fn breakpoints(&self, _t0: f64, _t1: f64, _out: &mut Vec<f64>) {}
    /// Operating-point figures at `x` (e.g. V_BE, I_C, g_m), SI units (see [`OpFigure`]).
    fn op_info(&self, _x: &[f64], _ctx: &EvalCtx) -> Vec<(OpFigure, f64)> {
        Vec::new()
    }
    /// The intrinsic transport current at `x`, A, for a device that has one
    /// (a bipolar transistor's collector transport current, into the
    /// collector terminal, physical sign): the current of the active device
    /// alone, without the junction charging (displacement) current the
    /// terminal current carries. Measurements of conduction read it.
    fn transport_current(&self, _x: &[f64], _ctx: &EvalCtx) -> Option<f64> {
        None
    }
    /// The unknown carrying its branch current, if it has one (voltage sources, inductors).
    fn branch(&self) -> Option<UnknownId> {
        None
    }
    /// For an element defined over frequency (a measured network): what it
    /// adds to `G + jωC` at `f` (Hz) beyond what [`Device::eval`] stamps, as
    /// (row, column, admittance in S); `None` where it is not defined (a
    /// frequency outside its file's band with no out-of-band rule). Every
    /// other device adds nothing.
    fn frequency_admittance(&self, _f: f64) -> Option<Vec<(usize, usize, num_complex::Complex64)>> {
        Some(Vec::new())
    }
    /// True for an element known exactly only over frequency (a measured
    /// network): time-domain analyses (transient, shooting, settle) refuse
    /// it unless it has a [`Device::time_model`].
    fn frequency_domain(&self) -> bool {
        false
    }
    /// True for an element known over frequency that also carries a
    /// time-domain model (a measured network's fitted rational model),
    /// which time-domain analyses use in its place.
    fn time_model(&self) -> bool {
        false
    }
}

/// A [`Stamp`] that records everything into dense row-major vectors of size n
/// (and n×n). Handy for tests and for evaluating a single device.
#[derive(Debug, Clone)]
pub struct DenseStamp {
    /// Order of the system.
    pub n: usize,
    /// Resistive currents.
    pub i: Vec<f64>,
    /// Charges / fluxes.
    pub q: Vec<f64>,
    /// ∂i/∂x, row-major.
    pub g: Vec<f64>,
    /// ∂q/∂x, row-major.
    pub c: Vec<f64>,
}

impl DenseStamp {
    /// An all-zero stamp of order `n`.
    pub fn new(n: usize) -> Self {
        Self {
            n,
            i: vec![0.0; n],
            q: vec![0.0; n],
            g: vec![0.0; n * n],
            c: vec![0.0; n * n],
        }
    }
    /// Reset to zero.
    pub fn clear(&mut self) {
        self.i.fill(0.0);
        self.q.fill(0.0);
        self.g.fill(0.0);
        self.c.fill(0.0);
    }
    /// `G[r][c]`.
    pub fn g_at(&self, r: usize, c: usize) -> f64 {
        self.g[r * self.n + c]
    }
    /// `C[r][c]`.
    pub fn c_at(&self, r: usize, c: usize) -> f64 {
        self.c[r * self.n + c]
    }
}

impl Stamp for DenseStamp {
    fn add_i(&mut self, row: Idx, v: f64) {
        if let Some(r) = row {
            self.i[r] += v;
        }
    }
    fn add_q(&mut self, row: Idx, v: f64) {
        if let Some(r) = row {
            self.q[r] += v;
        }
    }
    fn add_g(&mut self, row: Idx, col: Idx, v: f64) {
        if let (Some(r), Some(c)) = (row, col) {
            self.g[r * self.n + c] += v;
        }
    }
    fn add_c(&mut self, row: Idx, col: Idx, v: f64) {
        if let (Some(r), Some(c)) = (row, col) {
            self.c[r * self.n + c] += v;
        }
    }
}

/// Value of an unknown, ground reading 0.
#[inline]
pub fn val(x: &[f64], i: Idx) -> f64 {
    match i {
        Some(k) => x[k],
        None => 0.0,
    }
}

/// The unknowns of an instantiated circuit and its devices.
#[derive(Debug)]
pub struct DeviceSet {
    /// Every device.
    pub devices: Vec<Box<dyn Device>>,
    /// Total number of unknowns (node voltages first, `circuit.nodes.len()` of them).
    pub n_unknowns: usize,
    /// Number of external node voltages (the first unknowns).
    pub n_nodes: usize,
    /// Display name of every unknown (`V[coll]`, `I[vsup]`, `V[q1:b']`,
    /// written by [`crate::names`]): for people and files only; code finds
    /// an unknown by its handles ([`DeviceSet::voltage_of`], …).
    pub names: Vec<String>,
    /// Kind of every unknown (and so its unit, [`UnknownKind::unit`]).
    pub kinds: Vec<UnknownKind>,
    /// The branch-current unknown of each element, by element index.
    pub(crate) branches: Vec<Option<UnknownId>>,
    /// The internal nodes: the terminal each sits behind and its unknown.
    pub(crate) internals: Vec<(Terminal, UnknownId)>,
    /// Internal unknowns of an element that sit behind no one terminal
    /// (a transistor's epi junction node, its excess-phase states).
    pub(crate) states: Vec<(ElementId, UnknownId)>,
    /// Offset of each device's state slice in the state vector.
    pub state_offsets: Vec<usize>,
    /// Length of the state vector.
    pub state_len: usize,
}

impl DeviceSet {
    /// The voltage unknown of node `n` (`None` for ground, or a node not of this circuit).
    pub fn voltage_of(&self, n: NodeId) -> Option<UnknownId> {
        UnknownId::voltage(n).filter(|u| u.index() < self.n_nodes)
    }
    /// The branch-current unknown of element `e` (voltage sources and
    /// inductors have one; `None` for every other element).
    pub fn branch_of(&self, e: ElementId) -> Option<UnknownId> {
        self.branches.get(e.index()).copied().flatten()
    }
    /// The internal unknowns of element `e` that sit behind no one terminal
    /// (a transistor's epi junction node `cj'`, its excess-phase states), in
    /// the order they were made.
    pub fn states_of(&self, e: ElementId) -> impl Iterator<Item = UnknownId> + '_ {
        self.states
            .iter()
            .filter(move |(at, _)| *at == e)
            .map(|&(_, u)| u)
    }
    /// The internal node behind terminal `t` of a device (a transistor's
    /// `b'` behind its base), when its ohmic resistance made one.
    pub fn internal_of(&self, t: Terminal) -> Option<UnknownId> {
        self.internals
            .iter()
            .find(|(at, _)| *at == t)
            .map(|&(_, u)| u)
    }
    /// Every unknown, in state-vector order.
    pub fn unknowns(&self) -> impl Iterator<Item = UnknownId> {
        (0..self.n_unknowns).map(UnknownId::new)
    }
    /// Display name of unknown `u`.
    pub fn name(&self, u: UnknownId) -> &str {
        self.names.get(u.index()).map(|s| s.as_str()).unwrap_or("?")
    }
    /// Kind of unknown `u`.
    pub fn kind(&self, u: UnknownId) -> UnknownKind {
        self.kinds
            .get(u.index())
            .copied()
            .unwrap_or(UnknownKind::Voltage)
    }
    /// The unknown a person named (`V[coll]`, `I[rfc]`), for names typed on
    /// the command line or read from files; code uses the handles.
    pub fn unknown(&self, name: &str) -> Option<UnknownId> {
        self.names
            .iter()
            .position(|n| n == name)
            .map(UnknownId::new)
    }
    /// A fresh state vector with every device's initial state.
    pub fn initial_state(&self) -> Vec<f64> {
        let mut s = vec![0.0; self.state_len];
        for (d, &off) in self.devices.iter().zip(&self.state_offsets) {
            let len = d.state_len();
            d.init_state(&mut s[off..off + len]);
        }
        s
    }
    /// Evaluate every device (or only the nonlinear / linear ones) into `out`.
    pub fn eval_all(
        &self,
        x: &[f64],
        ctx: &EvalCtx,
        state: &mut [f64],
        out: &mut dyn Stamp,
        filter: Filter,
    ) -> EvalInfo {
        let mut info = EvalInfo::default();
        for (d, &off) in self.devices.iter().zip(&self.state_offsets) {
            let take = match filter {
                Filter::All => true,
                Filter::Linear => d.is_linear(),
                Filter::Nonlinear => !d.is_linear(),
            };
            if !take {
                continue;
            }
            let len = d.state_len();
            let r = d.eval(x, ctx, &mut state[off..off + len], out);
            info.limited |= r.limited;
        }
        info
    }
}

/// Which devices [`DeviceSet::eval_all`] evaluates.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Filter {
    /// All devices.
    All,
    /// Only devices with [`Device::is_linear`].
    Linear,
    /// Only the others.
    Nonlinear,
}

/// Stamp a linear resistive branch of conductance `g` from `a` to `b`: the
/// current `g·(v_a − v_b)` leaves `a` and enters `b`, with its 2×2 block of
/// `G` (nothing when `g` is 0 or both ends are the same unknown).
pub(crate) fn stamp_conductance(out: &mut dyn Stamp, x: &[f64], a: Idx, b: Idx, g: f64) {
    if g == 0.0 || a == b {
        return;
    }
    let i = g * (val(x, a) - val(x, b));
    out.add_i(a, i);
    out.add_i(b, -i);
    out.add_g(a, a, g);
    out.add_g(a, b, -g);
    out.add_g(b, a, -g);
    out.add_g(b, b, g);
}

/// Stamp a linear capacitance `c` from `a` to `b`: charge `c·(v_a − v_b)` on
/// `a`, its opposite on `b`, and the 2×2 block of `C` (nothing when `c` is 0
/// or both ends are the same unknown).
pub(crate) fn stamp_capacitance(out: &mut dyn Stamp, x: &[f64], a: Idx, b: Idx, c: f64) {
    if c == 0.0 || a == b {
        return;
    }
    let q = c * (val(x, a) - val(x, b));
    out.add_q(a, q);
    out.add_q(b, -q);
    out.add_c(a, a, c);
    out.add_c(a, b, -c);
    out.add_c(b, a, -c);
    out.add_c(b, b, c);
}
