//! Pack forecast: every cell's slow state integrated together by the same cycle jumping as a
//! lone cell ([`super::engine`]). The integrator's vector is the cells' states one after
//! another; each rate evaluation simulates one pack cycle ([`crate::cycle::pack`]) and adds
//! every cell's rates from its own record, at its own position's idle ambient. The tolerances
//! are scaled so the integrator's root-mean-square error norm is the root mean square of the
//! cells' own norms: the cells are integrated as accurately as one cell alone on average, and
//! one cell far off the others at most √n times less so (n cells). Demanding every cell's norm
//! at once (the root of the sum) cost the demo 20 % more simulated cycles for differences far
//! inside the jumping tolerance (`tests/pack.rs` checks jumping against every cycle).
//!
//! Reported for the pack: capacity at reference conditions is the weakest group's, a group's
//! being the sum of its cells' (at a low rate the cells of a group share one voltage, so each
//! delivers its own capacity between the window ends; series groups are taken as balanced at
//! the top of charge, so the string stops when its weakest group is empty); resistance from a
//! 10 s 1C pulse of the pack through the split; the slow state as the cells' mean weighted by
//! their fresh lithium. Per cell: capacity, state of health, resistance, current share and
//! peak temperature.

use super::engine::*;
use super::integrator::SlowSystem;
use super::plan::{Horizon, Plan};
use super::result::*;
use super::ForecastOptions;
use crate::aging::state::{crack_film_mean_thickness_m, lithium_only};
use crate::aging::{health_of, mechanisms_for, AgingContext, AgingState, Component, Mechanism, STATE_LEN};
use crate::cycle::pack::{simulate_pack_cycle, simulate_pack_periodic, PackLayout, PackModel, PackRecord, PackRun};
use crate::cycle::{balance_cell, Balance, CellState, DutyCycle, Health, Scenario, SolverSettings, StepProfile};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use nalgebra::DVector;
use std::cell::RefCell;

/// What one simulated pack cycle showed: the pack's snapshot (peaks over all cells) and each
/// cell's share of its group's discharge and its peak temperature.
#[derive(Debug, Clone)]
struct PackSnapshot {
    pack: CycleSnapshot,
    share_pct: Vec<f64>,
    peak_temperature_k: Vec<f64>,
}

/// The last simulated cycle's end states, the ambient it ran in and the cells' balances then.
struct WarmPack {
    states: Vec<CellState>,
    ambient_k: f64,
    balances: Vec<Balance>,
}

struct PackForecaster<'a> {
    layout: &'a PackLayout,
    plan: &'a Plan,
    profile: &'a StepProfile,
    start_soc: f64,
    model: PackModel,
    mechanisms: Vec<Vec<Box<dyn Mechanism>>>,
    settings: SolverSettings,
    warm: RefCell<Option<WarmPack>>,
    record: RefCell<PackRecord>,
    log: RefCell<Vec<PackSnapshot>>,
    failure: RefCell<Option<(f64, RateFailure)>>,
    simulated: RefCell<usize>,
}

