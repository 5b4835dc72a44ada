//! Generator of the scale stages: N class-C stages in one stage file (a
//! scenario of our own, for benches only).
//!
//! Each stage is the 13.56 MHz class-C demo stage (netlists/ism-13m56-classc.tank:
//! input L-network, self-bias, choke, pi output network, invented transistor
//! model netlists/models/tw-hf25.tank). The N stages
//!
//! - share one supply, `vsup`, through a 0.1 ohm source resistance `rsrc`
//!   (so every collector current is felt by every stage);
//! - feed one 50 ohm load by parallel combining: each stage's pi network
//!   matches its 4 ohm load line to N x 50 ohm, and the N outputs are tied
//!   to the one load (N x 50 ohm in parallel is 50 ohm);
//! - differ by up to ±5 % in every part value, in a fixed deterministic
//!   pattern (no randomness), so that no two stages are alike and no
//!   splitting into independent pieces can give the right answer.
//!
//! Pi network for R1 = 4 ohm → R2 = N·50 ohm through a virtual resistance
//! Rv = 2 ohm (textbook pi as two back-to-back L sections, common practice):
//! Q1 = √(R1/Rv − 1), Q2 = √(R2/Rv − 1), C1 = Q1/(ω R1), C2 = Q2/(ω R2),
//! L = Rv (Q1 + Q2)/ω.
//!
//! Caution (as for every stage of tankwave): the tank capacitors of a real
//! stage see several times the supply voltage when keyed; see the README.

use std::f64::consts::PI;
use std::path::{Path, PathBuf};

/// The stage counts the scale bench runs.
#[allow(dead_code)]
pub const SCALE_COUNTS: [usize; 5] = [1, 2, 4, 8, 16];

/// Carrier frequency of every stage (the demo's ISM frequency), Hz.
pub const SCALE_F0: f64 = 13.56e6;

/// The deterministic spread of part `j` of stage `i`: a factor in
/// [0.95, 1.05] (eleven levels, stepping through the pattern with strides
/// that differ per stage and per part).
pub fn spread(i: usize, j: usize) -> f64 {
    let level = ((i * 7 + j * 3 + 1) % 11) as f64; // 0..=10
    1.0 + 0.05 * (level / 5.0 - 1.0)
}

/// The text of a stage file with `n` class-C stages (n ≥ 1). It includes
/// the invented transistor model `tw-hf25.tank` from its own directory
/// (see [`write_scale_stage`]).
pub fn scale_stage_text(n: usize) -> String {
    assert!(n >= 1, "at least one stage");
    let w = 2.0 * PI * SCALE_F0;
    let (r1, rv) = (4.0, 2.0);
    let r2 = 50.0 * n as f64;
    let q1 = (r1 / rv - 1.0f64).sqrt();
    let q2 = (r2 / rv - 1.0f64).sqrt();
    let c1 = q1 / (w * r1);
    let c2 = q2 / (w * r2);
    let lpi = rv * (q1 + q2) / w;
    let mut s = String::new();
    s.push_str(&format!(
        "title \"Scale bench: {n} class-C stages at 13.56 MHz, shared supply, one 50 ohm load\"\n"
    ));
    s.push_str("# Generated for the scale bench (benches/support/scale_gen.rs); invented data.\n");
    s.push_str(&format!(
        "# Pi per stage 4 ohm -> {r2} ohm, Rv = 2 ohm: C1 = {:.4} nF, L = {:.4} nH, C2 = {:.4} nF\n",
        c1 * 1e9,
        lpi * 1e9,
        c2 * 1e9
    ));
    s.push_str("# Caution: the tank capacitors see several times the supply voltage when keyed.\n");
    s.push_str("ambient 25degC\ninclude \"tw-hf25.tank\"\n\n");
    s.push_str("let f0    = 13.56MHz\nlet vcc   = 13.8V\nlet drive = 20V\n\n");
    s.push_str("voltage   vsup  vin   gnd   dc=vcc\n");
    s.push_str("resistor  rsrc  vin   vbus  0.1Ohm\n");
    s.push_str("resistor  rload out   gnd   50Ohm\n");
    for i in 1..=n {
        let k = |j: usize| spread(i, j);
        s.push_str(&format!("# stage {i}\n"));
        s.push_str(&format!(
            "voltage   vdrv{i}  src{i}  gnd   wave=sine(amp=drive, freq=f0, rise=(20/f0)) internal=50Ohm\n"
        ));
        s.push_str(&format!(
            "capacitor cmin{i}  src{i}  gnd   {:.4}pF\n",
            704.0 * k(0)
        ));
        s.push_str(&format!(
            "inductor  lmin{i}  src{i}  bin{i}  {:.4}nH q=150\n",
            176.0 * k(1)
        ));
        s.push_str(&format!(
            "capacitor cin{i}   bin{i}  base{i} {:.4}nF\n",
            100.0 * k(2)
        ));
        s.push_str(&format!(
            "resistor  rbias{i} base{i} gnd   {:.4}Ohm\n",
            10.0 * k(3)
        ));
        s.push_str(&format!(
            "bjt       q{i}     c=coll{i} b=base{i} e=gnd part=tw_hf25\n"
        ));
        s.push_str(&format!(
            "inductor  rfc{i}   vbus  coll{i} {:.4}uH r=0.05Ohm\n",
            4.7 * k(4)
        ));
        s.push_str(&format!(
            "capacitor cblk{i}  coll{i} p{i}   {:.4}nF\n",
            100.0 * k(5)
        ));
        s.push_str(&format!(
            "capacitor c1x{i}   p{i}    gnd   {:.5}nF\n",
            c1 * 1e9 * k(6)
        ));
        s.push_str(&format!(
            "inductor  lpi{i}   p{i}    m{i}   {:.5}nH q=200\n",
            lpi * 1e9 * k(7)
        ));
        s.push_str(&format!(
            "capacitor c2x{i}   m{i}    gnd   {:.5}nF\n",
            c2 * 1e9 * k(8)
        ));
        // each stage reaches the common output through a short lead
        s.push_str(&format!(
            "resistor  rlead{i} m{i}    out   {:.5}Ohm\n",
            0.05 * k(9)
        ));
    }
    s.push_str("\noutput rload\ninput  vdrv1\n\n");
    s.push_str("analyze bias\nanalyze steady freq=f0 harmonics=24\n");
    s
}

/// Write the stage file with `n` stages into `dir` (as `scale-N.tank`), with
/// a copy of the invented transistor model beside it; returns its path.
/// `repo` is the repository root (the model is read from netlists/models).
pub fn write_scale_stage(dir: &Path, repo: &Path, n: usize) -> std::io::Result<PathBuf> {
    let model = repo.join("netlists/models/tw-hf25.tank");
    std::fs::copy(&model, dir.join("tw-hf25.tank"))?;
    let path = dir.join(format!("scale-{n}.tank"));
    std::fs::write(&path, scale_stage_text(n))?;
    Ok(path)
}
