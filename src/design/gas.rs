//! The `[gas]` table: species (a gas with built-in data or a mixture of them), pressure and
//! temperature, each checked against the range the criteria hold for.

use super::problem::nearest;
use super::read::{At, Reader};
use super::schema::{RawGas, RawValue};
use crate::model::Gas;
use crate::units::Dimension;
use std::ops::Range;
use toml::Spanned;

/// The gases with built-in data, in their canonical spelling.
pub const GASES: &[&str] = &["air", "N2", "CO2", "SF6"];

pub(crate) fn gas_name(s: &str) -> Option<&'static str> {
    GASES
        .iter()
        .copied()
        .find(|g| g.eq_ignore_ascii_case(s.trim()))
}

pub(crate) fn unknown_gas(rd: &mut Reader, key: &str, span: Range<usize>, s: &str) {
    let help = match nearest(s, GASES) {
        Some(g) => format!(
            "did you mean \"{g}\"? gases: {}, or a mixture such as species = {{ SF6 = 0.5, N2 = 0.5 }}",
            GASES.join(", ")
        ),
        None => format!(
            "gases: {}, or a mixture such as species = {{ SF6 = 0.5, N2 = 0.5 }}",
            GASES.join(", ")
        ),
    };
    rd.push(
        "unknown-gas",
        key,
        span,
        format!("unknown gas \"{s}\""),
        Some(help),
    );
}

pub(crate) fn read_gas(rd: &mut Reader, g: &Spanned<RawGas>) -> Option<Gas> {
    let at = At::new("gas", g.span());
    let raw = g.get_ref();
    let species = rd
        .required(&raw.species, &at, "species", "\"SF6\"")
        .and_then(|v| match v.get_ref() {
            RawValue::Str(s) => match gas_name(s) {
                Some(name) => Some((name.to_string(), vec![(name.to_string(), 1.0)])),
                None => {
                    unknown_gas(rd, "gas.species", v.span(), s);
                    None
                }
            },
            RawValue::Table(entries) => read_mixture(rd, v, entries),
            other => {
                rd.push(
                    "wrong-type",
                    "gas.species",
                    v.span(),
                    format!(
                        "`gas.species` must be a gas name or a mixture table, found {}",
                        other.kind()
                    ),
                    Some(format!(
                        "write species = \"SF6\" ({}) or species = {{ SF6 = 0.5, N2 = 0.5 }}",
                        GASES.join(", ")
                    )),
                );
                None
            }
        });
    let p = rd.req_quantity(&raw.pressure, &at, "pressure", Dimension::Pressure);
    let p = rd.check(
        p,
        raw.pressure.as_ref(),
        "gas.pressure",
        |x| x > 0.0,
        "must be greater than zero (pressures are absolute)",
    );
    // Outside these bounds no gas criterion of holdoff is applied (common practice for
    // insulating gases in accelerator tanks; the fits themselves are narrower, and each row
    // states its own validity).
    let p = rd.check(
        p,
        raw.pressure.as_ref(),
        "gas.pressure",
        |x| (GAS_PRESSURE_PA.0..=GAS_PRESSURE_PA.1).contains(&x),
        "is outside 1 mbar to 100 bar absolute, where holdoff's gas criteria are applied",
    );
    let t = rd.req_quantity(&raw.temperature, &at, "temperature", Dimension::Temperature);
    let t = rd.check(
        t,
        raw.temperature.as_ref(),
        "gas.temperature",
        |x| x > 0.0,
        "is at or below absolute zero",
    );
    let t = rd.check(
        t,
        raw.temperature.as_ref(),
        "gas.temperature",
        |x| (GAS_TEMPERATURE_K.0..=GAS_TEMPERATURE_K.1).contains(&x),
        "is outside -100 degC to 200 degC, where holdoff's gas criteria are applied",
    );
    let t_min = rd.opt_quantity(
        &raw.min_temperature,
        &at,
        "min_temperature",
        Dimension::Temperature,
    );
    let t_min = rd.check(
        t_min,
        raw.min_temperature.as_ref(),
        "gas.min_temperature",
        |x| (GAS_TEMPERATURE_K.0..=GAS_TEMPERATURE_K.1).contains(&x),
        "is outside -100 degC to 200 degC, where holdoff's gas criteria are applied",
    );
    if let (Some(t), Some(t_min), Some(v)) = (t, t_min, raw.min_temperature.as_ref())
        && t_min > t
    {
        rd.out_of_range(
            v,
            "gas.min_temperature",
            format!(
                "`gas.min_temperature = {}` is above `gas.temperature` ({:.2} degC)",
                v.get_ref().show(),
                t - 273.15
            ),
            Some(
                "give the lowest temperature the machine sees, at or below the operating \
                 temperature"
                    .to_string(),
            ),
        );
        return None;
    }
    let (species, components) = species?;
    let (p, t) = (p?, t?);
    // The gas must be a gas at the operating temperature and at the lowest one: the filling
    // (its density) stays, so at the lowest temperature the pressure is that of the same
    // density there.
    let states = [(t, "gas.pressure", raw.pressure.as_ref(), p)]
        .into_iter()
        .chain(t_min.map(|tm| {
            let p_cold = crate::thermo::same_density_pressure_pa(&components, p, t, tm);
            (
                tm,
                "gas.min_temperature",
                raw.min_temperature.as_ref(),
                p_cold,
            )
        }));
    for (temp, key, leaf, p_at) in states {
        let Some(c) = crate::thermo::condensation(&components, p_at, temp) else {
            continue;
        };
        let Some(v) = leaf.or(raw.pressure.as_ref()) else {
            continue;
        };
        rd.push(
            "condensation",
            key,
            v.span(),
            format!(
                "`{key} = {}`: at {:.2} degC the gas is at {:.3} bar and {}",
                v.get_ref().show(),
                temp - 273.15,
                p_at / 1e5,
                c.describe()
            ),
            Some(
                "lower gas.pressure, raise the (lowest) temperature, or use a mixture with a \
                 lower fraction of the condensable gas"
                    .to_string(),
            ),
        );
        return None;
    }
    Some(Gas {
        species,
        components,
        pressure_pa: p,
        temperature_k: t,
    })
}

