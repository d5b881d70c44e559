//! The notes a replay states about its own assumptions (leakage, ratings, node currents).

use super::*;

/// What the replay assumes about leakage, ratings and node currents, per column.
pub(super) fn network_notes(model: &Model, networks: &[Network]) -> Vec<String> {
    let mut notes = Vec::new();
    for n in networks {
        if n.relative {
            notes.push(format!(
                "column '{}' gives no resistor value: equal resistors stand in, so the division \
                 is right but no currents are reported",
                n.name
            ));
        }
        if !n.protective.is_empty() {
            notes.push(format!(
                "column '{}': protective gaps clamp at their firing voltage; a gap counts as \
                 fired from the bottom of its ±{:.0} % band (common practice, no source)",
                n.name,
                100.0 * n.protective[0].band
            ));
        }
    }
    for n in networks {
        let Some(col) = model.columns.get(n.column) else {
            continue;
        };
        if !n.relative {
            match col.leakage {
                crate::model::LeakageSpec::None => notes.push(format!(
                    "column '{}': no insulator leakage (leakage = \"none\")",
                    n.name
                )),
                crate::model::LeakageSpec::PerGap(r) => notes.push(format!(
                    "column '{}': insulator leakage {} across every gap, as the design gives it",
                    n.name,
                    crate::units::format_si(r, crate::units::Dimension::Resistance)
                )),
                crate::model::LeakageSpec::FromMaterials => {
                    let l = grading::leakage::from_materials(model, n.column);
                    let names: Vec<String> = l
                        .paths
                        .iter()
                        .map(|p| {
                            format!(
                                "'{}' ({}, {:.0e} Ohm m)",
                                p.dielectric, p.material, p.resistivity_ohm_m
                            )
                        })
                        .collect();
                    let r_min = l.per_gap_ohm.iter().flatten().copied().reduce(f64::min);
                    let chain = n
                        .resistors_ohm
                        .first()
                        .map(|rs| 1.0 / rs.iter().map(|r| 1.0 / r).sum::<f64>());
                    match (r_min, chain) {
                        (Some(rl), Some(rc)) => notes.push(format!(
                            "column '{}': bulk insulator leakage through {}: {} per gap at the \
                             least, {:.2e} of the chain's gap current; {} (common practice)",
                            n.name,
                            names.join(", "),
                            crate::units::format_si(rl, crate::units::Dimension::Resistance),
                            rc / rl,
                            crate::materials::RESISTIVITY_SOURCE
                        )),
                        _ => notes.push(format!(
                            "column '{}': no insulator with a known material spans its gaps, so \
                             no leakage is modelled",
                            n.name
                        )),
                    }
                    notes.extend(l.notes.iter().map(|x| format!("column '{}': {x}", n.name)));
                }
            }
        }
        match (col.resistor_impulse_v, col.resistor_rating_v) {
            (Some(i), _) => notes.push(format!(
                "column '{}': resistor voltages just after a spark are checked against the \
                 impulse rating {:.1} kV",
                n.name,
                i / 1e3
            )),
            (None, Some(r)) => notes.push(format!(
                "column '{}' gives no impulse rating: resistor voltages just after a spark are \
                 checked against the DC rating {:.1} kV (conservative; add \
                 grading.impulse_rating from the resistor's pulse data)",
                n.name,
                r / 1e3
            )),
            (None, None) => {}
        }
        if col.resistor_rating_v.is_none() && col.resistor_power_w.is_none() {
            notes.push(format!(
                "column '{}' gives no resistor rating: resistor voltages are reported but not \
                 checked (add grading.rating and grading.power_rating)",
                n.name
            ));
        }
        if n.node_current_a.iter().any(|i| *i != 0.0) {
            let total: f64 = n.node_current_a.iter().sum();
            notes.push(format!(
                "column '{}': {} drawn from its electrodes to ground in every scenario",
                n.name,
                crate::units::format_si(total, crate::units::Dimension::Current)
            ));
        }
    }
    notes
}