impl PackForecaster<'_> {
    fn cycling(&self) -> bool {
        self.plan.usage.cycles_per_day > 0.0
    }

    fn day(&self, x: f64) -> f64 {
        if self.cycling() {
            x / self.plan.usage.cycles_per_day
        } else {
            x
        }
    }

    fn health_and_balance(&self, states: &[AgingState]) -> Option<(Vec<Health>, Vec<Balance>)> {
        let healths: Vec<Health> = (0..self.layout.len())
            .map(|i| health_of(&self.layout.cells[i], self.plan.aging_at(i), &states[i]))
            .collect();
        let balances = (0..self.layout.len())
            .map(|i| balance_cell(&self.layout.cells[i], &healths[i]))
            .collect::<Option<Vec<Balance>>>()?;
        Some((healths, balances))
    }

    /// Every cell's rates per cycle (per day when storing) at `x`.
    fn rates(&self, x: f64, states: &[AgingState]) -> Result<Vec<AgingState>, RateFailure> {
        let (healths, balances) = self.health_and_balance(states).ok_or(RateFailure::Exhausted)?;
        let ambient = ambient_on_day(self.plan, self.day(x));
        let mut record = self.record.borrow_mut();
        let (cycle, idle_s) = if self.cycling() {
            self.simulate(x, &healths, &balances, ambient, &mut record)?;
            let period = SECONDS_PER_DAY / self.plan.usage.cycles_per_day;
            // As for a lone cell: checked on the fresh pack's cycle.
            if x == 0.0 && record.pack.duration_s > period * (1.0 + USAGE_DAY_TOLERANCE) {
                return Err(RateFailure::Failed(ForecastFailure::UsageExceedsDay {
                    cycles_per_day: self.plan.usage.cycles_per_day,
                    cycle_duration_s: record.pack.duration_s,
                }));
            }
            (Some(&*record), (period - record.pack.duration_s).max(0.0))
        } else {
            (None, SECONDS_PER_DAY)
        };
        let mut rates = Vec::with_capacity(self.layout.len());
        for (i, cell) in self.layout.cells.iter().enumerate() {
            let aging = self.plan.aging_at(i);
            let idle_k = self.layout.idle_ambient_k(i, ambient);
            let (rest_stoich, rest_pos_stoich) = balances[i].stoich_at_soc(self.plan.usage.rest_soc, &healths[i]);
            let (negative, positive) = (&cell.negative, &cell.positive);
            let cell_record = cycle.map(|r| &r.cells[i]);
            let context = AgingContext {
                cell,
                aging,
                record: cell_record,
                idle_s,
                idle_temperature_k: idle_k,
                idle_neg_potential_v: negative.ocp.potential(rest_stoich)
                    + (idle_k - cell.reference_temperature_k) * negative.entropic_coefficient_v_k,
                idle_pos_potential_v: positive.ocp.potential(rest_pos_stoich)
                    + (idle_k - cell.reference_temperature_k) * positive.entropic_coefficient_v_k,
                idle_pos_stoich: rest_pos_stoich,
                lithium_fresh_coulomb: cell.lithium_inventory_coulomb(),
            };
            let mut rate = AgingState::default();
            for mechanism in &self.mechanisms[i] {
                mechanism.add_rates(&context, &states[i], &mut rate);
            }
            rate[Component::ThroughputAh] = cell_record.map_or(0.0, |r| r.charge_out_coulomb / SECONDS_PER_HOUR);
            rate[Component::EnergyWh] = cell_record.map_or(0.0, |r| r.energy_out_j / SECONDS_PER_HOUR);
            rates.push(rate);
        }
        Ok(rates)
    }

    fn simulate(
        &self,
        x: f64,
        healths: &[Health],
        balances: &[Balance],
        ambient_k: f64,
        record: &mut PackRecord,
    ) -> Result<(), RateFailure> {
        let mut warm = self.warm.borrow_mut();
        let run = PackRun { profile: self.profile, ambient_k, healths, balances };
        let aligned = warm.take().and_then(|WarmPack { mut states, ambient_k: then_k, balances: then }| {
            let fits = states.iter_mut().enumerate().all(|(i, s)| {
                self.model.models[i].carry_over(s, (&then[i], then_k), (&balances[i], ambient_k), &healths[i])
            });
            fits.then_some(states)
        });
        let mut states = match aligned {
            Some(s) => s,
            None => {
                let (first, end) =
                    simulate_pack_periodic(&self.model, &run, self.start_soc, &self.settings).map_err(cycle_failure)?;
                *self.simulated.borrow_mut() += first.pack.warmup_cycles;
                end
            }
        };
        simulate_pack_cycle(&self.model, &run, &mut states, &self.settings, record).map_err(cycle_failure)?;
        *self.simulated.borrow_mut() += 1;
        let cells = &record.cells;
        let peak = |f: fn(&crate::cycle::CycleRecord) -> f64| cells.iter().map(f).fold(f64::NEG_INFINITY, f64::max);
        let step_of = |current: fn(f64) -> f64| {
            cells
                .iter()
                .flat_map(|r| r.trace.iter())
                .max_by(|a, b| current(a.current_a).total_cmp(&current(b.current_a)))
                .map_or(0, |p| p.step)
        };
        let snapshot = CycleSnapshot {
            x,
            duty_capacity_ah: record.pack.charge_out_coulomb / SECONDS_PER_HOUR,
            peak_temperature_k: peak(|r| r.peak_temperature_k),
            min_temperature_k: cells.iter().map(|r| r.min_temperature_k).fold(f64::INFINITY, f64::min),
            min_neg_potential_v: cells.iter().map(|r| r.neg_potential_min_v).fold(f64::INFINITY, f64::min),
            peak_charge_a: peak(|r| r.peak_charge_current_a),
            peak_charge_step: step_of(|i| -i),
            peak_discharge_a: peak(|r| r.peak_discharge_current_a),
            peak_discharge_step: step_of(|i| i),
            voltage_limited_s: 0.0,
        };
        let p = self.layout.parallel;
        let share_pct = (0..cells.len())
            .map(|i| {
                let g = i / p;
                let group: f64 = cells[g * p..(g + 1) * p].iter().map(|r| r.charge_out_coulomb).sum();
                if group > 0.0 {
                    100.0 * cells[i].charge_out_coulomb / group
                } else {
                    100.0 / p as f64
                }
            })
            .collect();
        let peak_temperature_k = cells.iter().map(|r| r.peak_temperature_k).collect();
        self.log.borrow_mut().push(PackSnapshot { pack: snapshot, share_pct, peak_temperature_k });
        *warm = Some(WarmPack { states, ambient_k, balances: balances.to_vec() });
        Ok(())
    }

    fn snapshot_at(&self, x: f64) -> Option<PackSnapshot> {
        let log = self.log.borrow();
        log.iter()
            .filter(|s| s.pack.x <= x + 1e-9)
            .max_by(|a, b| a.pack.x.total_cmp(&b.pack.x))
            .or_else(|| log.first())
            .cloned()
    }

    /// Capacity, pack resistance and the lithium-only capacity of the pack at `states`, with
    /// each cell's capacity and resistance.
    fn measure(&self, states: &[AgingState]) -> Option<Measured> {
        let (healths, balances) = self.health_and_balance(states)?;
        let layout = self.layout;
        let mut cell_capacity = Vec::with_capacity(layout.len());
        let mut cell_lithium_capacity = Vec::with_capacity(layout.len());
        let mut cell_resistance = Vec::with_capacity(layout.len());
        for (i, cell) in layout.cells.iter().enumerate() {
            let aging = self.plan.aging_at(i);
            cell_capacity.push(balances[i].capacity_coulomb / SECONDS_PER_HOUR);
            let lithium_health = health_of(cell, aging, &lithium_only(&states[i], aging));
            cell_lithium_capacity.push(balance_cell(cell, &lithium_health)?.capacity_coulomb / SECONDS_PER_HOUR);
            let pulse = PULSE_C_RATE * cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
            let r = self.model.models[i].pulse_resistance(
                &healths[i],
                &balances[i],
                0.5,
                cell.reference_temperature_k,
                pulse,
                PULSE_S,
            )?;
            cell_resistance.push(r);
        }
        let nominal = &layout.cells[0];
        let pulse = PULSE_C_RATE * layout.parallel as f64 * nominal.nominal_capacity_coulomb / SECONDS_PER_HOUR;
        let resistance =
            self.model.pulse_resistance(&healths, &balances, 0.5, nominal.reference_temperature_k, pulse, PULSE_S)?;
        Some(Measured {
            capacity_ah: weakest_group(layout, &cell_capacity),
            lithium_capacity_ah: weakest_group(layout, &cell_lithium_capacity),
            resistance_ohm: resistance,
            cell_capacity_ah: cell_capacity,
            cell_resistance_ohm: cell_resistance,
        })
    }

    /// The pack's and every cell's reported quantities at `x`.
    fn point(&self, x: f64, states: &[AgingState], fresh: &Measured) -> Option<(FadePoint, Vec<PackCellPoint>)> {
        let measured = self.measure(states)?;
        let snapshot = self.snapshot_at(x);
        let layout = self.layout;
        let weights: Vec<f64> = layout.cells.iter().map(|c| c.lithium_inventory_coulomb()).collect();
        let total: f64 = weights.iter().sum();
        let mut mean = [0.0; STATE_LEN];
        for (state, w) in states.iter().zip(&weights) {
            for (m, v) in mean.iter_mut().zip(state.to_vector()) {
                *m += v * w / total;
            }
        }
        let mean = AgingState::from_vector(&mean);
        let throughput_ah: f64 = states.iter().map(|s| s[Component::ThroughputAh]).sum::<f64>() / layout.series as f64;
        let energy_wh: f64 = states.iter().map(|s| s[Component::EnergyWh]).sum();
        let film_crack_nm = (0..layout.len())
            .map(|i| crack_film_mean_thickness_m(&layout.cells[i], self.plan.aging_at(i), &states[i]) * 1e9)
            .sum::<f64>()
            / layout.len() as f64;
        let ambient = ambient_on_day(self.plan, self.day(x));
        let nominal_ah = layout.parallel as f64 * layout.cells[0].nominal_capacity_coulomb / SECONDS_PER_HOUR;
        let pack = FadePoint {
            cycle: if self.cycling() { x } else { 0.0 },
            day: self.day(x),
            efc: equivalent_full_cycles(throughput_ah, nominal_ah),
            throughput_ah,
            energy_wh,
            capacity_ah: measured.capacity_ah,
            duty_capacity_ah: snapshot.as_ref().map_or(0.0, |s| s.pack.duty_capacity_ah),
            soh_pct: 100.0 * measured.capacity_ah / fresh.capacity_ah,
            resistance_mohm: measured.resistance_ohm * 1e3,
            resistance_growth_pct: 100.0 * (measured.resistance_ohm / fresh.resistance_ohm - 1.0),
            fade_lithium_ah: fresh.capacity_ah - measured.lithium_capacity_ah,
            fade_active_material_ah: measured.lithium_capacity_ah - measured.capacity_ah,
            film_crack_nm,
            peak_temperature_c: snapshot.as_ref().map_or(ambient, |s| s.pack.peak_temperature_k) - ZERO_CELSIUS_K,
            state: mean,
        };
        let cells = (0..layout.len())
            .map(|i| PackCellPoint {
                capacity_ah: measured.cell_capacity_ah[i],
                soh_pct: 100.0 * measured.cell_capacity_ah[i] / fresh.cell_capacity_ah[i],
                resistance_mohm: measured.cell_resistance_ohm[i] * 1e3,
                current_share_pct: snapshot.as_ref().map_or(100.0 / layout.parallel as f64, |s| s.share_pct[i]),
                peak_temperature_c: snapshot
                    .as_ref()
                    .map_or(layout.idle_ambient_k(i, ambient), |s| s.peak_temperature_k[i])
                    - ZERO_CELSIUS_K,
                lithium_total: states[i].lithium_total(),
            })
            .collect();
        Some((pack, cells))
    }
}

