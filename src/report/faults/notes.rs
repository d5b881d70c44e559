//! The fault replay's stated assumptions in words (`faults::ReplayNote`).

use crate::faults::ReplayNote;
use crate::units::{Dimension, format_si};

/// One note of a replay as the report states it.
pub fn note_text(note: &ReplayNote) -> String {
    match note {
        ReplayNote::EqualResistors { column } => format!(
            "column '{column}' gives no resistor value: equal resistors stand in, so the division \
             is right but no currents are reported"
        ),
        ReplayNote::GapsClamp { column, band } => format!(
            "column '{column}': protective gaps clamp at their firing voltage; a gap counts as \
             fired from the bottom of its ±{:.0} % band (common practice, no source)",
            100.0 * band
        ),
        ReplayNote::NoLeakage { column } => {
            format!("column '{column}': no insulator leakage (leakage = \"none\")")
        }
        ReplayNote::LeakagePerGap { column, ohm } => format!(
            "column '{column}': insulator leakage {} across every gap, as the design gives it",
            format_si(*ohm, Dimension::Resistance)
        ),
        ReplayNote::LeakageFromMaterials {
            column,
            paths,
            least_ohm,
            share,
        } => {
            let names: Vec<String> = paths
                .iter()
                .map(|(dielectric, material, rho)| {
                    format!("'{dielectric}' ({material}, {rho:.0e} Ohm m)")
                })
                .collect();
            format!(
                "column '{column}': bulk insulator leakage through {}: {} per gap at the \
                 least, {share:.2e} of the chain's gap current; {} (common practice)",
                names.join(", "),
                format_si(*least_ohm, Dimension::Resistance),
                crate::materials::RESISTIVITY_SOURCE
            )
        }
        ReplayNote::NoLeakagePath { column } => format!(
            "column '{column}': no insulator with a known material spans its gaps, so \
             no leakage is modelled"
        ),
        ReplayNote::LeakageRemark { column, remark } => format!("column '{column}': {remark}"),
        ReplayNote::ImpulseRating { column, volts } => format!(
            "column '{column}': resistor voltages just after a spark are checked against the \
             impulse rating {:.1} kV",
            volts / 1e3
        ),
        ReplayNote::DcRatingAfterSpark { column, volts } => format!(
            "column '{column}' gives no impulse rating: resistor voltages just after a spark are \
             checked against the DC rating {:.1} kV (conservative; add \
             grading.impulse_rating from the resistor's pulse data)",
            volts / 1e3
        ),
        ReplayNote::NoRating { column } => format!(
            "column '{column}' gives no resistor rating: resistor voltages are reported but not \
             checked (add grading.rating and grading.power_rating)"
        ),
        ReplayNote::NodeCurrent { column, amps } => format!(
            "column '{column}': {} drawn from its electrodes to ground in every scenario",
            format_si(*amps, Dimension::Current)
        ),
        ReplayNote::NoDraws => {
            "no column gives a resistor tolerance: no Monte Carlo draws".to_string()
        }
        ReplayNote::SparkFromHighest => "no conductor is tied to the terminal voltage (it is fed \
             as \"stage:N\" or given in volts): the spark is taken from the conductor at the \
             highest voltage"
            .to_string(),
        ReplayNote::NoTransient { reason } => format!("no transient: {reason}"),
        ReplayNote::Transient => "transient: potentials just after the terminal collapses, \
             column electrodes floating with their charges conserved, before any protective gap \
             or resistor acts; field criteria are the DC ones"
            .to_string(),
        ReplayNote::GapsConducting { gaps } => format!(
            "transient with protective gaps conducting: {gaps} gap(s) that the collapse drives \
             past the top of their firing band conduct and hold there (the most they let \
             through; an arcing gap falls lower and passes its share to its neighbours), the \
             charge they pass moving between the electrodes they bridge; resistors still \
             idle. The bare transient still counts against the design factor: a gap fires \
             only after its statistical and formative time lags, so the insulators may see \
             the unclamped distribution first (common practice)"
        ),
        ReplayNote::OverInLoop { gaps } => format!(
            "transient with protective gaps conducting: {gaps} gap(s) stay over their clamp \
             because the conducting gaps around them already fix their voltage (a \
             section gap over per-gap gaps)"
        ),
        ReplayNote::NoGapsConducting { reason } => {
            format!("no transient with protective gaps conducting: {reason}")
        }
    }
}

/// Every note of a replay in words, in order.
pub fn notes(replay: &crate::faults::FaultReplay) -> Vec<String> {
    replay.notes.iter().map(note_text).collect()
}
