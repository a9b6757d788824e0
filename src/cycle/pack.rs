//! Packs: cells in parallel groups, groups in series, one duty cycle for the pack.
//!
//! Every cell keeps its own fast state, conditions and thermal balance at its own position.
//! A series string carries one current. Inside a parallel group the cells share a node: cell i
//! at the end of a time step has terminal voltage V_i(I_i) (its own particles, kinetics, film
//! and ohmic resistance, exactly as a lone cell's step, [`super::response`]) and its
//! interconnect drops I_i·R_i, so the split solves
//!
//!   V_i(I_i) − I_i·R_i = V_node for every i,   Σ I_i = I_group,
//!
//! by Newton's method on the small system: each cell's local slope −dV_i/dI + R_i (a forward
//! difference) linearises it, which gives the node voltage in closed form and every current
//! from it; the iteration stops once the node voltages of the cells agree to
//! [`SPLIT_TOLERANCE_V`]. Slopes cost a voltage evaluation each, so they are taken once per
//! trial, and only when its first iterate has not converged; that iterate starts on the line
//! through the step's last two accepted splits, so it is off by their curvature only. Identical cells at identical positions take bit-identical currents
//! (the same arithmetic on the same numbers). At rest the group current is zero and cells at
//! different open-circuit voltages exchange current through the node.
//!
//! Power steps solve the pack current whose product with the pack voltage (the sum of the
//! group node voltages) is the power; voltage steps hold the pack voltage, with the current
//! held back further so no cell leaves its voltage window (the highest cell at its upper
//! limit while charging, the lowest at its lower limit otherwise). Steps end on the pack's own
//! ends (pack voltage, pack current, time, charge, state of charge of the first group to reach
//! it) and on the first cell to reach its voltage window, an empty or full electrode surface,
//! or its highest temperature, as a battery management system would stop.
//!
//! Step lengths follow the largest change over the cells of state of charge, cell voltage and
//! temperature; ends are located as for a lone cell ([`super::stepper`]).

use super::balance::Balance;
use super::protocol::{Drive, Step, StepEnd, StepProfile};
use super::record::{step_charge, CycleRecord, EndReason, RampStart, StepSummary, TracePoint};
use super::response::{CellModel, CellState, Control, Evaluation, Health, Scratch, StepConditions, StepMaps, Trial};
use super::stepper::*;
use super::Cell;
use crate::material::constants::SECONDS_PER_HOUR;

/// The cells' node voltages in a parallel group agree to this, V: a current error of about
/// 1e-5 A per 10 mΩ, far below what the 10 mV voltage steps resolve; the currents sum to the
/// group's exactly whatever the tolerance.
pub const SPLIT_TOLERANCE_V: f64 = 1e-7;
/// Newton iterations of one group's split before the trial counts as failed.
const SPLIT_MAX_ITERATIONS: usize = 50;
/// Forward-difference step of a cell's slope, relative to its current (at least 1 A).
const SPLIT_SLOPE_STEP_RELATIVE: f64 = 1e-6;
/// Temperature-limit end: margin scale, K.
const TEMPERATURE_END_TOLERANCE_K: f64 = 1e-3;
/// Most cells a pack may have (memory and time stay bounded: each cell keeps its own trace).
pub const MAX_PACK_CELLS: usize = 1000;

/// How the positions of a pack are cooled.
#[derive(Debug, Clone, PartialEq)]
pub enum Cooling {
    /// Each position sits at the scenario's ambient plus its own offset, K (cycling and idle).
    AmbientOffsets(Vec<f64>),
    /// While the duty cycle runs, coolant enters at `inlet_k` at the first position and warms
    /// linearly by `rise_k` to the last; while idle the pack sits at the scenario's ambient.
    Coolant { inlet_k: f64, rise_k: f64 },
}

/// Where a pack's cells sit, how they are connected and how they are cooled. Positions are
/// counted group by group: position k is cell k mod p of group k / p (p cells per group).
#[derive(Debug, Clone, PartialEq)]
pub struct PackLayout {
    pub parallel: usize,
    pub series: usize,
    /// The cell at each position (each may carry its own drawn values).
    pub cells: Vec<Cell>,
    /// Interconnect resistance between each cell and its group's node, Ω.
    pub interconnect_ohm: Vec<f64>,
    pub cooling: Cooling,
    /// Heat conductance between neighbouring cells of a group, W/K (0: none).
    pub neighbour_conductance_w_k: f64,
    /// Per position, the values drawn for that cell alone (input path, value in the file's
    /// unit), for reporting; empty when the cells are not drawn apart.
    pub drawn: Vec<Vec<(String, f64)>>,
}

impl PackLayout {
    /// A pack of `parallel` × `series` copies of `cell`, no interconnect resistance, no offsets.
    pub fn uniform(cell: &Cell, parallel: usize, series: usize) -> PackLayout {
        let n = parallel * series;
        PackLayout {
            parallel,
            series,
            cells: vec![cell.clone(); n],
            interconnect_ohm: vec![0.0; n],
            cooling: Cooling::AmbientOffsets(vec![0.0; n]),
            neighbour_conductance_w_k: 0.0,
            drawn: Vec::new(),
        }
    }

    pub fn len(&self) -> usize {
        self.cells.len()
    }

    pub fn is_empty(&self) -> bool {
        self.cells.is_empty()
    }

