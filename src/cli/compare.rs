//! `holdoff compare A.toml B.toml`: the margins of two designs side by side, worse rows first.

use anyhow::Result;
use clap::Args;
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table};
use holdoff::compare::compare;
use holdoff::review::review;
use holdoff::solve::SolverParams;
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct CompareArgs {
    /// The design before the change.
    pub before: PathBuf,
    /// The design after the change.
    pub after: PathBuf,
    /// How many rows the table lists, or `all` (JSON always has every row).
    #[arg(long, value_name = "N|all", default_value = "25", value_parser = super::parse_rows)]
    pub rows: super::Rows,
    #[command(flatten)]
    pub json: super::JsonArg,
}

pub fn run(a: &CompareArgs) -> Result<ExitCode> {
    let (Some(before), Some(after)) = (
        super::load_design(&a.before)?,
        super::load_design(&a.after)?,
    ) else {
        return Ok(ExitCode::from(2));
    };
    a.json.check()?;
    let (mb, ma) = (before.model, after.model);
    let params = SolverParams::default();
    let rb = review(&mb, &params, false)?;
    let ra = review(&ma, &params, false)?;
    let cmp = compare(&rb.margins, &ra.margins);
    holdoff::report::finite::ensure_finite(&cmp)?;
    let code = if cmp.any_crossed_below {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    };
    a.json.write(&cmp)?;
    if a.json.to_stdout() {
        return Ok(code);
    }
    println!("before: {}  ({})", a.before.display(), mb.title);
    println!("after:  {}  ({})\n", a.after.display(), ma.title);
    let mut t = Table::new();
    t.load_style(holdoff::report::table::STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic);
    t.set_header(vec![
        "item",
        "criterion",
        "margin before",
        "margin after",
        "change",
        "status after",
    ]);
    let num = |v: Option<f64>| v.map_or("-".to_string(), |m| format!("{m:.2}"));
    for r in cmp.rows.iter().take(a.rows.of(cmp.rows.len())) {
        let right = |s: String| Cell::new(s).set_alignment(CellAlignment::Right);
        t.add_row(vec![
            Cell::new(&r.item),
            Cell::new(&r.criterion),
            right(num(r.margin_before)),
            right(num(r.margin_after)),
            right(
                r.change
                    .map_or("-".into(), |c| format!("{:+.1} %", c * 100.0)),
            ),
            Cell::new(
                r.status_after
                    .map_or("removed".to_string(), |s| s.label().to_string())
                    + if r.crossed_below {
                        " (crossed below)"
                    } else {
                        ""
                    },
            ),
        ]);
    }
    println!("{t}");
    let kv = |v: Option<f64>| v.map_or("-".to_string(), |x| format!("{:.1} kV", x / 1e3));
    println!(
        "hold-off voltage (limits as used): {} before, {} after",
        kv(cmp.holdoff_before_v),
        kv(cmp.holdoff_after_v)
    );
    if cmp.any_crossed_below {
        println!(
            "At least one row now falls below the design factor {}.",
            cmp.design_factor
        );
    }
    println!(
        "Caution: a comparison of models is a design aid, not a certification; the facility's licensed high-voltage practice and local codes take precedence."
    );
    Ok(code)
}