/// What the reference measurements give for a pack state.
#[derive(Debug, Clone)]
struct Measured {
    capacity_ah: f64,
    lithium_capacity_ah: f64,
    resistance_ohm: f64,
    cell_capacity_ah: Vec<f64>,
    cell_resistance_ohm: Vec<f64>,
}

/// The smallest of the groups' summed capacities (module docs).
pub fn weakest_group(layout: &PackLayout, cell_capacity: &[f64]) -> f64 {
    cell_capacity.chunks(layout.parallel).map(|group| group.iter().sum::<f64>()).fold(f64::INFINITY, f64::min)
}

/// The integrator's view: the cells' states one after another, scaled as a lone cell's are.
struct PackRateSystem<'f, 'a>(&'f PackForecaster<'a>);

fn pack_to_integrator(states: &[AgingState]) -> Vec<f64> {
    states.iter().flat_map(|s| s.to_vector().into_iter().enumerate().map(|(j, v)| v * integrator_scale(j))).collect()
}

fn pack_from_integrator(values: &[f64]) -> Vec<AgingState> {
    values
        .chunks_exact(STATE_LEN)
        .map(|chunk| AgingState::from_vector(&std::array::from_fn(|j| chunk[j] / integrator_scale(j))))
        .collect()
}

impl SlowSystem for PackRateSystem<'_, '_> {
    fn derivative(&self, s: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        let x = unstretched(s);
        let dx_ds = 2.0 * (s + STRETCH_OFFSET.sqrt());
        let states = pack_from_integrator(y.as_slice());
        match self.0.rates(x, &states) {
            Ok(rates) => {
                for (d, r) in dy.iter_mut().zip(pack_to_integrator(&rates)) {
                    *d = r * dx_ds;
                }
            }
            Err(detail) => {
                dy.fill(0.0);
                self.0.failure.borrow_mut().get_or_insert((x, detail));
            }
        }
    }