    /// (group, place in the group) of a position, both from 0.
    pub fn place(&self, position: usize) -> (usize, usize) {
        (position / self.parallel, position % self.parallel)
    }

    /// Ambient of a position while the duty cycle runs, K.
    pub fn cycle_ambient_k(&self, position: usize, ambient_k: f64) -> f64 {
        match &self.cooling {
            Cooling::AmbientOffsets(offsets) => ambient_k + offsets[position],
            Cooling::Coolant { inlet_k, rise_k } => {
                let along = if self.len() > 1 { position as f64 / (self.len() - 1) as f64 } else { 0.0 };
                inlet_k + rise_k * along
            }
        }
    }

    /// Ambient of a position while idle between cycles, K.
    pub fn idle_ambient_k(&self, position: usize, ambient_k: f64) -> f64 {
        match &self.cooling {
            Cooling::AmbientOffsets(offsets) => ambient_k + offsets[position],
            Cooling::Coolant { .. } => ambient_k,
        }
    }

    /// Rated capacity of the pack: the parallel count times the nominal cell's, C.
    pub fn nominal_capacity_coulomb(&self, nominal: &Cell) -> f64 {
        self.parallel as f64 * nominal.nominal_capacity_coulomb
    }

    fn group(&self, g: usize) -> std::ops::Range<usize> {
        g * self.parallel..(g + 1) * self.parallel
    }
}

/// A pack prepared for simulation: one model per cell.
#[derive(Debug, Clone)]
pub struct PackModel {
    pub layout: PackLayout,
    pub models: Vec<CellModel>,
}

impl PackModel {
    pub fn new(layout: &PackLayout) -> PackModel {
        PackModel { layout: layout.clone(), models: layout.cells.iter().map(CellModel::new).collect() }
    }

    /// Every cell at rest at the same state of charge, each at its position's cycling ambient.
    pub fn rest_state(&self, balances: &[Balance], healths: &[Health], soc: f64, ambient_k: f64) -> Vec<CellState> {
        (0..self.layout.len())
            .map(|i| {
                self.models[i].rest_state(&balances[i], &healths[i], soc, self.layout.cycle_ambient_k(i, ambient_k))
            })
            .collect()
    }

    /// DC resistance of the pack from a current pulse on rested cells at a state of charge and
    /// temperature, Ω (as [`CellModel::pulse_resistance`], through the split).
    pub fn pulse_resistance(
        &self,
        healths: &[Health],
        balances: &[Balance],
        soc: f64,
        temperature_k: f64,
        current_a: f64,
        duration_s: f64,
    ) -> Option<f64> {
        let states: Vec<CellState> = (0..self.layout.len())
            .map(|i| self.models[i].rest_state(&balances[i], &healths[i], soc, temperature_k))
            .collect();
        let mut solver = PackSolver::new(self, healths);
        let ambients = vec![temperature_k; self.layout.len()];
        solver.prepare(&states, &ambients, 0.0);
        let rest = solver.trial(&states, Control::Current(0.0), 0.0, 0.0)?;
        let loaded = solver.trial(&states, Control::Current(current_a), duration_s, current_a)?;
        Some((rest.voltage - loaded.voltage) / current_a)
    }
}

/// The pack at the end of a trial step.
#[derive(Debug, Clone)]
struct PackTrial {
    dt: f64,
    /// The pack current at the step's start when it moves linearly within the step, A.
    ramp_from: Option<f64>,
    /// Pack current (every group's), A, and pack voltage (sum of the groups' node voltages), V.
    current: f64,
    voltage: f64,
    cells: Vec<Trial>,
}

impl PackTrial {
    /// Charge passed over the step, C: the end current's, or the trapezoid over a ramp.
    fn charge_coulomb(&self) -> f64 {
        step_charge(self.ramp_from, self.current, self.dt)
    }
}

/// How currents move within a pack's trial step: not at all on a step's first trial; each
/// cell's where it changes within the step (a held voltage or power, a cell that plates, or a
/// parallel group sharing its current); the pack's, from this start, under a held voltage or
/// power.
#[derive(Debug, Clone, Copy)]
struct Within {
    first: bool,
    cell_current_varies: bool,
    pack_ramp_from: Option<f64>,
}

/// Solves a pack's trial steps: per-cell conditions, responses and scratch, reused.
struct PackSolver<'a> {
    model: &'a PackModel,
    healths: &'a [Health],
    conds: Vec<StepConditions>,
    maps: Vec<StepMaps>,
    scratch: Vec<Scratch>,
    /// Per-cell currents of the last solve (the next solve's start).
    currents: Vec<f64>,
    /// Node voltage of each cell at the current iterate, and its slope.
    node: Vec<f64>,
    slope: Vec<f64>,
    /// Whether `slope` was taken in this trial.
    slope_fresh: Vec<bool>,
    /// Start-of-step temperatures, K.
    temperatures: Vec<f64>,
    /// The pack current the prepared step ramps from, A.
    pack_ramp_from: Option<f64>,
    /// Each cell's last evaluation at its iterate current in this trial.
    evaluations: Vec<Option<Evaluation>>,
}

