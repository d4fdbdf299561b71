//! Tests of the module as the engine drives it: declaration, chute parsing
//! and its errors, whole passages against closed forms, and the energy
//! property.

use super::*;
use crate::path::{PathPosition, Segment};
use packwright_api::{NodeValue, Span};
use proptest::prelude::*;

const FILE: &str = "transfers/TC-T.yaml";

fn sp(line: u32) -> Span {
    Span::new(FILE, line, 7)
}

fn num(x: f64, line: u32) -> Node {
    Node {
        value: NodeValue::Number(x),
        span: sp(line),
    }
}

fn text(s: &str, line: u32) -> Node {
    Node {
        value: NodeValue::Text(s.into()),
        span: sp(line),
    }
}

fn list(items: Vec<Node>, line: u32) -> Node {
    Node {
        value: NodeValue::List(items),
        span: sp(line),
    }
}

fn map(entries: Vec<(&str, Node)>, line: u32) -> Node {
    Node {
        value: NodeValue::Map(
            entries
                .into_iter()
                .map(|(k, v)| (text(k, line), v))
                .collect(),
        ),
        span: sp(line),
    }
}

fn pt(p: [f64; 2], line: u32) -> Node {
    list(vec![num(p[0], line), num(p[1], line)], line)
}

fn line_seg(from: [f64; 2], to: [f64; 2], line: u32) -> Node {
    map(
        vec![(
            "line",
            map(vec![("from", pt(from, line)), ("to", pt(to, line))], line),
        )],
        line,
    )
}

fn arc_seg(centre: [f64; 2], radius: &str, a0: &str, a1: &str, line: u32) -> Node {
    map(
        vec![(
            "arc",
            map(
                vec![
                    ("centre", pt(centre, line)),
                    ("radius", text(radius, line)),
                    ("from_angle", text(a0, line)),
                    ("to_angle", text(a1, line)),
                ],
                line,
            ),
        )],
        line,
    )
}

/// The issue's example path.
fn issue_chute() -> Node {
    list(
        vec![
            line_seg([1.10, 0.20], [1.30, -0.80], 11),
            arc_seg([0.30, -0.80], "1.0 m", "0 deg", "-70 deg", 12),
            line_seg([0.64, -1.74], [-0.12, -2.02], 13),
        ],
        10,
    )
}

/// A plate at 38 deg under the trajectory, shallower than the stream so
/// that it lands on top, and a concave arc of 2 m turning the stream to
/// 15 deg below the horizontal (a 1200 mm belt at 4.5 m/s).
fn spoon_chute() -> Node {
    list(
        vec![
            line_seg([1.530, -0.145], [3.736, -1.869], 11),
            arc_seg([4.967, -0.293], "2.0 m", "-128 deg", "-105 deg", 12),
        ],
        10,
    )
}

const BASE: &[(&str, &str)] = &[
    ("mass_flow", "2500 t/h"),
    ("belt_speed", "4.5 m/s"),
    ("bulk_density", "2400 kg/m3"),
    ("belt_width", "1200 mm"),
    ("centre_roll_length", "465 mm"),
    ("surcharge_angle", "20 deg"),
    ("belt_thickness", "15 mm"),
    ("pulley_diameter", "1000 mm"),
    ("chute_friction", "0.55"),
    ("impact_retention", "0.8"),
    ("chute_width", "900 mm"),
    ("receiving_belt_speed", "4.5 m/s"),
];

fn inputs_with(extra: &[(&str, &str)], chute: Node) -> Inputs {
    let mut pairs: Vec<(&str, &str)> = BASE
        .iter()
        .copied()
        .filter(|(k, _)| !extra.iter().any(|(e, _)| e == k))
        .collect();
    pairs.extend_from_slice(extra);
    Inputs::from_text(&ChuteDischarge.declaration(), &pairs)
        .unwrap()
        .with_structured("chute", chute)
}

fn out(o: &Outcome, name: &str) -> f64 {
    o.outputs
        .get(name)
        .unwrap_or_else(|| panic!("no output {name}"))
        .value
}

fn check<'a>(o: &'a Outcome, name: &str) -> &'a Check {
    o.checks
        .iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("no check {name}"))
}

fn input_error(e: &CalcError) -> (&str, &Span, &str) {
    match e {
        CalcError::Input {
            input,
            span: Some(span),
            message,
            ..
        } => (input, span, message),
        other => panic!("not an input error with a span: {other:?}"),
    }
}

#[test]
fn declaration_is_valid() {
    assert_eq!(ChuteDischarge.declaration().validate(), Ok(()));
}