    fn stop(&self) -> bool {
        self.0.failure.borrow().is_some()
    }
}

/// Forecasts a pack (module docs). Called by [`super::run_forecast`] for a scenario with a pack.
pub fn run_pack_forecast(
    scenario: &Scenario,
    layout: &PackLayout,
    plan: &Plan,
    horizon: Horizon,
    options: &ForecastOptions,
) -> Forecast {
    let mut forecast = Forecast {
        points: Vec::new(),
        end_of_life: Vec::new(),
        stop: StopReason::Horizon,
        simulated_cycles: 0,
        accepted_steps: 0,
        rejected_steps: 0,
        every_cycle: options.every_cycle,
        fresh_capacity_ah: 0.0,
        fresh_resistance_mohm: 0.0,
        scale: ReportScale::default(),
        warnings: Vec::new(),
        final_state: None,
        interface_rise: None,
        pack: None,
    };
    let fail = |mut f: Forecast, failure: ForecastFailure| {
        f.stop = StopReason::Failed { at: 0.0, last_soh_pct: None, failure };
        f
    };
    let DutyCycle::Steps(profile) = &scenario.duty else {
        return fail(forecast, ForecastFailure::PackNeedsSteps);
    };
    let n = layout.len();
    let forecaster = PackForecaster {
        layout,
        plan,
        profile,
        start_soc: scenario.start_soc,
        model: PackModel::new(layout),
        mechanisms: (0..n).map(|i| mechanisms_for(plan.aging_at(i))).collect(),
        settings: SolverSettings::default(),
        warm: RefCell::new(None),
        record: RefCell::new(PackRecord::default()),
        log: RefCell::new(Vec::new()),
        failure: RefCell::new(None),
        simulated: RefCell::new(0),
    };
    let fresh_states: Vec<AgingState> = (0..n).map(|i| AgingState::fresh(plan.aging_at(i))).collect();
    let fresh = match forecaster.health_and_balance(&fresh_states) {
        None => return fail(forecast, ForecastFailure::FreshCellEmpty),
        Some(_) => match forecaster.measure(&fresh_states) {
            Some(m) => m,
            None => return fail(forecast, ForecastFailure::FreshPulse),
        },
    };
    forecast.fresh_capacity_ah = fresh.capacity_ah;
    forecast.fresh_resistance_mohm = fresh.resistance_ohm * 1e3;
    let nominal = &scenario.cell;
    forecast.scale = ReportScale {
        // Per series string, like the capacity: the groups hold the lithium side by side.
        lithium_fresh_ah: layout.cells.iter().map(|c| c.lithium_inventory_coulomb()).sum::<f64>()
            / SECONDS_PER_HOUR
            / layout.series as f64,
        fresh_capacity_ah: fresh.capacity_ah,
        neg_radius_nm: nominal.negative.particle_radius_m * 1e9,
        pos_radius_nm: nominal.positive.particle_radius_m * 1e9,
    };
    let x_end = match horizon_end(plan, horizon) {
        Ok(x) => x,
        Err(failure) => return fail(forecast, failure),
    };
    let spacing = x_end / options.report_points.max(1) as f64;
    // Short horizons every cycle, as for a lone cell (jumping would simulate no fewer).
    forecast.every_cycle = options.every_cycle || (forecaster.cycling() && x_end <= EVERY_CYCLE_UP_TO_CYCLES);
    let (xs, ys) = if forecast.every_cycle {
        pack_every_cycle(&forecaster, fresh_states, x_end, spacing)
    } else {
        pack_jumping(&forecaster, fresh_states, x_end, spacing, options, &mut forecast)
    };
    let mut cell_points = Vec::new();
    for (x, states) in xs.iter().zip(&ys) {
        match forecaster.point(*x, states, &fresh) {
            Some((p, cells)) => {
                forecast.points.push(p);
                cell_points.push(cells);
            }
            None => {
                forecaster.failure.borrow_mut().get_or_insert((*x, RateFailure::Exhausted));
                break;
            }
        }
    }
    let final_states = ys.get(forecast.points.len().saturating_sub(1)).cloned().unwrap_or_default();
    forecast.final_state = forecast.points.last().map(|p| p.state);
    if let Some((at, failure)) = forecaster.failure.borrow().clone() {
        let last_soh_pct = forecast.points.last().map(|p| p.soh_pct);
        forecast.stop = match failure {
            RateFailure::Exhausted => StopReason::Exhausted { at, last_soh_pct },
            RateFailure::Failed(failure) => StopReason::Failed { at, last_soh_pct, failure },
        };
    }
    let cycling = forecaster.cycling();
    forecast.end_of_life = end_of_life(&forecast.points, plan, cycling, plan.usage.cycles_per_day);
    forecast.simulated_cycles = *forecaster.simulated.borrow();
    let log: Vec<CycleSnapshot> = forecaster.log.borrow().iter().map(|s| s.pack).collect();
    forecast.warnings = warnings_from(nominal, &log, plan, &forecast);
    let level = 100.0 * plan.end_of_life.capacity_fraction;
    let cell_end_of_life = (0..n)
        .map(|i| {
            let soh: Vec<f64> = cell_points.iter().map(|c: &Vec<PackCellPoint>| c[i].soh_pct).collect();
            crossing_below(&forecast.points, &soh, level, cycling, plan.usage.cycles_per_day)
        })
        .collect();
    let first_ambient = ambient_on_day(plan, 0.0);
    forecast.pack = Some(Box::new(PackOutcome {
        parallel: layout.parallel,
        series: layout.series,
        positions: (0..n)
            .map(|i| {
                let (group, place) = layout.place(i);
                PackPosition {
                    group,
                    place,
                    interconnect_ohm: layout.interconnect_ohm[i],
                    cycle_ambient_k: layout.cycle_ambient_k(i, first_ambient),
                }
            })
            .collect(),
        points: cell_points,
        cell_end_of_life,
        final_states,
        drawn: layout.drawn.clone(),
    }));
    forecast
}