impl<'a> PackSolver<'a> {
    fn new(model: &'a PackModel, healths: &'a [Health]) -> PackSolver<'a> {
        let n = model.layout.len();
        PackSolver {
            model,
            healths,
            conds: Vec::with_capacity(n),
            maps: Vec::with_capacity(n),
            scratch: (0..n).map(|_| Scratch::default()).collect(),
            currents: vec![0.0; n],
            node: vec![0.0; n],
            slope: vec![0.0; n],
            slope_fresh: vec![false; n],
            temperatures: vec![0.0; n],
            pack_ramp_from: None,
            evaluations: vec![None; n],
        }
    }

    /// Conditions of every cell for a step of `dt` from `states` at per-position `ambients_k`,
    /// with every current and heat held over the step.
    fn prepare(&mut self, states: &[CellState], ambients_k: &[f64], dt: f64) {
        self.conds.clear();
        for (i, state) in states.iter().enumerate() {
            self.conds.push(self.model.models[i].step_conditions(&self.healths[i], state, dt, ambients_k[i]));
            self.temperatures[i] = state.temperature_k;
        }
        self.pack_ramp_from = None;
    }

    /// The prepared step with each cell's current and heat moving within it as the lone cell's
    /// do ([`within_step`]) from its last point in `cells`, and the pack's current as `within`
    /// says.
    fn move_within(&mut self, within: Within, cells: &[CycleRecord]) {
        for (cond, record) in self.conds.iter_mut().zip(cells) {
            let previous = record.trace.last().expect("trace starts with the initial point");
            *cond = within_step(*cond, within.first, within.cell_current_varies, previous);
        }
        self.pack_ramp_from = within.pack_ramp_from;
    }

    /// Node voltage of cell i carrying `current`, keeping the evaluation to finish the trial.
    fn evaluate_node(&mut self, i: usize, current: f64) -> f64 {
        let evaluation = self.model.models[i].evaluate(&self.conds[i], &self.maps[i], current);
        self.evaluations[i] = Some(evaluation);
        evaluation.voltage - current * self.model.layout.interconnect_ohm[i]
    }

    /// Node voltage of cell i carrying `current`.
    fn node_voltage(&self, i: usize, current: f64) -> f64 {
        self.model.models[i].terminal_voltage(&self.conds[i], &self.maps[i], current)
            - current * self.model.layout.interconnect_ohm[i]
    }

    /// Splits `group_current` over group `g` (module docs); returns the node voltage.
    fn split_group(&mut self, g: usize, group_current: f64) -> Option<f64> {
        let range = self.model.layout.group(g);
        let p = range.len();
        if p == 1 {
            let i = range.start;
            self.currents[i] = group_current;
            let v = self.evaluate_node(i, group_current);
            self.node[i] = v;
            return v.is_finite().then_some(v);
        }
        let sum: f64 = self.currents[range.clone()].iter().sum();
        let shift = (group_current - sum) / p as f64;
        for i in range.clone() {
            self.currents[i] += shift;
        }
        for _ in 0..SPLIT_MAX_ITERATIONS {
            let (mut low, mut high) = (f64::INFINITY, f64::NEG_INFINITY);
            for i in range.clone() {
                let v = self.evaluate_node(i, self.currents[i]);
                if !v.is_finite() {
                    return None;
                }
                self.node[i] = v;
                low = low.min(v);
                high = high.max(v);
            }
            if high - low <= SPLIT_TOLERANCE_V {
                // The mean, summed in position order.
                return Some(self.node[range.clone()].iter().sum::<f64>() / p as f64);
            }
            // Linearise each cell: v_i(I) ≈ v_i − r_i (I − I_i), r_i > 0, with the slope taken
            // at the trial's first iterate (later iterates move too little to change it much).
            let (mut numerator, mut conductance) = (0.0, 0.0);
            for i in range.clone() {
                if !self.slope_fresh[i] {
                    self.take_slope(i)?;
                }
                let r = self.slope[i];
                numerator += self.currents[i] + self.node[i] / r;
                conductance += 1.0 / r;
            }
            let v_node = (numerator - group_current) / conductance;
            for i in range.clone() {
                self.currents[i] += (self.node[i] - v_node) / self.slope[i];
            }
        }
        None
    }

    /// Takes −dv_i/dI + R_i of cell i at its present current (forward difference), > 0.
    fn take_slope(&mut self, i: usize) -> Option<()> {
        let h = SPLIT_SLOPE_STEP_RELATIVE * self.currents[i].abs().max(1.0);
        let r = -(self.node_voltage(i, self.currents[i] + h) - self.node[i]) / h;
        if !(r.is_finite() && r > 0.0) {
            return None;
        }
        self.slope[i] = r;
        self.slope_fresh[i] = true;
        Some(())
    }

    /// Pack voltage at a pack current (all groups split).
    fn pack_voltage(&mut self, current: f64) -> Option<f64> {
        let mut total = 0.0;
        for g in 0..self.model.layout.series {
            total += self.split_group(g, current)?;
        }
        Some(total)
    }

    /// Pack voltage at a pack current and its slope dV/dI from the cells' latest local slopes
    /// (each group's node moves by −1/Σ(1/r_i) per ampere).
    fn pack_voltage_and_slope(&mut self, current: f64) -> Option<(f64, f64)> {
        let (mut total, mut slope) = (0.0, 0.0);
        for g in 0..self.model.layout.series {
            total += self.split_group(g, current)?;
            for i in self.model.layout.group(g) {
                if !self.slope_fresh[i] {
                    self.take_slope(i)?;
                }
            }
            let conductance: f64 = self.slope[self.model.layout.group(g)].iter().map(|r| 1.0 / r).sum();
            slope -= 1.0 / conductance;
        }
        Some((total, slope))
    }

    /// Highest and lowest cell voltage window residuals at the present split: (max over cells
    /// of V_i − V_max,i, min over cells of V_i − V_min,i).
    fn window_residuals(&self) -> (f64, f64) {
        let (mut over, mut under) = (f64::NEG_INFINITY, f64::INFINITY);
        for (i, cell) in self.model.layout.cells.iter().enumerate() {
            // The split left each node voltage at its current.
            let v = self.node[i] + self.currents[i] * self.model.layout.interconnect_ohm[i];
            over = over.max(v - cell.voltage_max_v);
            under = under.min(v - cell.voltage_min_v);
        }
        (over, under)
    }

    /// Solves a pack step of length `dt` from `states` for the control.
    fn trial(&mut self, states: &[CellState], control: Control, dt: f64, guess: f64) -> Option<PackTrial> {
        self.maps.clear();
        self.slope_fresh.fill(false);
        self.evaluations.fill(None);
        for (i, state) in states.iter().enumerate() {
            let maps = self.model.models[i].step_maps(state, &self.conds[i], dt, &mut self.scratch[i]);
            self.maps.push(maps);
        }
        let tolerance = if self.model.layout.parallel > 1 { CONTROL_RESIDUAL_SPLIT } else { CONTROL_RESIDUAL };
        let current = match control {
            Control::Current(i) => i,
            // I·V(I) rises with I and V(I) falls on the branch a pack operates on.
            Control::Power(target) => solve_with_slope(
                |i| self.pack_voltage_and_slope(i).map(|(v, dv)| (target - i * v, -(v + i * dv))),
                guess,
                tolerance,
            )?,
            Control::Voltage(target) => solve_with_slope(
                |i| {
                    let (v, dv) = self.pack_voltage_and_slope(i)?;
                    let (over, under) = self.window_residuals();
                    // A cell's own limit moves with its group's share of the pack voltage.
                    let per_group = dv / self.model.layout.series as f64;
                    let (mut residual, mut slope) = (v - target, dv);
                    if over > residual {
                        (residual, slope) = (over, per_group);
                    }
                    if under < residual {
                        (residual, slope) = (under, per_group);
                    }
                    Some((residual, slope))
                },
                guess,
                tolerance,
            )?,
        };
        let voltage = self.pack_voltage(current)?;
        let layout = &self.model.layout;
        let mut cells = Vec::with_capacity(layout.len());
        for i in 0..layout.len() {
            let exchanged = self.exchanged_heat_w(i);
            let model = &self.model.models[i];
            let trial = match self.evaluations[i] {
                // The split evaluated this very current last.
                Some(e) if e.current == self.currents[i] => {
                    model.finish_evaluated(&self.conds[i], &self.maps[i], &e, exchanged)
                }
                _ => model.finish_trial(&self.conds[i], &self.maps[i], self.currents[i], exchanged),
            };
            cells.push(trial?);
        }
        Some(PackTrial { dt, ramp_from: self.pack_ramp_from, current, voltage, cells })
    }

    /// Heat flowing into cell i from its neighbours in the group at the step's start, W.
    fn exchanged_heat_w(&self, i: usize) -> f64 {
        let layout = &self.model.layout;
        let g = layout.neighbour_conductance_w_k;
        if g == 0.0 {
            return 0.0;
        }
        let (_, place) = layout.place(i);
        let mut heat = 0.0;
        if place > 0 {
            heat += g * (self.temperatures[i - 1] - self.temperatures[i]);
        }
        if place + 1 < layout.parallel {
            heat += g * (self.temperatures[i + 1] - self.temperatures[i]);
        }
        heat
    }
}