#[test]
fn the_issue_example_path_parses() {
    let path = parse_chute(&issue_chute()).unwrap();
    assert_eq!(path.segments.len(), 3);
    assert!((path.segments[1].length() - 70f64.to_radians()).abs() < 1e-12);
    let mm = |t: &str| {
        let n = list(vec![text(t, 3), text("200 mm", 3)], 3);
        parse_chute(&list(
            vec![map(
                vec![("line", map(vec![("from", n), ("to", pt([0.0, 0.0], 3))], 3))],
                3,
            )],
            2,
        ))
    };
    let p = mm("1100 mm").unwrap();
    assert_eq!(
        p.segments[0],
        Segment::Line {
            from: [1.1, 0.2],
            to: [0.0, 0.0]
        }
    );
    let e = mm("1100 kg").unwrap_err();
    assert!(input_error(&e[0]).2.contains("not a length"));
}

#[test]
fn disconnected_segments_are_an_error_at_the_segment() {
    let chute = list(
        vec![
            line_seg([1.10, 0.20], [1.30, -0.80], 11),
            line_seg([1.35, -0.80], [1.0, -2.0], 12),
        ],
        10,
    );
    let i = inputs_with(&[], chute);
    let errors = ChuteDischarge.check_inputs(&i);
    assert_eq!(errors.len(), 1);
    let (input, span, message) = input_error(&errors[0]);
    assert_eq!((input, span.line), ("chute", 12));
    assert_eq!(&*span.file, FILE);
    assert!(
        message.contains("50 mm away") && message.contains("connected"),
        "{message}"
    );
    assert_eq!(ChuteDischarge.compute(&i).unwrap_err(), errors[0]);
    // Within the join tolerance (10 mm) is accepted.
    let near = list(
        vec![
            line_seg([1.10, 0.20], [1.30, -0.80], 11),
            line_seg([1.305, -0.80], [1.0, -2.0], 12),
        ],
        10,
    );
    assert!(parse_chute(&near).is_ok());
}

#[test]
fn bad_radius_and_shapes_point_at_their_nodes() {
    for r in ["-1.0 m", "0 m"] {
        let chute = list(vec![arc_seg([0.3, -0.8], r, "0 deg", "-70 deg", 21)], 20);
        let i = inputs_with(&[], chute);
        let errors = ChuteDischarge.check_inputs(&i);
        let (input, span, message) = input_error(&errors[0]);
        assert_eq!((input, span.line), ("chute", 21));
        assert!(message.contains("radius must be positive"), "{message}");
        assert_eq!(ChuteDischarge.compute(&i).unwrap_err(), errors[0]);
    }
    let bad = [
        // A point of three values.
        list(
            vec![map(
                vec![(
                    "line",
                    map(
                        vec![
                            (
                                "from",
                                list(vec![num(1.0, 31), num(0.0, 31), num(0.0, 31)], 31),
                            ),
                            ("to", pt([2.0, -1.0], 31)),
                        ],
                        31,
                    ),
                )],
                31,
            )],
            30,
        ),
        // An angle without unit.
        list(
            vec![map(
                vec![(
                    "arc",
                    map(
                        vec![
                            ("centre", pt([0.3, -0.8], 31)),
                            ("radius", num(1.0, 31)),
                            ("from_angle", num(0.0, 31)),
                            ("to_angle", text("-70 deg", 31)),
                        ],
                        31,
                    ),
                )],
                31,
            )],
            30,
        ),
        // An unknown segment kind, an unknown key, not a list.
        list(vec![map(vec![("spline", pt([0.0, 0.0], 31))], 31)], 30),
        list(
            vec![map(
                vec![(
                    "line",
                    map(
                        vec![
                            ("from", pt([1.0, 0.0], 31)),
                            ("to", pt([2.0, -1.0], 31)),
                            ("thickness", num(0.01, 31)),
                        ],
                        31,
                    ),
                )],
                31,
            )],
            30,
        ),
        text("straight down", 31),
        list(vec![arc_seg([0.3, -0.8], "1 m", "0 deg", "0 deg", 31)], 30),
    ];
    for chute in bad {
        let errors = parse_chute(&chute).unwrap_err();
        let (input, span, message) = input_error(&errors[0]);
        assert_eq!((input, span.line), ("chute", 31), "{message}");
    }
}

#[test]
fn a_trajectory_that_never_meets_the_chute_is_an_input_error() {
    // A plate behind the pulley, which the stream flies away from.
    let chute = list(vec![line_seg([-2.0, -1.0], [-1.0, -3.0], 41)], 40);
    let i = inputs_with(&[], chute);
    let errors = ChuteDischarge.check_inputs(&i);
    assert_eq!(errors.len(), 1);
    let (input, span, message) = input_error(&errors[0]);
    assert_eq!((input, span.line), ("chute", 40));
    assert!(message.contains("never meets the chute"), "{message}");
    assert_eq!(ChuteDischarge.compute(&i).unwrap_err(), errors[0]);
}

