//! The Smith chart's geometry against the bilinear map
//! Γ = (Z − Z0)/(Z + Z0) (D. M. Pozar, Microwave Engineering, 4th ed., §2.3
//! and §2.4; docs/check-values.md, "Smith chart"): every drawn
//! constant-resistance circle passes through the images of points
//! r + jx, every constant-reactance arc runs from Γ = 1 to the image of jx
//! and through the images of r + jx, every load marker sits at the image of
//! its impedance. Positions are written with 3 decimals of a pixel, so they
//! agree to 1e-3 px plus the rounding of the radius: 2e-3 px.

use num_complex::Complex64;
use tankwave_report::plot::smith::{frame, ChartFrame};
use tankwave_report::plot::{smith_plot, PlotParams, SmithChart, SmithPoint};

const TOL_PX: f64 = 2e-3;

/// The map, written here from the textbook, not taken from the crate.
fn gamma(z: Complex64, z0: f64) -> Complex64 {
    (z - z0) / (z + z0)
}

fn px(f: &ChartFrame, g: Complex64) -> (f64, f64) {
    (f.cx + f.radius * g.re, f.cy - f.radius * g.im)
}

fn num(node: roxmltree::Node, a: &str) -> f64 {
    node.attribute(a)
        .unwrap_or_else(|| panic!("{a}"))
        .parse()
        .unwrap()
}

fn chart() -> (SmithChart, Vec<Complex64>) {
    let z0 = 50.0;
    let zs = vec![
        Complex64::new(50.0, 0.0),
        Complex64::new(100.0, 0.0),
        Complex64::new(25.0, 25.0),
        Complex64::new(10.0, -80.0),
        Complex64::new(300.0, 150.0),
    ];
    let points = zs
        .iter()
        .enumerate()
        .map(|(k, z)| SmithPoint {
            gamma: tankwave_report::plot::smith::gamma_of(*z, z0),
            series: k % 2,
            worst: k == 3,
            unsolved: k == 4,
            label: format!("Z = {z}"),
        })
        .collect();
    (
        SmithChart {
            title: "test chart".into(),
            z0,
            series: vec!["a".into(), "b".into()],
            circles: false,
            points,
            ..Default::default()
        },
        zs,
    )
}