/// A pack current meeting a control: Newton's method on a decreasing residual with the slope
/// the split supplies, kept inside a bracket that grows by one current scale while only one
/// side is known and is bisected when a Newton step would leave it (as a lone cell's
/// constant-voltage and constant-power steps are solved, [`super::response`]).
fn solve_with_slope(mut f: impl FnMut(f64) -> Option<(f64, f64)>, guess: f64, residual: f64) -> Option<f64> {
    let scale = guess.abs().max(CONTROL_MIN_CURRENT_SCALE_A);
    let mut x = guess;
    let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
    for _ in 0..CONTROL_MAX_ITERATIONS {
        let (fx, slope) = f(x)?;
        if !fx.is_finite() {
            return None;
        }
        if fx.abs() < residual {
            return Some(x);
        }
        if fx > 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let mut next = if slope < 0.0 { x - fx / slope } else { f64::NAN };
        if !next.is_finite() || next <= lo || next >= hi {
            next = match (lo.is_finite(), hi.is_finite()) {
                (true, true) => 0.5 * (lo + hi),
                (true, false) => x + scale,
                (false, true) => x - scale,
                (false, false) => return None,
            };
        }
        if (next - x).abs() < CONTROL_CURRENT_STEP_RELATIVE * scale {
            return Some(next);
        }
        x = next;
    }
    None
}