/// First fall of `values` (one per point) to `level`, interpolated between reported points.
fn crossing_below(
    points: &[FadePoint],
    values: &[f64],
    level: f64,
    cycling: bool,
    cycles_per_day: f64,
) -> Option<LifeAt> {
    (1..values.len().min(points.len())).find_map(|k| {
        let (a, b) = (values[k - 1], values[k]);
        (a > level && b <= level).then(|| {
            let t = (level - a) / (b - a);
            let day = points[k - 1].day + t * (points[k].day - points[k - 1].day);
            LifeAt {
                cycles: if cycling { day * cycles_per_day } else { 0.0 },
                efc: points[k - 1].efc + t * (points[k].efc - points[k - 1].efc),
                years: day / DAYS_PER_YEAR,
            }
        })
    })
}

fn pack_jumping(
    forecaster: &PackForecaster,
    start: Vec<AgingState>,
    x_end: f64,
    spacing: f64,
    options: &ForecastOptions,
    forecast: &mut Forecast,
) -> (Vec<f64>, Vec<Vec<AgingState>>) {
    let y0 = pack_to_integrator(&start);
    // Root-mean-square over n·STATE_LEN entries of which n·STEERING steer: scaling the
    // tolerances by √(n·STEERING / (n·STATE_LEN)) makes the norm √(mean of cells' norms²).
    let tolerance_factor = (STEERING as f64 * forecaster.layout.len() as f64 / y0.len() as f64).sqrt();
    let jump = Jump {
        x_end,
        spacing,
        tolerance_factor,
        // The pack keeps the growth it was checked with (the lone cell's is capped lower).
        step_growth_max: PACK_STEP_GROWTH_MAX,
        failure: &forecaster.failure,
    };
    jump.on_grid(PackRateSystem(forecaster), y0, start, options, forecast, pack_from_integrator)
}

