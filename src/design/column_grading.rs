//! The grading keys of a `[[column]]`: the resistor chain (`grading`), its protective gaps,
//! the leakage beside it and the currents drawn at the electrodes.

use super::read::{At, Reader};
use super::schema::{RawColumn, RawValue};
use crate::model::{LeakageSpec, ProtectiveSpec};
use crate::units::Dimension;

/// The keys of a column's `grading` table.
pub(super) struct GradingKeys {
    pub(super) resistor: Option<f64>,
    pub(super) tolerance: Option<f64>,
    pub(super) strings: usize,
    pub(super) rating: Option<f64>,
    pub(super) power: Option<f64>,
    pub(super) impulse: Option<f64>,
}

/// Reads `grading = { resistor, tolerance, strings, rating, power_rating, impulse_rating }`;
/// every key is optional (no resistor value = equal resistors, the division without
/// currents).
pub(super) fn read_grading(rd: &mut Reader, raw: &RawColumn, at: &At) -> Option<GradingKeys> {
    let Some(g) = &raw.grading else {
        return Some(GradingKeys {
            resistor: None,
            tolerance: None,
            strings: 1,
            rating: None,
            power: None,
            impulse: None,
        });
    };
    let gat = At::new(at.key("grading"), g.span());
    let g = g.get_ref();
    let mut ok = true;
    let mut positive = |rd: &mut Reader, leaf: &super::schema::Leaf, key: &str, dim| {
        let x = rd.opt_quantity(leaf, &gat, key, dim);
        let x = rd.check(
            x,
            leaf.as_ref(),
            &gat.key(key),
            |x| x > 0.0,
            "must be greater than zero",
        );
        if leaf.is_some() && x.is_none() {
            ok = false;
        }
        x
    };
    let res = positive(rd, &g.resistor, "resistor", Dimension::Resistance);
    let rating = positive(rd, &g.rating, "rating", Dimension::Voltage);
    let power = positive(rd, &g.power_rating, "power_rating", Dimension::Power);
    let impulse = positive(rd, &g.impulse_rating, "impulse_rating", Dimension::Voltage);
    let tol = rd.opt_quantity(&g.tolerance, &gat, "tolerance", Dimension::Ratio);
    let tol = rd.check(
        tol,
        g.tolerance.as_ref(),
        &gat.key("tolerance"),
        |x| (0.0..1.0).contains(&x),
        "must be at least 0 % and below 100 %",
    );
    if g.tolerance.is_some() && tol.is_none() {
        ok = false;
    }
    let strings = match &g.strings {
        Some(v) => rd.count(v, &gat.key("strings"), 1),
        None => Some(1),
    };
    if g.resistor.is_none()
        && let Some(v) = g
            .rating
            .as_ref()
            .or(g.power_rating.as_ref())
            .or(g.impulse_rating.as_ref())
    {
        rd.push(
            "missing-key",
            gat.key("resistor"),
            v.span(),
            format!(
                "`{}` gives resistor ratings but no resistor value, so no resistor voltage or \
                 dissipation can be checked against them",
                gat.path
            ),
            Some("add `resistor = \"1 GOhm\"` (the value of one resistor)".to_string()),
        );
        ok = false;
    }
    let strings = strings?;
    ok.then_some(GradingKeys {
        resistor: res,
        tolerance: tol,
        strings,
        rating,
        power,
        impulse,
    })
}