/// Solving for a pack current: as a lone cell's controls (`response.rs`), residual in V or W;
/// with parallel groups, ten times the split's tolerance, since the pack voltage is only known
/// to it.
const CONTROL_RESIDUAL: f64 = 1e-10;
const CONTROL_RESIDUAL_SPLIT: f64 = 10.0 * SPLIT_TOLERANCE_V;
const CONTROL_MAX_ITERATIONS: usize = 60;
const CONTROL_CURRENT_STEP_RELATIVE: f64 = 1e-12;
const CONTROL_MIN_CURRENT_SCALE_A: f64 = 1.0;

/// One simulated pack cycle: the pack's own trace (pack current and voltage, hottest cell's
/// temperature, the state of charge of the first group to empty) and every cell's record.
#[derive(Debug, Clone, Default)]
pub struct PackRecord {
    pub pack: CycleRecord,
    pub cells: Vec<CycleRecord>,
}

/// What one pack cycle runs: the profile, the scenario's ambient, each cell's health and
/// balance.
#[derive(Debug, Clone, Copy)]
pub struct PackRun<'a> {
    pub profile: &'a StepProfile,
    pub ambient_k: f64,
    pub healths: &'a [Health],
    pub balances: &'a [Balance],
}

/// Runs one pack cycle from `states`, filling `record`.
pub fn simulate_pack_cycle(
    model: &PackModel,
    run: &PackRun,
    states: &mut [CellState],
    settings: &SolverSettings,
    record: &mut PackRecord,
) -> Result<(), CycleError> {
    let n = model.layout.len();
    record.cells.resize_with(n, CycleRecord::default);
    let ambients: Vec<f64> = (0..n).map(|i| model.layout.cycle_ambient_k(i, run.ambient_k)).collect();
    let mut stepper = PackStepper {
        solver: PackSolver::new(model, run.healths),
        balances: run.balances,
        settings,
        ambients,
        margins: Vec::new(),
        time_s: 0.0,
        current_guess: 0.0,
        split_start: Vec::new(),
        split_rate: vec![0.0; model.layout.len()],
    };
    record.pack.trace.clear();
    record.pack.steps.clear();
    for (i, cell_record) in record.cells.iter_mut().enumerate() {
        cell_record.trace.clear();
        cell_record.steps.clear();
        model.models[i].start_stress_histories(cell_record);
    }
    stepper.solver.prepare(states, &stepper.ambients, 0.0);
    let start = stepper.solver.trial(states, Control::Current(0.0), 0.0, 0.0).ok_or_else(|| CycleError::Failed {
        step: 0,
        label: "start".into(),
        time_s: 0.0,
        detail: "the starting state has no finite voltage".into(),
    })?;
    stepper.push_points(&start, states, 0, record);
    for (index, step) in run.profile.steps.iter().enumerate() {
        let summary = stepper.run_step(index, step, states, record)?;
        record.pack.steps.push(summary);
    }
    let duration = stepper.time_s;
    summarise(&mut record.pack, duration, 0.0);
    for (i, cell_record) in record.cells.iter_mut().enumerate() {
        summarise(cell_record, duration, 0.0);
        cell_record.dead_coulomb = states[i].dead_coulomb;
        cell_record.reintercalated_coulomb = model.models[i].end_cycle(&mut states[i], &run.balances[i]);
    }
    Ok(())
}

/// Runs warm-up pack cycles from every cell at rest at `start_soc` until the cycle returns to
/// its start (every cell within the periodic tolerance); returns the record and end states.
pub fn simulate_pack_periodic(
    model: &PackModel,
    run: &PackRun,
    start_soc: f64,
    settings: &SolverSettings,
) -> Result<(PackRecord, Vec<CellState>), CycleError> {
    let mut states = model.rest_state(run.balances, run.healths, start_soc, run.ambient_k);
    let mut record = PackRecord::default();
    let mut warmups = 0;
    let mut residual;
    loop {
        let start = states.clone();
        simulate_pack_cycle(model, run, &mut states, settings, &mut record)?;
        residual = (0..states.len()).map(|i| state_change(&model.models[i], &start[i], &states[i])).fold(0.0, f64::max);
        if residual <= settings.periodic_tolerance || warmups >= settings.max_warmup_cycles {
            break;
        }
        warmups += 1;
    }
    record.pack.warmup_cycles = warmups;
    record.pack.periodic_residual = residual;
    Ok((record, states))
}

/// How far a step has run at the end of a trial.
#[derive(Debug, Clone, Copy)]
struct PackProgress {
    elapsed_s: f64,
    charge_passed_coulomb: f64,
}

enum PackJudged {
    Accept(PackTrial),
    Retry(f64),
    GiveUp,
}

struct PackStepper<'a> {
    solver: PackSolver<'a>,
    balances: &'a [Balance],
    settings: &'a SolverSettings,
    ambients: Vec<f64>,
    margins: Vec<(EndReason, f64)>,
    time_s: f64,
    current_guess: f64,
    /// Each cell's current at the last accepted point and its rate of change over the step's
    /// last accepted trial, A/s: a trial of length dt starts its split from the line through
    /// them, so the first iterate is off by the curvature only.
    split_start: Vec<f64>,
    split_rate: Vec<f64>,
}

