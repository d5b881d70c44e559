//! Invented design texts shared by the integration tests (`tests/common`) and the in-crate
//! tests (`src/verification`): plain strings, so that both can include this file.

/// The text of a small invented grading column in SF6 at 2 bar: a grounded shield (top face
/// z = 150 mm), tori of major radius 100 mm between it and a terminal (bottom face
/// z = 450 mm) at `voltage`, `dielectrics` (whole `[[dielectric]]` tables) and `column`
/// (the column's keys after its shape), on a 4 mm mesh.
pub fn small_column(voltage: &str, dielectrics: &str, column: &str) -> String {
    format!(
        r#"
title = "small test column"
[tank]
inner_radius = "250 mm"
length = "700 mm"
[gas]
species = "SF6"
pressure = "2 bar"
temperature = "20 degC"
[terminal]
voltage = "{voltage}"
[[conductor]]
name = "ground shield"
shape = "rounded_cylinder"
r = ["0 mm", "120 mm"]
z = ["0 mm", "150 mm"]
corner_radius = "20 mm"
potential = "ground"
[[conductor]]
name = "terminal"
shape = "rounded_cylinder"
r = ["0 mm", "120 mm"]
z = ["450 mm", "600 mm"]
corner_radius = "30 mm"
potential = "terminal"
{dielectrics}
[[column]]
name = "column"
from = "ground shield"
to = "terminal"
shape = "torus"
major_radius = "100 mm"
minor_radius = "8 mm"
{column}
[mesh]
cell = "4 mm"
"#
    )
}

/// A small invented column for the fault replay: ground shield, four tori, terminal, in SF6.
pub fn small_fault_column() -> String {
    small_column(
        "200 kV",
        "",
        r#"electrodes = 4
z_first = "210 mm"
pitch = "60 mm"
grading = { resistor = "1 GOhm", tolerance = "1 %", strings = 1 }
protective_gap = { firing = "60 kV" }"#,
    )
}
