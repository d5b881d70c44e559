//! `holdoff compare A.toml B.toml`: the worst margin of two designs, the rows that govern
//! either, then the largest changes.

use anyhow::Result;
use clap::Args;
use comfy_table::{Cell, CellAlignment, ContentArrangement, Table};
use holdoff::compare::{Comparison, Worst, compare};
use holdoff::report::DesignInfo;
use holdoff::review::review;
use holdoff::solve::SolverParams;
use std::path::PathBuf;
use std::process::ExitCode;

/// The widest the comparison table is set (columns of text).
const TABLE_WIDTH: u16 = 158;

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

/// The design section of the comparison's JSON: both designs.
#[derive(serde::Serialize)]
struct Designs {
    before: DesignInfo,
    after: DesignInfo,
}

pub fn run(a: &CompareArgs) -> Result<ExitCode> {
    let (Some(before), Some(after)) = (
        super::load_design(&a.before)?,
        super::load_design(&a.after)?,
    ) else {
        return Ok(ExitCode::from(2));
    };
    a.json.check()?;
    let params = SolverParams::default();
    let rb = review(&before.model, &params, false)?;
    let ra = review(&after.model, &params, false)?;
    let cmp = compare(&rb.margins, &ra.margins);
    holdoff::report::finite::ensure_finite(&cmp)?;
    let code = if cmp.any_crossed_below {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    };
    a.json.write(&super::WithDesign {
        design: Designs {
            before: before.design_info(),
            after: after.design_info(),
        },
        body: &cmp,
    })?;
    if a.json.to_stdout() {
        return Ok(code);
    }
    println!("before: {}  ({})", before.file, before.model.title);
    println!("after:  {}  ({})\n", after.file, after.model.title);
    print!("{}", render(&cmp, a.rows.of(cmp.rows.len())));
    println!(
        "Caution: a comparison of models is a design aid, not a certification; the facility's licensed high-voltage practice and local codes take precedence."
    );
    Ok(code)
}

fn num(v: Option<f64>) -> String {
    v.map_or("-".to_string(), |m| format!("{m:.2}"))
}

fn worst_line(label: &str, w: Option<&Worst>) -> String {
    match w {
        Some(w) => format!("  {label} {:.2}  {} — {}\n", w.margin, w.item, w.criterion),
        None => format!("  {label} -  (no row with a number)\n"),
    }
}

/// The summary (worst margin before → after, the rows that set them, the hold-off voltage)
/// and the table of the first `rows` rows.
fn render(cmp: &Comparison, rows: usize) -> String {
    let (wb, wa) = (cmp.worst_before.as_ref(), cmp.worst_after.as_ref());
    let mut out = format!(
        "worst margin {} → {}{}\n",
        num(wb.map(|w| w.margin)),
        num(wa.map(|w| w.margin)),
        match (wb, wa) {
            (Some(b), Some(a)) if b.margin > 0.0 =>
                format!(" ({:+.1} %)", (a.margin / b.margin - 1.0) * 100.0),
            _ => String::new(),
        }
    );
    out += &worst_line("before:", wb);
    out += &worst_line("after: ", wa);
    let kv = |v: Option<f64>| v.map_or("-".to_string(), holdoff::report::kv_three_significant);
    out += &format!(
        "hold-off voltage (limits as used) {} → {}\n\n",
        kv(cmp.holdoff_before_v),
        kv(cmp.holdoff_after_v)
    );
    let mut t = Table::new();
    t.load_style(holdoff::report::table::STYLE)
        .set_content_arrangement(ContentArrangement::Dynamic)
        .set_width(TABLE_WIDTH);
    t.set_header(vec![
        "governs",
        "item",
        "criterion",
        "margin before",
        "after",
        "change",
        "status before → after",
    ]);
    let right = |s: String| Cell::new(s).set_alignment(CellAlignment::Right);
    let status = |s: Option<holdoff::review::Status>, missing: &str| {
        s.map_or(missing.to_string(), |s| s.label().to_string())
    };
    // The first `rows` rows, and every later row that fails after the change.
    let fails =
        |r: &&holdoff::compare::CompareRow| r.status_after == Some(holdoff::review::Status::Fail);
    let shown: Vec<_> = cmp
        .rows
        .iter()
        .enumerate()
        .filter(|(k, r)| *k < rows || fails(r))
        .map(|(_, r)| r)
        .collect();
    for r in &shown {
        t.add_row(vec![
            Cell::new(r.role.label()),
            Cell::new(&r.item),
            Cell::new(&r.criterion),
            right(num(r.margin_before)),
            right(num(r.margin_after)),
            right(
                r.change
                    .map_or("-".into(), |c| format!("{:+.1} %", c * 100.0)),
            ),
            Cell::new(format!(
                "{} → {}{}",
                status(r.status_before, "new"),
                status(r.status_after, "removed"),
                if r.crossed_below {
                    " (crossed below)"
                } else {
                    ""
                }
            )),
        ]);
    }
    out += &format!("{t}\n");
    out += &format!(
        "Rows: the worst row of each design first, then rows that crossed below the design factor {}, then the largest changes of margin either way ({} of {} listed).\n",
        cmp.design_factor,
        shown.len(),
        cmp.rows.len()
    );
    if cmp.any_crossed_below {
        out += &format!(
            "At least one row now falls below the design factor {}.\n",
            cmp.design_factor
        );
    }
    out
}
