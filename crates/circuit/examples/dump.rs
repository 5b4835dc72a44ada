//! Print the elaboration of a stage file: the checked circuit (nodes, bound
//! models, resolved values) or its diagnostics (a contributor aid; see
//! DEVELOPERS.md).
fn main() {
    let p = std::env::args().nth(1).unwrap_or_default();
    match tankwave_circuit::load_file(&p, &Default::default()) {
        Ok(e) => {
            println!("{:#?}", e.circuit);
            for w in e.warnings {
                println!("{w}");
            }
        }
        Err(e) => {
            for d in e.diagnostics {
                println!("{d}");
            }
        }
    }
}
