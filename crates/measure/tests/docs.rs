//! docs/measurements.md stays true to the figure catalogue: its figure table
//! is exactly the one the catalogue gives (`figure::docs_table`), so a
//! figure added, renamed or given another unit without the docs fails here.

use std::path::Path;

#[test]
fn measurements_md_figure_table_is_the_catalogue() {
    let doc = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../../docs/measurements.md"),
    )
    .expect("docs/measurements.md");
    let want = tankwave_measure::figure::docs_table();
    let head = want.lines().next().expect("a heading row");
    let start = doc
        .find(head)
        .unwrap_or_else(|| panic!("docs/measurements.md has no figure table; add:\n{want}"));
    let got: String = doc[start..]
        .lines()
        .take_while(|l| l.starts_with('|'))
        .map(|l| format!("{l}\n"))
        .collect();
    assert_eq!(
        got, want,
        "docs/measurements.md's figure table differs from the catalogue; it should read:\n{want}"
    );
}