/// Largest growth of the pack integrator's step from one step to the next.
const PACK_STEP_GROWTH_MAX: f64 = 10.0;

fn pack_every_cycle(
    forecaster: &PackForecaster,
    start: Vec<AgingState>,
    x_end: f64,
    spacing: f64,
) -> (Vec<f64>, Vec<Vec<AgingState>>) {
    let mut xs = vec![0.0];
    let mut ys = vec![start.clone()];
    let mut state: Vec<f64> = start.iter().flat_map(|s| s.to_vector()).collect();
    let unpack = |v: &[f64]| -> Vec<AgingState> {
        v.chunks_exact(STATE_LEN).map(|c| AgingState::from_vector(&std::array::from_fn(|j| c[j]))).collect()
    };
    let mut next_report = spacing;
    let cycles = x_end.ceil() as usize;
    for k in 0..cycles {
        let x = k as f64;
        let rate: Vec<f64> = match forecaster.rates(x, &unpack(&state)) {
            Ok(r) => r.iter().flat_map(|s| s.to_vector()).collect(),
            Err(failure) => {
                forecaster.failure.borrow_mut().get_or_insert((x, failure));
                break;
            }
        };
        let step = (x_end - x).min(1.0);
        let next: Vec<f64> = state.iter().zip(&rate).map(|(s, r)| s + step * r).collect();
        while next_report <= x + step + 1e-9 && next_report <= x_end + 1e-9 {
            let w = (next_report - x) / step;
            let mixed: Vec<f64> = state.iter().zip(&next).map(|(a, b)| a * (1.0 - w) + b * w).collect();
            xs.push(next_report);
            ys.push(unpack(&mixed));
            next_report += spacing;
        }
        state = next;
    }
    (xs, ys)
}
