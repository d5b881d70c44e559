//! `simulate`: the loaded run, the no-load reference run and the discharge run, gathered into
//! a [`LadderResult`].

use super::circuit::{DiodeRole, Netlist, Term};
use super::closed::osc_columns;
use super::error::LadderError;
use super::params::{Column, LadderParams, Load, Topology};
use super::result::*;
use super::sim::{Periodic, SimControls, run_periodic, terminal_load};
use super::stepper::TerminalLoad;

/// Simulates `p` to periodic steady state at load and at no load, and reports per stage and
/// overall; with a divider or dump resistor, also the discharge after the drive is removed.
pub fn simulate(p: &LadderParams, ctl: &SimControls) -> Result<LadderResult, LadderError> {
    p.validate()?;
    ctl.validate()?;
    let net = Netlist::build(p);
    let loaded = run_periodic(p, &net, terminal_load(p.load), ctl)?;
    let zero_load = matches!(p.load, Load::Current { amps } if amps == 0.0);
    let no_load = if zero_load {
        None
    } else {
        let unloaded = TerminalLoad {
            current_a: 0.0,
            conductance_s: 0.0,
        };
        Some(run_periodic(p, &net, unloaded, ctl)?)
    };
    let discharge = if p.divider_ohm.is_some() || p.dump_ohm.is_some() {
        Some(super::discharge::discharge(p, &net, &loaded.final_state)?)
    } else {
        None
    };
    Ok(assemble(p, &net, &loaded, no_load.as_ref(), discharge))
}

/// The loaded run alone: terminal mean and ripple (for the sizing search).
pub(crate) fn loaded_output(
    p: &LadderParams,
    ctl: &SimControls,
) -> Result<(f64, f64), LadderError> {
    p.validate()?;
    ctl.validate()?;
    let net = Netlist::build(p);
    let run = run_periodic(p, &net, terminal_load(p.load), ctl)?;
    let out = net.output();
    Ok((run.stats.mean(out), run.stats.pp(out)))
}

fn term_label(p: &LadderParams, t: Term, labels: &[String]) -> String {
    match (t, p.topology) {
        (Term::Ground, _) => "s0".to_string(),
        (Term::Source(_), Topology::HalfWave) => "o0".to_string(),
        (Term::Source(s), Topology::Symmetric) => if s > 0.0 { "oa0" } else { "ob0" }.to_string(),
        (Term::Node(i), _) => labels[i].clone(),
    }
}

