//! A review meshes each design once per round: the fine mesh of a round is solved once and
//! carried to the margins, and the grid study adds its two coarser meshes. Counted through
//! `holdoff::review::meshes_built`, alone in this test binary so that no other test meshes meanwhile.

use holdoff::solve::SolverParams;

fn design(name: &str) -> holdoff::model::Model {
    let path = format!("{}/examples/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).expect("example is readable");
    holdoff::design::from_str(&text, &path).expect("example is valid")
}

#[test]
fn a_review_meshes_the_design_once_per_round() {
    // Without the grid study: one round, one mesh, one solve.
    for name in ["demo_750kv.toml", "stack_300kv.toml"] {
        let model = design(name);
        let before = holdoff::review::meshes_built();
        let run = holdoff::review::review(&model, &SolverParams::default(), false).expect(name);
        assert_eq!(holdoff::review::meshes_built() - before, 1, "{name}");
        assert!(run.fine.solution.info.iterations > 0);
    }
    // The stack's automatic strays are taken from that same mesh: its unit solves and the
    // field share one mesh.
    let model = design("stack_300kv.toml");
    assert!(
        model
            .multiplier
            .as_ref()
            .is_some_and(|m| m.stray_capacitance_f.is_none())
    );
    // With the grid study (as `check` runs it): per round the fine mesh and the study's two
    // coarser ones; the rounds are the accuracy target's refinements plus one.
    let model = design("demo_750kv.toml");
    let before = holdoff::review::meshes_built();
    let run = holdoff::review::review(&model, &SolverParams::default(), true).expect("demo");
    let rounds = run
        .study
        .as_ref()
        .and_then(|s| s.accuracy.as_ref())
        .map_or(0, |a| a.refinements)
        + 1;
    assert_eq!(holdoff::review::meshes_built() - before, 3 * rounds);
}