/// Reads `protective_gap = { firing, band, span }`. `gaps` is the column's gap count when
/// known; a span must divide it, so that every gap is bridged by exactly one protective gap.
pub(super) fn read_protective(
    rd: &mut Reader,
    raw: &RawColumn,
    at: &At,
    gaps: Option<usize>,
) -> Option<Option<ProtectiveSpec>> {
    let Some(p) = &raw.protective_gap else {
        return Some(None);
    };
    let pat = At::new(at.key("protective_gap"), p.span());
    let p = p.get_ref();
    let f = rd.req_quantity(&p.firing, &pat, "firing", Dimension::Voltage);
    let firing = rd.check(
        f,
        p.firing.as_ref(),
        &pat.key("firing"),
        |x| x > 0.0,
        "must be greater than zero",
    );
    let band = match &p.band {
        None => Some(crate::materials::DEFAULT_FIRING_BAND),
        Some(v) => {
            let b = rd.quantity(v, &pat.key("band"), Dimension::Ratio);
            rd.check(
                b,
                Some(v),
                &pat.key("band"),
                |x| (0.0..0.5).contains(&x),
                "must be at least 0 % and below 50 % (the half-width of the firing band)",
            )
        }
    };
    let span = match &p.span {
        None => Some(1),
        Some(v) => rd.count(v, &pat.key("span"), 1).and_then(|k| match gaps {
            Some(g) if g % k != 0 => {
                let divisors: Vec<String> = (1..=g)
                    .filter(|d| g % d == 0)
                    .map(|d| d.to_string())
                    .collect();
                rd.out_of_range(
                    v,
                    &pat.key("span"),
                    format!(
                        "`{} = {k}` does not divide the column's {g} gaps, so some gaps would \
                         have no protective gap across them",
                        pat.key("span")
                    ),
                    Some(format!("accepted spans: {}", divisors.join(", "))),
                );
                None
            }
            _ => Some(k),
        }),
    };
    let arc_floor = match &p.arc_floor {
        None => Some(None),
        Some(v) => {
            let a = rd.quantity(v, &pat.key("arc_floor"), Dimension::Voltage);
            let below = firing.unwrap_or(f64::INFINITY);
            rd.check(
                a,
                Some(v),
                &pat.key("arc_floor"),
                |x| (0.0..below).contains(&x),
                "must be at least 0 V and below the firing voltage",
            )
            .map(Some)
        }
    };
    Some(Some(ProtectiveSpec {
        firing_v: firing?,
        band: band?,
        span: span?,
        arc_floor_v: arc_floor?,
    }))
}

/// Reads `leakage = "auto" | "none" | "<resistance per gap>"`; absent = "auto".
pub(super) fn read_leakage(rd: &mut Reader, raw: &RawColumn, at: &At) -> Option<LeakageSpec> {
    let Some(v) = &raw.leakage else {
        return Some(LeakageSpec::FromMaterials);
    };
    let key = at.key("leakage");
    if let RawValue::Str(t) = v.get_ref() {
        match t.trim() {
            "auto" => return Some(LeakageSpec::FromMaterials),
            "none" => return Some(LeakageSpec::None),
            _ => {}
        }
    }
    if !matches!(v.get_ref(), RawValue::Str(t) if t.trim().starts_with(|c: char| c.is_ascii_digit() || c == '.' || c == '+'))
    {
        rd.push(
            "wrong-type",
            key,
            v.span(),
            format!(
                "`{}` must be \"auto\", \"none\" or a resistance per gap, found {}",
                at.key("leakage"),
                v.get_ref().show()
            ),
            Some(
                "write leakage = \"auto\" (from the insulators' materials), \"none\", or \
                 e.g. leakage = \"10 TOhm\""
                    .to_string(),
            ),
        );
        return None;
    }
    let x = rd.quantity(v, &key, Dimension::Resistance);
    rd.check(x, Some(v), &key, |x| x > 0.0, "must be greater than zero")
        .map(LeakageSpec::PerGap)
}

/// Reads `node_current`: one current drawn at every electrode, or one per electrode.
pub(super) fn read_node_current(
    rd: &mut Reader,
    raw: &RawColumn,
    at: &At,
    electrodes: Option<usize>,
) -> Option<Vec<f64>> {
    let n = electrodes?;
    let Some(v) = &raw.node_current else {
        return Some(vec![0.0; n]);
    };
    let key = at.key("node_current");
    match v.get_ref() {
        RawValue::Array(_) => {
            let items = rd.array_of(v, &key, Dimension::Current, Some(n))?;
            let mut out = Vec::with_capacity(n);
            for (k, item) in items.iter().enumerate() {
                out.push(rd.quantity(item, &format!("{key}[{k}]"), Dimension::Current));
            }
            out.into_iter().collect()
        }
        _ => rd.quantity(v, &key, Dimension::Current).map(|i| vec![i; n]),
    }
}
