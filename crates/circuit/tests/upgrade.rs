//! `upgrade`: every retired spelling is rewritten to the current one, the
//! rest of the text is kept, and an old demo file upgrades to the same
//! circuit as the migrated demo (whose figures were compared with the old
//! program's: identical).

use std::path::Path;
use tankwave_circuit::models::{BJT_PARAMS, DIODE_PARAMS};
use tankwave_circuit::upgrade::upgrade;
use tankwave_circuit::{load_file, load_str, ModelParams, Overrides};

fn up(text: &str) -> String {
    upgrade("t.tank", text).unwrap_or_else(|e| panic!("{:#?}", e.diagnostics))
}

#[test]
fn statement_keywords_and_options() {
    assert_eq!(
        up("vsource v1 a gnd dc=1V rs=50Ohm\n"),
        "voltage v1 a gnd dc=1V internal=50Ohm\n"
    );
    assert_eq!(up("isource i1 a gnd dc=1mA\n"), "current i1 a gnd dc=1mA\n");
    assert_eq!(
        up("temperature 30degC   # warm\n"),
        "ambient 30degC   # warm\n"
    );
    assert_eq!(
        up("diode d1 a gnd model=dx area=2\n"),
        "diode d1 a gnd part=dx area=2\n"
    );
    assert_eq!(
        up("inductor l1 a b 1uH q=100 qfreq=7MHz\n"),
        "inductor l1 a b 1uH q=100 q_at=7MHz\n"
    );
    assert_eq!(up("analyze op\n"), "analyze bias\n");
    assert_eq!(
        up("analyze transient stop=1us start=op\n"),
        "analyze transient stop=1us start=bias\n"
    );
}

#[test]
fn waveforms() {
    assert_eq!(
        up("vsource v a gnd wave=pulse(0V, 5V, 1ns, 2ns, 3ns, 4ns, 10ns)\n"),
        "voltage v a gnd wave=square(base=0V, top=5V, start=1ns, rise=2ns, fall=3ns, hold=4ns, every=10ns)\n"
    );
    assert_eq!(
        up("vsource v a gnd wave=pulse(low=-1V, high=(2*x), width=5ns, period=0)\n"),
        "voltage v a gnd wave=square(base=-1V, top=(2*x), hold=5ns, every=0)\n"
    );
    assert_eq!(
        up("isource i a gnd wave=pwl(0 0A  1us -1mA\n   2us 0A)\n"),
        "current i a gnd wave=table(0: 0A, 1us: -1mA, 2us: 0A)\n"
    );
    assert_eq!(
        up("vsource v a gnd wave=sine(4V, f0, 90)\n"),
        "voltage v a gnd wave=sine(amp=4V, freq=f0, phase=90)\n"
    );
    assert_eq!(
        up("vsource v a gnd wave=sine(amp=4V, freq=f0, delay=1us)\n"),
        "voltage v a gnd wave=sine(amp=4V, freq=f0, start=1us)\n"
    );
    // Already named: left exactly as written.
    let named = "voltage v a gnd wave=sine(amp=4V,freq=f0)\n";
    assert_eq!(up(named), named);
}

#[test]
fn a_file_in_the_current_spelling_is_unchanged() {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../netlists/cw-7m1-classb.tank");
    let text = std::fs::read_to_string(p).unwrap();
    assert_eq!(up(&text), text);
}

