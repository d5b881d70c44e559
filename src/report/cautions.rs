//! The high-voltage cautions that end every terminal run and every report (SAFETY.md).
//!
//! Generic, jurisdiction-free wording; the figures (stored energy, gas) come from the run.

use serde::Serialize;

/// One caution with its topic.
#[derive(Debug, Clone, Serialize)]
pub struct Caution {
    pub topic: &'static str,
    pub text: String,
}

/// What the cautions can quote from the run.
#[derive(Debug, Clone, Default)]
pub struct CautionInputs {
    /// Terminal voltage, V.
    pub terminal_voltage_v: f64,
    /// Stored energy, J, and what it covers.
    pub stored_energy_j: Option<(f64, String)>,
    /// Gas species and absolute pressure, Pa, when the tank is pressurised.
    pub gas: Option<(String, f64)>,
    /// Whether the gas contains SF6.
    pub sf6: bool,
}

impl CautionInputs {
    /// The inputs for a run on `model` with the terminal at `terminal_voltage_v`: the gas
    /// from the design, the stored energy as given.
    pub fn for_model(
        model: &crate::model::Model,
        terminal_voltage_v: f64,
        stored_energy_j: Option<(f64, String)>,
    ) -> CautionInputs {
        let gas = model.gas.as_ref();
        CautionInputs {
            terminal_voltage_v,
            stored_energy_j,
            gas: gas.map(|g| (g.species.clone(), g.pressure_pa)),
            sf6: gas.is_some_and(|g| {
                g.components
                    .iter()
                    .any(|(s, f)| s.eq_ignore_ascii_case("SF6") && *f > 0.0)
            }),
        }
    }
}

fn fmt_energy(j: f64) -> String {
    if j >= 1e3 {
        format!("{:.3} kJ", j / 1e3)
    } else if j >= 1.0 {
        format!("{j:.1} J")
    } else {
        format!("{:.1} mJ", j * 1e3)
    }
}

/// The cautions, in the order they are printed.
pub fn cautions(inp: &CautionInputs) -> Vec<Caution> {
    let mut out = Vec::new();
    let kv = inp.terminal_voltage_v / 1e3;
    out.push(Caution {
        topic: "lethal voltage",
        text: format!(
            "The terminal runs at {kv:.0} kV. Contact with, or approach to, any part of the high-voltage structure while energised is lethal. Only authorised, trained persons may work on it, under the facility's high-voltage safety rules."
        ),
    });
    let energy = match &inp.stored_energy_j {
        Some((j, what)) => format!(
            "Stored energy at this voltage: {} ({what}). Capacitors recover charge after discharge (dielectric absorption): keep them shorted when idle.",
            fmt_energy(*j)
        ),
        None => "Stored energy is not known for this run. Capacitors recover charge after discharge (dielectric absorption): keep them shorted when idle.".to_string(),
    };
    out.push(Caution {
        topic: "stored energy",
        text: energy,
    });
    out.push(Caution {
        topic: "grounding before entry",
        text: "Before entry: switch off and lock out the drive, wait the discharge interval, discharge through a resistive discharge stick, then apply a solid grounding hook to the terminal, column and stack and leave it on while anyone is inside. Verify absence of voltage; do not rely on interlocks alone.".into(),
    });
    out.push(Caution {
        topic: "interlocks",
        text: "Tank doors, manways and access areas need interlocks that remove the drive and close grounding switches; dump resistors must be sized for the stored energy with a time constant short compared with the access time.".into(),
    });
    out.push(Caution {
        topic: "X-rays",
        text: "Electrons accelerated in vacuum (beam, field emission, dark current, back-streaming electrons in ion machines) produce bremsstrahlung, even without an intended electron source; ion beams such as deuterons can also produce neutrons. Shielding, radiation surveys and interlocks fall under the applicable radiation-protection rules.".into(),
    });
    if let Some((species, p)) = &inp.gas {
        let bar = p / 1e5;
        out.push(Caution {
            topic: "pressure vessel",
            text: format!(
                "The tank holds {species} at {bar:.2} bar absolute: it is a pressure vessel. Design, test, relief devices and inspection follow a recognised pressure-equipment code; never open it under pressure."
            ),
        });
    }
    if inp.sf6 {
        out.push(Caution {
            topic: "SF6 handling",
            text: "SF6 is an asphyxiant about five times denser than air that pools in pits and low rooms; after sparks or corona it carries toxic, corrosive by-products (SOF2, SO2F2, SO2, S2F10, HF, metal-fluoride dust). Ventilate at floor level, monitor oxygen, use gas-handling carts and protective equipment for opened equipment; release is restricted (GWP100 about 23,500).".into(),
        });
    }
    out.push(Caution {
        topic: "status of these results",
        text: "These results are a design aid computed from an idealised axisymmetric model; they are not a certification. Local electrical codes, pressure-vessel codes, radiation rules and the facility's licensed high-voltage safety practice take precedence.".into(),
    });
    out
}
