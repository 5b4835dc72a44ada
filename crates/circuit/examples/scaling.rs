//! Quick scaling probe (debug aid): min-of-5 parse+elaborate time for generated ladders.
use std::time::Instant;
fn generate(n: usize) -> String {
    let mut s = String::from("let rs = 10Ohm\nlet cs = 1nF\nvsource vin n0 gnd dc=1V rs=50Ohm\n");
    for i in 0..n / 2 {
        s.push_str(&format!(
            "resistor r{i} n{i} n{} rs\ncapacitor c{i} n{} gnd (cs*2)\n",
            i + 1,
            i + 1
        ));
    }
    s.push_str(&format!("resistor rend n{} gnd 50Ohm\n", n / 2));
    s
}
fn main() {
    let sizes: Vec<usize> = match std::env::args().nth(1).and_then(|a| a.parse().ok()) {
        Some(n) => vec![n],
        None => vec![5000, 10000, 20000, 40000],
    };
    for n in sizes {
        let t = generate(n);
        let mut best = (f64::INFINITY, f64::INFINITY);
        for _ in 0..5 {
            let a = Instant::now();
            let p = tankwave_netlist::parse_str("g.tank", &t);
            let b = Instant::now();
            let e = tankwave_circuit::elaborate(&p, &Default::default());
            let c = Instant::now();
            assert!(e.is_ok());
            best.0 = best.0.min((b - a).as_secs_f64() * 1e3);
            best.1 = best.1.min((c - b).as_secs_f64() * 1e3);
        }
        println!("{n}: parse {:.1} ms, elaborate {:.1} ms", best.0, best.1);
    }
}