impl PackStepper<'_> {
    /// Starts the split of a trial of length `dt` on the line through the last accepted split.
    fn predict_split(&mut self, dt: f64) {
        for ((current, start), rate) in self.solver.currents.iter_mut().zip(&self.split_start).zip(&self.split_rate) {
            *current = start + rate * dt;
        }
    }

    fn fail(&self, step: usize, label: &str, detail: impl Into<String>) -> CycleError {
        CycleError::Failed { step: step + 1, label: label.to_string(), time_s: self.time_s, detail: detail.into() }
    }

    fn layout(&self) -> &PackLayout {
        &self.solver.model.layout
    }

    fn cell_soc(&self, i: usize, trial: &Trial) -> f64 {
        self.balances[i].soc_of_neg_stoich(trial.neg_mean)
    }

    /// State of charge of each group: its cells' states of charge weighted by their capacities.
    fn group_socs(&self, trial: &PackTrial) -> impl Iterator<Item = f64> + '_ {
        let layout = self.layout();
        let cells: Vec<f64> = trial.cells.iter().enumerate().map(|(i, t)| self.cell_soc(i, t)).collect();
        (0..layout.series).map(move |g| {
            let range = layout.group(g);
            let weight: f64 = range.clone().map(|i| self.balances[i].capacity_coulomb).sum();
            range.map(|i| cells[i] * self.balances[i].capacity_coulomb).sum::<f64>() / weight
        })
    }

    /// The pack's state of charge as a step sees it: the first group to reach the end in the
    /// step's direction (lowest on discharge and at rest, highest on charge).
    fn pack_soc(&self, trial: &PackTrial, direction: f64) -> f64 {
        let socs = self.group_socs(trial);
        if direction < 0.0 {
            socs.fold(f64::NEG_INFINITY, f64::max)
        } else {
            socs.fold(f64::INFINITY, f64::min)
        }
    }

    fn push_points(&mut self, trial: &PackTrial, states: &[CellState], step: usize, record: &mut PackRecord) {
        let mut hottest = f64::NEG_INFINITY;
        for (i, cell_trial) in trial.cells.iter().enumerate() {
            let model = &self.solver.model.models[i];
            let mut point = model.trace_point(self.time_s, cell_trial, &self.balances[i], step);
            point.plated_coulomb = states[i].plated_coulomb + states[i].dead_coulomb;
            record.cells[i].trace.push(point);
            model.record_profiles(&states[i], &self.solver.conds[i], cell_trial, &mut record.cells[i]);
            hottest = hottest.max(cell_trial.temperature_k);
        }
        record.pack.trace.push(TracePoint {
            time_s: self.time_s,
            dt_s: trial.dt,
            current_a: trial.current,
            voltage_v: trial.voltage,
            temperature_k: hottest,
            soc: self.pack_soc(trial, trial.current.signum()),
            step,
            ramp_start: trial.ramp_from.map(|current_a| RampStart { current_a, plating_current_a: 0.0 }),
            ..TracePoint::default()
        });
    }

    fn direction(drive: Drive, trial: &PackTrial) -> f64 {
        match drive {
            Drive::Current(i) => i.signum(),
            Drive::Power(p) => p.signum(),
            Drive::Voltage(_) => trial.current.signum(),
            Drive::Rest => 0.0,
        }
    }

    /// Distance to each end, scaled by its tolerance: positive before, ≤ 0 once reached.
    fn end_margins(&mut self, step: &Step, trial: &PackTrial, progress: PackProgress) {
        let mut out = std::mem::take(&mut self.margins);
        out.clear();
        let direction = Self::direction(step.drive, trial);
        let tolerance_v = self.settings.voltage_end_tolerance_v;
        for end in &step.ends {
            let margin = match *end {
                StepEnd::Voltage(v) => direction * (trial.voltage - v) / tolerance_v,
                StepEnd::CurrentBelow(i) => (trial.current.abs() - i) / (CURRENT_END_TOLERANCE_RELATIVE * i),
                StepEnd::Time(t) => (t - progress.elapsed_s) / TIME_END_TOLERANCE_S - 1.0,
                StepEnd::Soc(s) => {
                    if direction == 0.0 {
                        continue;
                    }
                    direction * (self.pack_soc(trial, direction) - s) / SOC_END_TOLERANCE
                }
                StepEnd::Charge(q) => (q - progress.charge_passed_coulomb.abs()) / (CHARGE_END_TOLERANCE_RELATIVE * q),
            };
            out.push((reason_of(end), margin));
        }
        let cells = &self.layout().cells;
        if !matches!(step.drive, Drive::Voltage(_) | Drive::Rest) {
            let window = trial
                .cells
                .iter()
                .zip(cells)
                .map(|(t, c)| if direction > 0.0 { t.voltage - c.voltage_min_v } else { c.voltage_max_v - t.voltage })
                .fold(f64::INFINITY, f64::min);
            out.push((EndReason::VoltageLimit, window / tolerance_v));
        }
        if step.drive != Drive::Rest {
            let room = trial
                .cells
                .iter()
                .zip(cells)
                .map(|(t, c)| c.temperature_max_k - t.temperature_k)
                .fold(f64::INFINITY, f64::min);
            out.push((EndReason::TemperatureLimit, room / TEMPERATURE_END_TOLERANCE_K));
        }
        let surface_room = trial
            .cells
            .iter()
            .flat_map(|t| [t.neg_surface, t.pos_surface])
            .map(|x| (x - SURFACE_GUARD).min(1.0 - SURFACE_GUARD - x))
            .fold(f64::INFINITY, f64::min);
        out.push((EndReason::ElectrodeLimit, surface_room / SURFACE_END_TOLERANCE));
        self.margins = out;
    }

    /// Largest change over the cells from the last accepted points to a trial.
    fn changes(&self, record: &PackRecord, trial: &PackTrial) -> StepChanges {
        trial.cells.iter().enumerate().fold(StepChanges::default(), |largest, (i, t)| {
            let previous = record.cells[i].trace.last().expect("trace starts with the initial point");
            largest.max(StepChanges::between(previous, t, self.cell_soc(i, t)))
        })
    }

    fn judge(&self, dt: f64, trial: Option<PackTrial>, record: &PackRecord, checks: StepChecks) -> PackJudged {
        let s = self.settings;
        match trial {
            None if dt < SHORTEST_RETRY_STEP_S => PackJudged::GiveUp,
            None => PackJudged::Retry(dt * FAILED_TRIAL_SHRINK),
            Some(trial) if dt > s.first_dt_s * SHORTEST_REFINED_STEP_FRACTION => {
                if self.changes(record, &trial).too_coarse(checks, s) {
                    PackJudged::Retry(dt * COARSE_TRIAL_SHRINK)
                } else {
                    PackJudged::Accept(trial)
                }
            }
            Some(trial) => PackJudged::Accept(trial),
        }
    }

    fn control(drive: Drive) -> Control {
        match drive {
            Drive::Current(i) => Control::Current(i),
            Drive::Power(p) => Control::Power(p),
            Drive::Voltage(v) => Control::Voltage(v),
            Drive::Rest => Control::Current(0.0),
        }
    }

    fn run_step(
        &mut self,
        index: usize,
        step: &Step,
        states: &mut [CellState],
        record: &mut PackRecord,
    ) -> Result<StepSummary, CycleError> {
        let control = Self::control(step.drive);
        let max_dt = if step.drive == Drive::Rest { self.settings.max_dt_rest_s } else { self.settings.max_dt_load_s };
        let time_end = step
            .ends
            .iter()
            .filter_map(|e| if let StepEnd::Time(t) = e { Some(*t) } else { None })
            .fold(f64::INFINITY, f64::min);
        let mut elapsed = 0.0;
        let mut charge = 0.0;
        let mut dt = self.settings.first_dt_s;
        let mut first = true;
        let plates = self.solver.model.models.iter().any(|m| m.cell.plating.is_some());
        self.split_start.clone_from(&self.solver.currents);
        self.split_rate.fill(0.0);
        self.current_guess = match step.drive {
            Drive::Current(i) => i,
            Drive::Power(p) => {
                p / record.pack.trace.last().map_or(POWER_GUESS_FALLBACK_V, |t| t.voltage_v.max(POWER_GUESS_MIN_V))
            }
            _ => record.pack.trace.last().map_or(0.0, |t| t.current_a),
        };
        loop {
            if elapsed > self.settings.max_step_duration_s {
                return Err(self.fail(
                    index,
                    &step.label,
                    format!(
                        "did not end within {:.0} h; check its end conditions",
                        self.settings.max_step_duration_s / SECONDS_PER_HOUR
                    ),
                ));
            }
            dt = dt.min(time_end - elapsed).max(MIN_STEP_S);
            let within = Within {
                first,
                cell_current_varies: current_varies(step.drive, plates) || self.layout().parallel > 1,
                pack_ramp_from: match record.pack.trace.last() {
                    // The pack's own current varies with its drive only (plating splits cells).
                    Some(p) if !first && current_varies(step.drive, false) => Some(p.current_a),
                    _ => None,
                },
            };
            self.solver.prepare(states, &self.ambients, dt);
            self.solver.move_within(within, &record.cells);
            self.predict_split(dt);
            let trial = self.solver.trial(states, control, dt, self.current_guess);
            let checks = StepChecks::of(Some(step.drive), first, plates);
            let trial = match self.judge(dt, trial, record, checks) {
                PackJudged::Accept(trial) => trial,
                PackJudged::Retry(shorter) => {
                    dt = shorter;
                    continue;
                }
                PackJudged::GiveUp => return Err(self.fail(index, &step.label, describe(step.drive))),
            };
            let passed = charge + trial.charge_coulomb();
            self.end_margins(step, &trial, PackProgress { elapsed_s: elapsed + dt, charge_passed_coulomb: passed });
            let other_end = self.margins.iter().any(|(r, m)| *r != EndReason::Time && *m <= 0.0);
            let time_end_reached = self.margins.iter().any(|(r, m)| *r == EndReason::Time && *m <= 0.0);
            if other_end || time_end_reached {
                let (trial, reason) = if other_end {
                    let located =
                        self.locate(step, index, (states, &record.cells), within, control, elapsed, charge, dt)?;
                    // The conditions depend on the step's length (the temperature predicted over it).
                    self.solver.prepare(states, &self.ambients, located.0.dt);
                    self.solver.move_within(within, &record.cells);
                    located
                } else {
                    (trial, EndReason::Time)
                };
                self.accept(states, &trial, (index, &step.label), record)?;
                charge += trial.charge_coulomb();
                elapsed += trial.dt;
                return Ok(StepSummary {
                    index,
                    label: step.label.clone(),
                    end: reason,
                    duration_s: elapsed,
                    charge_coulomb: charge,
                });
            }
            let changes = self.changes(record, &trial);
            self.accept(states, &trial, (index, &step.label), record)?;
            // The first trial of a step carries the jump to the step's own split, not a trend.
            for (i, cell) in trial.cells.iter().enumerate() {
                self.split_rate[i] = if first { 0.0 } else { (cell.current - self.split_start[i]) / trial.dt };
                self.split_start[i] = cell.current;
            }
            charge = passed;
            elapsed += dt;
            dt = (trial.dt * changes.step_ratio(checks, self.settings)).min(max_dt);
            first = false;
        }
    }

    fn accept(
        &mut self,
        states: &mut [CellState],
        trial: &PackTrial,
        (step, label): (usize, &str),
        record: &mut PackRecord,
    ) -> Result<(), CycleError> {
        if record.pack.trace.len() > self.settings.max_time_steps {
            let detail = format!(
                "the cycle needs more than {} time steps (the cap on one cycle); the inputs make every step tiny — check temperatures, currents and powers for a slip of units",
                self.settings.max_time_steps
            );
            return Err(self.fail(step, label, detail));
        }
        for (i, cell_trial) in trial.cells.iter().enumerate() {
            let model = &self.solver.model.models[i];
            model.commit(&mut states[i], &self.solver.conds[i], cell_trial, &mut self.solver.scratch[i]);
            self.solver.currents[i] = cell_trial.current;
        }
        self.time_s += trial.dt;
        self.current_guess = trial.current;
        self.push_points(trial, states, step, record);
        Ok(())
    }

    /// Finds the step length at which the first end is met (as the lone cell's stepper does).
    #[allow(clippy::too_many_arguments)]
    #[allow(clippy::too_many_arguments)]
    fn locate(
        &mut self,
        step: &Step,
        index: usize,
        (states, cells): (&[CellState], &[CycleRecord]),
        within: Within,
        control: Control,
        elapsed: f64,
        charge: f64,
        dt: f64,
    ) -> Result<(PackTrial, EndReason), CycleError> {
        let evaluate = |this: &mut Self, h: f64| -> Option<(PackTrial, EndReason, f64)> {
            this.solver.prepare(states, &this.ambients, h);
            this.solver.move_within(within, cells);
            this.predict_split(h);
            let trial = this.solver.trial(states, control, h, this.current_guess)?;
            let progress =
                PackProgress { elapsed_s: elapsed + h, charge_passed_coulomb: charge + trial.charge_coulomb() };
            this.end_margins(step, &trial, progress);
            let (reason, margin) = this.margins.iter().copied().min_by(|a, b| a.1.total_cmp(&b.1))?;
            Some((trial, reason, margin))
        };
        let (mut lo, mut f_lo) = (0.0, LOCATE_START_MARGIN);
        let (mut best, mut best_reason, f_dt) =
            evaluate(self, dt).ok_or_else(|| self.fail(index, &step.label, "solver failed near a step end"))?;
        let (mut hi, mut f_hi) = (dt, f_dt + LOCATE_AIM_OFFSET);
        if f_dt >= LOCATE_LOWEST_MARGIN {
            return Ok((best, best_reason));
        }
        f_lo += LOCATE_AIM_OFFSET;
        let mut side = 0;
        for _ in 0..LOCATE_MAX_ITERATIONS {
            let h = if f_lo.is_finite() && f_hi.is_finite() && f_lo > f_hi {
                (lo * f_hi - hi * f_lo) / (f_hi - f_lo)
            } else {
                0.5 * (lo + hi)
            };
            let h = if h <= lo || h >= hi { 0.5 * (lo + hi) } else { h };
            let Some((trial, reason, margin)) = evaluate(self, h) else {
                hi = h;
                continue;
            };
            let f = margin + LOCATE_AIM_OFFSET;
            if margin <= 0.0 {
                best = trial;
                best_reason = reason;
                if margin >= LOCATE_LOWEST_MARGIN {
                    return Ok((best, best_reason));
                }
                hi = h;
                f_hi = f;
                if side == -1 {
                    f_lo *= 0.5;
                }
                side = -1;
            } else {
                lo = h;
                f_lo = f;
                if side == 1 {
                    f_hi *= 0.5;
                }
                side = 1;
            }
            if hi - lo < LOCATE_BRACKET_S {
                break;
            }
        }
        // The accepted trial's split is the one the cells take.
        for (i, t) in best.cells.iter().enumerate() {
            self.solver.currents[i] = t.current;
        }
        Ok((best, best_reason))
    }
}

fn describe(drive: Drive) -> String {
    match drive {
        Drive::Power(p) => format!("the pack cannot deliver {:.1} W here", p.abs()),
        Drive::Voltage(v) => format!("no pack current holds {v:.3} V"),
        _ => "the pack's cells have no finite state here".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coolant_rises_linearly_along_the_positions() {
        let layout = PackLayout {
            cooling: Cooling::Coolant { inlet_k: 290.0, rise_k: 6.0 },
            ..PackLayout::uniform(&test_cell(), 4, 1)
        };
        let ambients: Vec<f64> = (0..4).map(|i| layout.cycle_ambient_k(i, 300.0)).collect();
        assert_eq!(ambients, vec![290.0, 292.0, 294.0, 296.0]);
        assert_eq!(layout.idle_ambient_k(3, 300.0), 300.0);
        assert_eq!(layout.place(5 % 4), (0, 1));
    }

    fn test_cell() -> Cell {
        crate::input::load_cell(std::path::Path::new("examples/cells/van-pouch-5ah.toml"), &[]).expect("demo cell").cell
    }
}