// A horizontal floor under a horizontal release: every step has a closed
// form. CEMA release at TDC (reference sheet 2.2), free fall, the normal
// component lost, and sliding v^2 = v0^2 - 2 mu g L (reference sheet 2.3
// with theta = 0).
#[test]
fn floor_chute_follows_the_closed_forms() {
    let chute = list(vec![line_seg([0.0, -2.0], [6.0, -2.0], 51)], 50);
    let i = inputs_with(
        &[("chute_friction", "0.3"), ("impact_retention", "0.9")],
        chute,
    );
    assert!(ChuteDischarge.check_inputs(&i).is_empty());
    let o = ChuteDischarge.compute(&i).unwrap();
    let g = 9.80665;
    let y0 = out(&o, "release_y_centroid");
    assert!(out(&o, "release_x_centroid").abs() < 1e-12);
    let drop = y0 + 2.0;
    let t = (2.0 * drop / g).sqrt();
    assert!((out(&o, "impact_point_x") - 4.5 * t).abs() < 1e-6);
    assert!((out(&o, "impact_point_y") + 2.0).abs() < 1e-9);
    assert!((out(&o, "impact_speed") - (4.5f64.powi(2) + 2.0 * g * drop).sqrt()).abs() < 1e-6);
    assert!((out(&o, "impact_angle") - (g * t / 4.5).atan()).abs() < 1e-6);
    assert!((out(&o, "speed_after_impact") - 0.9 * 4.5).abs() < 1e-6);
    let l = 6.0 - 4.5 * t;
    let v_exit = ((0.9f64 * 4.5).powi(2) - 2.0 * 0.3 * g * l).sqrt();
    assert!(
        (out(&o, "exit_speed") - v_exit).abs() < 1e-6,
        "{}",
        out(&o, "exit_speed")
    );
    assert!((out(&o, "exit_speed_along_belt") - v_exit).abs() < 1e-6);
    assert!(out(&o, "exit_speed_normal").abs() < 1e-9);
    assert!((out(&o, "speed_ratio") - v_exit / 4.5).abs() < 1e-6);
    let area = 2500.0 / 3.6 / (2400.0 * v_exit);
    assert!((out(&o, "stream_area_at_exit") - area).abs() < 1e-9);
    assert!((out(&o, "exit_stream_depth") - area / 0.9).abs() < 1e-9);
    assert_eq!(check(&o, "no_stall").status, Status::Pass);
    assert_eq!(check(&o, "impact_angle").status, Status::Fail); // a flat floor, struck steeply
                                                                // The burden section: 2500 t/h at 4.5 m/s and 2400 kg/m3.
    assert!((out(&o, "flow_area") - 2500.0 / 3.6 / (2400.0 * 4.5)).abs() < 1e-12);
    let full = full_section(
        si(1.2),
        si(0.465),
        si(35f64.to_radians()),
        si(20f64.to_radians()),
    );
    assert!((out(&o, "fill_ratio") - out(&o, "flow_area") / full.area.value).abs() < 1e-12);
    let prof = &o.series[0];
    assert_eq!(prof.name, "speed_profile");
    assert!(prof.rows.len() >= 2 && prof.rows.len() <= 200);
    let plot = &o.plots[0];
    assert!(plot.equal_scale);
    assert!(plot.layers.iter().any(|l| l.style == LayerStyle::Points));
}

#[test]
fn a_long_floor_stalls_and_says_where() {
    let chute = list(vec![line_seg([0.0, -2.0], [20.0, -2.0], 51)], 50);
    let i = inputs_with(&[("chute_friction", "0.6")], chute);
    let o = ChuteDischarge.compute(&i).unwrap();
    let c = check(&o, "no_stall");
    assert_eq!(c.status, Status::Fail);
    assert!(c.explanation.contains("stops"));
    assert!(!o.outputs.contains_key("exit_speed_along_belt"));
    // Where: v0^2 / (2 mu g) beyond the impact.
    let g = 9.80665;
    let v0 = 0.8 * 4.5;
    let stop_x = out(&o, "impact_point_x") + v0 * v0 / (2.0 * 0.6 * g);
    assert!(
        c.explanation.contains(&format!("{stop_x:.2}")),
        "{}",
        c.explanation
    );
}