fn assemble(
    p: &LadderParams,
    net: &Netlist,
    loaded: &Periodic,
    no_load: Option<&Periodic>,
    discharge: Option<Discharge>,
) -> LadderResult {
    let s = &loaded.stats;
    let ns = s.samples as f64;
    let period = p.drive.period_s();
    let labels = p.node_labels();
    let out = net.output();
    let mut stages = Vec::with_capacity(p.stages);
    for k in 1..=p.stages {
        let sm = net.smoothing[k - 1];
        let osc: Vec<usize> = osc_columns(p.topology)
            .iter()
            .filter_map(|&c| p.node_index(c, k))
            .collect();
        let capacitors: Vec<CapacitorResult> = net
            .caps
            .iter()
            .enumerate()
            .filter(|(_, c)| c.stage == k)
            .map(|(j, c)| CapacitorResult {
                label: format!("C{}{k}", c.column.prefix(p.topology)),
                column: c.column,
                stage: k,
                capacitance_f: c.c,
                mean_v: s.cap_sum[j] / ns,
                max_v: s.cap_absmax[j],
                rms_v: (s.cap_sq[j] / ns).sqrt(),
                energy_j: 0.5 * c.c * s.cap_sq[j] / ns,
            })
            .collect();
        let diodes = net
            .diodes
            .iter()
            .enumerate()
            .filter(|(_, d)| d.stage == k)
            .map(|(j, d)| {
                let role = match d.role {
                    DiodeRole::Charging => "Dc",
                    DiodeRole::Transfer => "Dt",
                };
                let col = match (p.topology, d.column) {
                    (Topology::HalfWave, _) => "",
                    (_, Column::OscillatingB) => "b",
                    _ => "a",
                };
                DiodeResult {
                    label: format!("{role}{col}{k}"),
                    anode: term_label(p, d.anode, &labels),
                    cathode: term_label(p, d.cathode, &labels),
                    stage: k,
                    peak_inverse_v: s.diode_piv[j].max(0.0),
                    peak_current_a: s.diode_peak[j],
                    mean_current_a: s.diode_charge[j] / period,
                    charge_per_cycle_c: s.diode_charge[j],
                }
            })
            .collect();
        let stored_energy_j = capacitors.iter().map(|c| c.energy_j).sum();
        stages.push(StageResult {
            stage: k,
            mean_v: s.mean(sm),
            ripple_pp_v: s.pp(sm),
            oscillating_mean_v: osc.iter().map(|&i| s.mean(i)).collect(),
            oscillating_amplitude_v: osc.iter().map(|&i| 0.5 * s.pp(i)).collect(),
            capacitors,
            diodes,
            stored_energy_j,
        });
    }
    let loaded_mean_v = s.mean(out);
    let no_load_v = no_load.map_or(loaded_mean_v, |r| r.stats.mean(out));
    let ideal = 2.0 * p.stages as f64 * p.drive.peak_v;
    let drop_v = no_load_v - loaded_mean_v;
    let ripple = s.pp(out);
    let output = OutputSummary {
        ideal_no_load_v: ideal,
        no_load_v,
        no_load_efficiency: no_load_v / ideal,
        loaded_mean_v,
        loaded_max_v: s.node_max[out],
        loaded_min_v: s.node_min[out],
        drop_v,
        peak_drop_v: no_load_v - s.node_max[out],
        regulation: drop_v / loaded_mean_v,
        ripple_pp_v: ripple,
        ripple_relative: ripple / loaded_mean_v,
        load_current_a: s.load_charge / period,
    };
    let per_stage_j: Vec<f64> = stages.iter().map(|st| st.stored_energy_j).collect();
    let strays_j = net
        .strays
        .iter()
        .zip(&s.node_sq)
        .map(|(c, sq)| 0.5 * c * sq / ns)
        .sum();
    let energy = EnergySummary {
        total_j: per_stage_j.iter().sum(),
        per_stage_j,
        strays_j,
        convention: "cycle average of ½Cv² over the stage capacitors at load",
    };
    let output_diode_charge: f64 = net
        .diodes
        .iter()
        .zip(&s.diode_charge)
        .filter(|(d, _)| d.stage == p.stages && d.role == DiodeRole::Transfer)
        .map(|(_, q)| q)
        .sum();
    LadderResult {
        topology: p.topology,
        stage_count: p.stages,
        output,
        stages,
        energy,
        discharge,
        charge_balance: ChargeBalance {
            load_charge_per_cycle_c: s.load_charge,
            output_diode_charge_per_cycle_c: output_diode_charge,
        },
        convergence: Convergence {
            loaded: loaded.info.clone(),
            no_load: no_load.map(|r| r.info.clone()),
        },
        conventions: vec![
            "ripple: peak-to-peak, max − min of the terminal voltage over one cycle",
            "drop: simulated no-load output minus the cycle-mean loaded output",
            "regulation: (V_no_load − V_loaded)/V_loaded",
            "stage k: smoothing node s{k}, k = 1 at the grounded foot, k = n the terminal",
            "stored energy: cycle average of ½Cv² of each stage capacitor",
        ],
        waveform: (!s.wave.is_empty()).then(|| OutputWaveform {
            time_s: s.wave.iter().map(|w| w.0).collect(),
            output_v: s.wave.iter().map(|w| w.1).collect(),
        }),
    }
}