/// Gas pressures accepted, Pa (1 mbar to 100 bar absolute).
pub const GAS_PRESSURE_PA: (f64, f64) = (1e2, 1e7);
/// Gas temperatures accepted, K (−100 °C to 200 °C).
pub const GAS_TEMPERATURE_K: (f64, f64) = (173.15, 473.15);

/// A mixture `{ SF6 = 0.5, N2 = 0.5 }` (mole fractions, numbers or percentages) summing to 1.
pub(crate) fn read_mixture(
    rd: &mut Reader,
    v: &Spanned<RawValue>,
    entries: &[(Spanned<String>, Spanned<RawValue>)],
) -> Option<(String, Vec<(String, f64)>)> {
    let mut comps = Vec::new();
    let mut ok = true;
    // In the order written (the parser keeps table keys sorted).
    let mut entries: Vec<&(Spanned<String>, Spanned<RawValue>)> = entries.iter().collect();
    entries.sort_by_key(|(k, _)| k.span().start);
    for (name, frac) in entries {
        let key = format!("gas.species.{}", name.get_ref());
        let Some(g) = gas_name(name.get_ref()) else {
            unknown_gas(rd, &key, name.span(), name.get_ref());
            ok = false;
            continue;
        };
        let x = match frac.get_ref() {
            RawValue::Str(_) => rd.quantity(frac, &key, Dimension::Ratio),
            _ => rd.number(frac, &key),
        };
        match rd.check(
            x,
            Some(frac),
            &key,
            |x| x > 0.0 && x <= 1.0,
            "must be a mole fraction in (0, 1]",
        ) {
            Some(x) => comps.push((g.to_string(), x)),
            None => ok = false,
        }
    }
    if !ok {
        return None;
    }
    if comps.is_empty() {
        rd.push(
            "out-of-range",
            "gas.species",
            v.span(),
            "the gas mixture is empty",
            Some("write species = { SF6 = 0.5, N2 = 0.5 }".to_string()),
        );
        return None;
    }
    let sum: f64 = comps.iter().map(|c| c.1).sum();
    if (sum - 1.0).abs() > 1e-6 {
        rd.push(
            "mixture-sum",
            "gas.species",
            v.span(),
            format!("the mole fractions of the gas mixture add up to {sum}, not 1"),
            Some("give fractions that sum to 1, e.g. { SF6 = 0.2, N2 = 0.8 }".to_string()),
        );
        return None;
    }
    let label = comps
        .iter()
        .map(|(g, x)| format!("{g}:{x}"))
        .collect::<Vec<_>>()
        .join(",");
    let label = if comps.len() == 1 {
        comps[0].0.clone()
    } else {
        label
    };
    Some((label, comps))
}