#[test]
fn spoon_chute_gives_sane_exit_onto_the_belt() {
    let i = inputs_with(&[], spoon_chute());
    assert!(ChuteDischarge.check_inputs(&i).is_empty());
    let o = ChuteDischarge.compute(&i).unwrap();
    assert!(out(&o, "discharge_ratio") > 1.0);
    assert!(out(&o, "impact_angle").to_degrees() < 20.0);
    let along = out(&o, "exit_speed_along_belt");
    let speed = out(&o, "exit_speed");
    // Leaving the arc at 15 deg below the horizontal, in line.
    assert!((along - speed * 15f64.to_radians().cos()).abs() < 1e-6);
    assert!((out(&o, "exit_speed_normal") - speed * 15f64.to_radians().sin()).abs() < 1e-6);
    for name in [
        "no_stall",
        "stream_stays_on_chute",
        "impact_angle",
        "belt_fill",
    ] {
        assert_eq!(check(&o, name).status, Status::Pass, "{name}");
    }
    // Right-angle transfer: nothing along the belt, all of it across.
    let i = inputs_with(&[("plan_angle", "90 deg")], spoon_chute());
    let o = ChuteDischarge.compute(&i).unwrap();
    assert!(out(&o, "exit_speed_along_belt").abs() < 1e-9);
    assert!((out(&o, "exit_speed_across_belt").abs() - along).abs() < 1e-6);
    assert_eq!(check(&o, "speed_ratio_min").status, Status::Fail);
}

#[test]
fn slow_belt_rides_round_the_pulley() {
    // 1.5 m/s over a 1 m pulley: V^2/(g r) < 1, release past TDC (CEMA).
    let i = inputs_with(
        &[("belt_speed", "1.5 m/s"), ("mass_flow", "600 t/h")],
        list(vec![line_seg([0.0, -1.5], [3.0, -1.5], 61)], 60),
    );
    let o = ChuteDischarge.compute(&i).unwrap();
    let ratio = out(&o, "discharge_ratio");
    assert!(ratio < 1.0);
    assert!((out(&o, "release_angle") - ratio.acos()).abs() < 1e-12);
    assert!((out(&o, "launch_angle") + ratio.acos()).abs() < 1e-12);
    assert!(out(&o, "release_x_centroid") > 0.0);
}

#[test]
fn burden_depth_given_is_used() {
    let i = inputs_with(&[("burden_depth", "150 mm")], spoon_chute());
    let o = ChuteDischarge.compute(&i).unwrap();
    assert!((out(&o, "burden_depth") - 0.150).abs() < 1e-12);
    let top = out(&o, "release_y_top");
    assert!((top - (0.5 + 0.015 + 0.150)).abs() < 1e-12);
}

/// Builds a smooth path: a long plate at `slope` below the horizontal from
/// `start`, a tangent concave arc of radius `r` turning it to 10 deg, and a
/// tangent run-out plate.
fn smooth_path(start: [f64; 2], slope: f64, r: f64) -> ChutePath {
    let l = 15.0;
    let end = [start[0] + l * slope.cos(), start[1] - l * slope.sin()];
    let a0 = -slope - std::f64::consts::FRAC_PI_2;
    let centre = [end[0] - r * a0.cos(), end[1] - r * a0.sin()];
    let a1 = a0 + (slope - 10f64.to_radians());
    let arc_end = [centre[0] + r * a1.cos(), centre[1] + r * a1.sin()];
    let d = 10f64.to_radians();
    let span = Span::new(FILE, 1, 1);
    ChutePath {
        segments: vec![
            Segment::Line {
                from: start,
                to: end,
            },
            Segment::Arc {
                centre,
                radius: r,
                from_angle: a0,
                to_angle: a1,
            },
            Segment::Line {
                from: arc_end,
                to: [arc_end[0] + 2.0 * d.cos(), arc_end[1] - 2.0 * d.sin()],
            },
        ],
        spans: vec![span.clone(); 3],
        span,
    }
}

proptest! {
    // With no friction and full retention, the only loss between the release
    // point and any point on the chute is the normal component at impact:
    // v^2 + v_n^2 = V^2 + 2 g (y_release - y) (energy conservation, DERIVED).
    #[test]
    fn frictionless_flow_conserves_energy(
        speed in 1.0f64..5.0,
        radius in 0.4f64..0.9,
        slope_deg in 20.0f64..45.0,
        arc_r in 0.8f64..4.0,
        x0 in 0.0f64..0.3,
        y0 in -1.5f64..-0.7,
    ) {
        let g = standard_gravity();
        let path = smooth_path([x0, y0], slope_deg.to_radians(), arc_r);
        let rel = cema_release(si(speed), si(radius), si(0.0), g);
        let passage = follow_stream(&path, &rel, 0.0, 1.0, g).unwrap();
        prop_assert_eq!(passage.impacts.len(), 1);
        let exits = matches!(passage.ending, Ending::Exit { .. });
        prop_assert!(exits);
        let vn = passage.impacts[0].normal_speed;
        let energy0 = speed * speed + 2.0 * g.value * rel.y.value;
        for p in &passage.profile {
            let lhs = p.speed * p.speed + vn * vn + 2.0 * g.value * p.point[1];
            prop_assert!((lhs - energy0).abs() < 1e-7 * energy0.abs().max(1.0), "{} vs {}", lhs, energy0);
        }
        let first = passage.impacts[0].at;
        prop_assert_eq!(first, PathPosition { segment: 0, along: first.along });
    }
}