#[test]
fn models_become_parts_with_the_old_defaults_written_out() {
    let old = "# before\nmodel q npn {\n  sat_current=1pA  # from the data\n  cj_be=10pF leak_be=1pA\n}\n";
    let new = up(old);
    assert!(
        new.starts_with("# before\npart q npn {\n  # from the data\n"),
        "{new}"
    );
    // Required, and defaults that changed, are written with the old values.
    for w in [
        "beta=100",
        "beta_reverse=1",
        "be_potential=0.75V",
        "be_grading=0.33",
        "linear_from=0.5",
        "be_ideality=1.5",
        "band_gap=1.11",
    ] {
        assert!(new.contains(w), "{w} missing in\n{new}");
    }
    // Effects that were off stay off without being written.
    for w in [
        "bc_potential",
        "bc_grading",
        "bc_ideality=",
        "early_voltage",
    ] {
        assert!(!new.contains(w), "{w} written in\n{new}");
    }
    // Every old flat name maps onto the row of the same field, with the
    // value the old language used when absent: upgrading an empty model
    // and elaborating it gives exactly those values wherever they matter.
    let e = load_str(
        "t.tank",
        &up("model q npn { cj_be=1pF cj_bc=1pF leak_be=1fA leak_bc=1fA }\nmodel d diode { cj0=1pF breakdown=50V }\n"),
        &Overrides::default(),
    )
    .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    for m in &e.circuit.models {
        match &m.params {
            ModelParams::Bjt(b) => {
                let mut b = b.clone();
                for p in BJT_PARAMS {
                    let given = matches!(p.old, "cj_be" | "cj_bc" | "leak_be" | "leak_bc");
                    if !given {
                        assert_eq!(*(p.field)(&mut b), p.old_default, "{}", p.name);
                    }
                }
            }
            ModelParams::Diode(d) => {
                let mut d = d.clone();
                for p in DIODE_PARAMS {
                    if !matches!(p.old, "cj0" | "breakdown") {
                        assert_eq!(*(p.field)(&mut d), p.old_default, "{}", p.name);
                    }
                }
            }
        }
    }
}

#[test]
fn the_old_demo_upgrades_to_the_migrated_demo_circuit() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../");
    let dir = tempfile::tempdir().unwrap();
    for (old, new) in [
        ("tests/data/upgrade/old-ism-13m56-classc.tank", "stage.tank"),
        ("tests/data/upgrade/old-tw-hf25.tank", "old-tw-hf25.tank"),
    ] {
        let text = std::fs::read_to_string(root.join(old)).unwrap();
        std::fs::write(dir.path().join(new), up(&text)).unwrap();
    }
    let a = load_file(dir.path().join("stage.tank"), &Overrides::default())
        .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    let b = load_file(
        root.join("netlists/ism-13m56-classc.tank"),
        &Overrides::default(),
    )
    .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    let kinds = |c: &tankwave_circuit::Circuit| -> Vec<String> {
        c.elements
            .iter()
            .map(|e| format!("{} {:?}", e.name, e.kind))
            .collect()
    };
    assert_eq!(kinds(&a.circuit), kinds(&b.circuit));
    let params = |c: &tankwave_circuit::Circuit| -> Vec<ModelParams> {
        c.models.iter().map(|m| m.params.clone()).collect()
    };
    assert_eq!(params(&a.circuit), params(&b.circuit));
    assert_eq!(a.circuit.analyses, b.circuit.analyses);
    assert_eq!(a.circuit.temperature_k, b.circuit.temperature_k);
}

#[test]
fn old_spellings_are_refused_with_the_new_form() {
    for (text, shows) in [
        ("vsource v1 a gnd dc=1V\n", "'vsource' is now 'voltage'"),
        (
            "voltage v1 a gnd wave=pulse(0V, 1V)\n",
            "square(base=…, top=…",
        ),
        ("voltage v1 a gnd wave=pwl(0 0V 1us 1V)\n", "table(0s: 0V"),
        (
            "voltage v1 a gnd wave=sine(1V, 1MHz)\n",
            "named arguments only",
        ),
        ("voltage v1 a gnd dc=1V rs=5Ohm\n", "'rs' is now 'internal'"),
        ("model q npn { gain_fwd=5 }\n", "'model' is now 'part'"),
        ("temperature 25degC\n", "'temperature' is now 'ambient'"),
        ("analyze op\n", "'op' is now 'bias'"),
    ] {
        let err = load_str(
            "t.tank",
            &format!("{text}resistor r1 a gnd 1\n"),
            &Overrides::default(),
        )
        .expect_err(text);
        let d = err
            .diagnostics
            .iter()
            .find(|d| d.code == "old-spelling")
            .unwrap_or_else(|| panic!("{text}: {:#?}", err.diagnostics));
        assert!(d.message.contains(shows), "{text}: {}", d.message);
        assert!(d.message.contains("tankwave upgrade"), "{}", d.message);
    }
}