#[test]
fn grid_and_markers_follow_the_bilinear_map() {
    let (c, zs) = chart();
    let p = PlotParams::for_source("t.tank");
    let svg = smith_plot(&c, &p).expect("drawn");
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    let f = frame(p.width);
    let z0 = c.z0;
    let nodes: Vec<_> = doc.descendants().collect();

    // constant-resistance circles: the images of r + jx lie on them
    let circles: Vec<_> = nodes
        .iter()
        .filter(|n| n.attribute("class") == Some("resistance"))
        .collect();
    assert!(circles.len() >= 4, "resistance circles drawn");
    for n in &circles {
        let r = num(**n, "data-r");
        let (cx, cy, rad) = (num(**n, "cx"), num(**n, "cy"), num(**n, "r"));
        for x in [-7.0, -1.0, -0.3, 0.0, 0.4, 2.0, 15.0] {
            let (gx, gy) = px(&f, gamma(Complex64::new(r, x) * z0, z0));
            let d = ((gx - cx).powi(2) + (gy - cy).powi(2)).sqrt();
            assert!((d - rad).abs() < TOL_PX, "r = {r}, x = {x}: {d} vs {rad}");
        }
    }

    // constant-reactance arcs: from Γ = 1 to the image of jx, through the
    // images of r + jx (equidistant from one centre at the drawn radius)
    let arcs: Vec<_> = nodes
        .iter()
        .filter(|n| n.attribute("class") == Some("reactance"))
        .collect();
    assert!(arcs.len() >= 8, "reactance arcs drawn, both signs");
    for n in &arcs {
        let x = num(**n, "data-x");
        let d = n.attribute("d").unwrap();
        let v: Vec<f64> = d
            .split(|c: char| c == 'M' || c == 'A' || c.is_whitespace())
            .filter(|s| !s.is_empty())
            .map(|s| s.parse().unwrap())
            .collect();
        let (x0, y0, rad, x1, y1) = (v[0], v[1], v[2], v[7], v[8]);
        let one = px(&f, Complex64::new(1.0, 0.0));
        assert!((x0 - one.0).abs() < TOL_PX && (y0 - one.1).abs() < TOL_PX);
        let rim = px(&f, gamma(Complex64::new(0.0, x) * z0, z0));
        assert!(
            (x1 - rim.0).abs() < TOL_PX && (y1 - rim.1).abs() < TOL_PX,
            "x = {x}"
        );
        // the centre lies on the perpendicular bisector of the chord at the
        // drawn radius; of the two candidates one must carry every r + jx
        let (mx, my) = ((x0 + x1) / 2.0, (y0 + y1) / 2.0);
        let (dx, dy) = (x1 - x0, y1 - y0);
        let half = (dx * dx + dy * dy).sqrt() / 2.0;
        let h = (rad * rad - half * half).max(0.0).sqrt();
        let (ux, uy) = (-dy / (2.0 * half), dx / (2.0 * half));
        let on = |cx: f64, cy: f64| {
            [0.1, 0.5, 1.0, 3.0].iter().all(|r| {
                let (gx, gy) = px(&f, gamma(Complex64::new(*r, x) * z0, z0));
                // the centre is found from rounded ends: 1e-2 px
                (((gx - cx).powi(2) + (gy - cy).powi(2)).sqrt() - rad).abs() < 1e-2
            })
        };
        // the small arc (large-arc flag 0) drawn with sweep flag 1 turns
        // about the centre on the +u side of the chord, with 0 on the −u
        // side (SVG 1.1, "Elliptical arc implementation notes")
        assert_eq!(v[5], 0.0, "small arc");
        let side = if v[6] == 1.0 { 1.0 } else { -1.0 };
        assert!(
            on(mx + side * h * ux, my + side * h * uy),
            "x = {x}: the arc drawn is not the one inside the chart"
        );
    }

    // markers: at the image of each load's impedance
    let loads: Vec<_> = nodes
        .iter()
        .filter(|n| {
            n.attribute("class")
                .is_some_and(|c| c.split(' ').any(|w| w == "load"))
        })
        .collect();
    assert_eq!(loads.len(), zs.len());
    for z in &zs {
        let g = gamma(*z, z0);
        let n = loads
            .iter()
            .find(|n| {
                (num(***n, "data-re") - g.re).abs() < 1e-12
                    && (num(***n, "data-im") - g.im).abs() < 1e-12
            })
            .unwrap_or_else(|| panic!("a marker at the image of {z}"));
        // a disc or ring marker is centred on the image
        if n.tag_name().name() == "circle" {
            let (x, y) = px(&f, g);
            assert!((num(**n, "cx") - x).abs() < TOL_PX && (num(**n, "cy") - y).abs() < TOL_PX);
        }
    }
    // the worst load is ringed where it is, the unsolved one crossed out
    let worst: Vec<_> = nodes
        .iter()
        .filter(|n| n.tag_name().name() == "circle" && n.attribute("class") == Some("worst"))
        .collect();
    assert_eq!(worst.len(), 1);
    let (wx, wy) = px(&f, gamma(zs[3], z0));
    assert!((num(*worst[0], "cx") - wx).abs() < TOL_PX);
    assert!((num(*worst[0], "cy") - wy).abs() < TOL_PX);
    assert!(svg.contains("class=\"load unsolved\""));
    // the matched load (series 0: a disc) sits at the centre
    let (cx, cy) = px(&f, Complex64::new(0.0, 0.0));
    assert!(loads.iter().any(|n| n.tag_name().name() == "circle"
        && (num(**n, "cx") - cx).abs() < TOL_PX
        && (num(**n, "cy") - cy).abs() < TOL_PX));
}

#[test]
fn nothing_or_a_non_finite_load_is_refused() {
    let p = PlotParams::default();
    assert!(smith_plot(&SmithChart::default(), &p).is_err());
    let (mut c, _) = chart();
    c.points[0].gamma = Complex64::new(f64::NAN, 0.0);
    assert!(smith_plot(&c, &p).is_err());
}

#[test]
fn the_map_at_the_worked_points() {
    // docs/check-values.md, "Smith chart" (Pozar §2.4; values computed
    // with Python's complex arithmetic): exact fractions, so 1e-12
    use tankwave_report::plot::smith::{gamma_of, reactance_end, resistance_circle};
    for (z, g) in [
        (Complex64::new(1.0, 0.0), Complex64::new(0.0, 0.0)),
        (Complex64::new(2.0, 0.0), Complex64::new(1.0 / 3.0, 0.0)),
        (Complex64::new(0.5, 0.5), Complex64::new(-0.2, 0.4)),
        (Complex64::new(0.2, -1.6), Complex64::new(0.4, -0.8)),
    ] {
        assert!((gamma_of(z * 75.0, 75.0) - g).norm() < 1e-12, "{z}");
    }
    // the r = 1 circle passes through the centre and Γ = 1
    let (c, r) = resistance_circle(1.0);
    assert!((c.re - 0.5).abs() < 1e-12 && (r - 0.5).abs() < 1e-12);
    // z = j1 lies at Γ = j
    assert!((reactance_end(1.0) - Complex64::new(0.0, 1.0)).norm() < 1e-12);
}
