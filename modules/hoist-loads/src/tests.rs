//! Tests of the module wrapper: declaration, the inputs each basis needs,
//! the rope-factor rule, and end-to-end results against reference.md §4.

use super::*;
use packwright_api::Status;

fn run(given: &[(&str, &str)]) -> Result<Outcome, CalcError> {
    let inputs = Inputs::from_text(&declaration(), given).expect("inputs parse");
    HoistLoads.compute(&inputs)
}

fn output(out: &Outcome, name: &str) -> f64 {
    out.outputs
        .get(name)
        .unwrap_or_else(|| panic!("output {name} missing"))
        .value
}

fn check<'a>(out: &'a Outcome, name: &str) -> Option<&'a Check> {
    out.checks.iter().find(|c| c.name == name)
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs()
}

const G: f64 = 9.806_65;

#[test]
fn declaration_is_valid() {
    assert_eq!(HoistLoads.declaration().validate(), Ok(()));
}

// EN 13001-2:2014 φ2 (reference.md §4.1, from memory M–H): HC2 with HD4 at
// 0.4 m/s has v_h = 0.2 m/s → φ2 = 1.168; φ6 = 1.084; φ2C at 0.4 m/s = 1.236.
#[test]
fn en13001_factor_and_design_load() {
    let out = run(&[
        ("hoisted_mass", "10 t"),
        ("basis", "en13001"),
        ("hoisting_class", "HC2"),
        ("drive_class", "HD4"),
        ("hoisting_speed", "0.4 m/s"),
    ])
    .unwrap();
    assert!(close(output(&out, "dynamic_factor"), 1.168, 1e-9));
    assert!(close(output(&out, "dynamic_test_factor"), 1.084, 1e-9));
    assert!(close(
        output(&out, "dynamic_factor_c1"),
        1.10 + 0.34 * 0.4,
        1e-9
    ));
    assert!(close(
        output(&out, "design_hoist_load"),
        1.168 * 10_000.0 * G,
        1e-9
    ));
    // No rope data: no rope outputs, and the missing rated capacity is noted.
    assert!(!out.outputs.contains_key("stiffness"));
    assert!(out.notes.iter().any(|n| n.contains("No rated capacity")));
}

// EN 13001-2:2014: HC3 with HD2 takes the creep speed: 0.5 m/s → 1.405
// (reference.md §4.1 check value, from memory M–H).
#[test]
fn en13001_creep_speed_drive_class() {
    let out = run(&[
        ("hoisted_mass", "10 t"),
        ("basis", "en13001"),
        ("hoisting_class", "HC3"),
        ("drive_class", "HD2"),
        ("hoisting_speed", "1.2 m/s"),
        ("creep_speed", "0.5 m/s"),
    ])
    .unwrap();
    assert!(close(output(&out, "dynamic_factor"), 1.405, 1e-9));
}

// FEM 1.001 (1998) Booklet 2: overhead crane at 0.5 m/s → ψ = 1.30
// (reference.md §4.2, from memory M).
#[test]
fn fem1001_factor() {
    let out = run(&[
        ("hoisted_mass", "5 t"),
        ("basis", "fem1001"),
        ("crane_type", "overhead"),
        ("hoisting_speed", "30 m/min"),
    ])
    .unwrap();
    assert!(close(output(&out, "dynamic_factor"), 1.30, 1e-9));
}

// CMAA Specification 70: 60 fpm → HLF 0.30, factor 1.30 (reference.md §4.3,
// from memory H); inputs in US customary units.
#[test]
fn cmaa70_factor_in_us_units() {
    let out = run(&[
        ("hoisted_mass", "6000 lb"),
        ("rated_capacity", "10000 lb"),
        ("basis", "cmaa70"),
        ("hoisting_speed", "60 fpm"),
    ])
    .unwrap();
    assert!(close(output(&out, "dynamic_factor"), 1.30, 1e-9));
    let lbf = 0.453_592_37 * G;
    assert!(close(
        output(&out, "design_hoist_load"),
        1.3 * 6000.0 * lbf,
        1e-9
    ));
    assert_eq!(
        check(&out, "within_rated_capacity").unwrap().status,
        Status::Pass
    );
}

// GL Noble Denton 0027/ND Rev 11 Table 5-1 (CONFIRMED): offshore SHL 50 t →
// 1.353553 (reference.md §4.4, rounded to 6 decimals there).
#[test]
fn offshore_daf_and_rated_capacity_at_its_own_factor() {
    let out = run(&[
        ("hoisted_mass", "50 t"),
        ("rated_capacity", "60 t"),
        ("basis", "offshore"),
        ("lift_location", "offshore"),
    ])
    .unwrap();
    assert!((output(&out, "dynamic_factor") - 1.353553).abs() < 1e-6);
    let c = check(&out, "within_rated_capacity").unwrap();
    let daf60 = 1.0 + 0.25 * (100.0f64 / 60.0).sqrt();
    assert!(close(c.limit.unwrap().value, 60_000.0 * G * daf60, 1e-9));
    assert_eq!(c.status, Status::Pass);
}

#[test]
fn overload_fails_the_rated_capacity_check() {
    let out = run(&[
        ("hoisted_mass", "11 t"),
        ("rated_capacity", "10 t"),
        ("basis", "fem1001"),
        ("crane_type", "jib"),
        ("hoisting_speed", "0.2 m/s"),
    ])
    .unwrap();
    assert_eq!(
        check(&out, "within_rated_capacity").unwrap().status,
        Status::Fail
    );
}

#[test]
fn missing_basis_inputs_point_at_the_basis() {
    let inputs = Inputs::from_text(
        &declaration(),
        &[
            ("hoisted_mass", "10 t"),
            ("basis", "en13001"),
            ("hoisting_class", "HC2"),
        ],
    )
    .unwrap();
    let errors = HoistLoads.check_inputs(&inputs);
    let names: Vec<&str> = errors
        .iter()
        .map(|e| match e {
            CalcError::Input {
                input,
                span,
                message,
                expected,
            } => {
                assert_eq!(span, &inputs.span_of("basis"));
                assert!(span.is_some());
                assert!(message.contains(input.as_str()));
                assert!(expected.contains(':'), "an example: {expected}");
                input.as_str()
            }
            other => panic!("unexpected {other:?}"),
        })
        .collect();
    assert_eq!(names, vec!["drive_class", "hoisting_speed"]);
    // compute refuses with the first of the same errors.
    assert_eq!(HoistLoads.compute(&inputs).unwrap_err(), errors[0]);

    for (basis, missing) in [
        ("fem1001", vec!["hoisting_speed", "crane_type"]),
        ("cmaa70", vec!["hoisting_speed"]),
        ("offshore", vec!["lift_location"]),
    ] {
        let inputs =
            Inputs::from_text(&declaration(), &[("hoisted_mass", "1 t"), ("basis", basis)])
                .unwrap();
        let got: Vec<String> = HoistLoads
            .check_inputs(&inputs)
            .into_iter()
            .map(|e| match e {
                CalcError::Input { input, .. } => input,
                other => panic!("{other:?}"),
            })
            .collect();
        assert_eq!(got, missing, "{basis}");
    }
}

#[test]
fn inconsistent_inputs_are_errors() {
    let base = [
        ("hoisted_mass", "10 t"),
        ("basis", "en13001"),
        ("hoisting_class", "HC2"),
        ("hoisting_speed", "8 m/min"),
    ];
    let errs = |extra: &[(&str, &str)]| -> Vec<String> {
        let mut given = base.to_vec();
        given.extend_from_slice(extra);
        let inputs = Inputs::from_text(&declaration(), &given).unwrap();
        HoistLoads
            .check_inputs(&inputs)
            .into_iter()
            .map(|e| match e {
                CalcError::Input { input, .. } => input,
                other => panic!("{other:?}"),
            })
            .collect()
    };
    assert_eq!(errs(&[("drive_class", "HD3")]), vec!["creep_speed"]);
    assert_eq!(
        errs(&[("drive_class", "HD3"), ("creep_speed", "10 m/min")]),
        vec!["creep_speed"]
    );
    assert_eq!(
        errs(&[("drive_class", "HD1"), ("released_mass", "12 t")]),
        vec!["release_rate", "released_mass"]
    );
    assert_eq!(
        errs(&[
            ("drive_class", "HD1"),
            ("rope_diameter", "16 mm"),
            ("falls", "4")
        ]),
        vec!["fill_factor", "rope_modulus", "rope_length"]
    );
    assert_eq!(
        errs(&[("drive_class", "HD1"), ("slack_height", "50 mm")]),
        vec!["slack_height"]
    );
    assert_eq!(
        errs(&[("drive_class", "HD1"), ("rope_breaking_force", "190 kN")]),
        vec!["falls"]
    );
    let inputs = Inputs::from_text(
        &declaration(),
        &[
            ("hoisted_mass", "1 t"),
            ("basis", "fem1001"),
            ("crane_type", "magnet"),
            ("hoisting_speed", "0.2 m/s"),
        ],
    )
    .unwrap();
    assert_eq!(HoistLoads.check_inputs(&inputs).len(), 1);
    // The rope model on an offshore basis still needs the hoisting speed.
    let inputs = Inputs::from_text(
        &declaration(),
        &[
            ("hoisted_mass", "1 t"),
            ("basis", "offshore"),
            ("lift_location", "inshore"),
            ("falls", "1"),
            ("rope_diameter", "20 mm"),
            ("fill_factor", "0.58"),
            ("rope_modulus", "100 GPa"),
            ("rope_length", "10 m"),
        ],
    )
    .unwrap();
    let errors = HoistLoads.check_inputs(&inputs);
    assert!(matches!(&errors[..], [CalcError::Input { input, .. }] if input == "hoisting_speed"));
}

// EN 13001-2:2014 φ3 (reference.md §4.1, from memory M–H): Δm/m = 0.3 slow →
// 0.55 passes; Δm/m = 0.6 rapid → −0.2 fails as uplift.
#[test]
fn release_factor_and_uplift() {
    let base = [
        ("hoisted_mass", "10 t"),
        ("basis", "en13001"),
        ("hoisting_class", "HC2"),
        ("drive_class", "HD1"),
        ("hoisting_speed", "0.2 m/s"),
    ];
    let mut given = base.to_vec();
    given.extend_from_slice(&[("released_mass", "3 t"), ("release_rate", "slow")]);
    let out = run(&given).unwrap();
    assert!(close(output(&out, "release_factor"), 0.55, 1e-9));
    assert_eq!(
        check(&out, "no_uplift_on_release").unwrap().status,
        Status::Pass
    );
    let mut given = base.to_vec();
    given.extend_from_slice(&[("released_mass", "6 t"), ("release_rate", "rapid")]);
    let out = run(&given).unwrap();
    assert!(close(output(&out, "release_factor"), -0.2, 1e-9));
    assert_eq!(
        check(&out, "no_uplift_on_release").unwrap().status,
        Status::Fail
    );
}

/// The reference.md §4.5 rope: d = 20 mm, f = 0.58, E = 100 kN/mm², L = 10 m.
fn rope_item(extra: &[(&'static str, &'static str)]) -> Vec<(&'static str, &'static str)> {
    let mut given = vec![
        ("hoisted_mass", "1000 kg"),
        ("basis", "cmaa70"),
        ("hoisting_speed", "0.5 m/s"),
        ("falls", "1"),
        ("rope_diameter", "20 mm"),
        ("fill_factor", "0.58"),
        ("rope_modulus", "100 kN/mm2"),
        ("rope_length", "10 m"),
    ];
    given.extend_from_slice(extra);
    given
}

// The rope factor: the item's criterion wins, else ISO 4308-1 Z_p of the
// mechanism group (from memory: M5 4.5), else no check and a note.
#[test]
fn required_rope_factor_rule() {
    let out = run(&rope_item(&[
        ("rope_breaking_force", "40 kN"),
        ("mechanism_group", "M5"),
    ]))
    .unwrap();
    let sf = 40_000.0 / (1000.0 * G);
    assert!(close(output(&out, "rope_safety_factor"), sf, 1e-12));
    let c = check(&out, "rope_safety_factor").unwrap();
    assert_eq!(c.limit.unwrap().value, 4.5);
    assert_eq!(c.status, Status::Fail);
    let out = run(&rope_item(&[
        ("rope_breaking_force", "40 kN"),
        ("mechanism_group", "M5"),
        ("required_rope_factor", "3.5"),
    ]))
    .unwrap();
    let c = check(&out, "rope_safety_factor").unwrap();
    assert_eq!(c.limit.unwrap().value, 3.5);
    assert_eq!(c.status, Status::Pass);
    let out = run(&rope_item(&[("rope_breaking_force", "40 kN")])).unwrap();
    assert!(check(&out, "rope_safety_factor").is_none());
    assert!(out.notes.iter().any(|n| n.contains("No rope factor check")));
    assert!(out.outputs.contains_key("rope_safety_factor"));
}

// End to end through the module with standard gravity: the reference.md §4.5
// rope gives k = 1.822124e6 N/m (DERIVED check value); lift-off at 0.5 m/s
// with an instant ramp matches F = m g + v √(k m); the snatch load matches
// F = m g (1 + √(1 + 2 k h / (m g))) (CONFIRMED form).
#[test]
fn rope_model_end_to_end() {
    let out = run(&rope_item(&[("slack_height", "0.1 m")])).unwrap();
    let k = 1.822_124e6;
    assert!(close(output(&out, "stiffness"), k, 1e-6));
    assert!(close(output(&out, "static_stretch"), 1000.0 * G / k, 1e-6));
    let w = 1000.0 * G;
    let bound = 1.0 + 0.5 * (k * 1000.0f64).sqrt() / w;
    assert!(close(output(&out, "liftoff_bound_factor"), bound, 1e-6));
    // With slack the hook is at full speed when the rope tightens: the bound.
    assert!(close(output(&out, "model_dynamic_factor"), bound, 1e-6));
    let snatch = w * (1.0 + (1.0 + 2.0 * k * 0.1 / w).sqrt());
    assert!(close(output(&out, "snatch_load"), snatch, 1e-6));
    assert!(out.outputs.values().all(|m| m.value.is_finite()));
    let series = &out.series[0];
    assert!(series.rows.len() <= 200 && series.rows.len() > 50);
    let plot = &out.plots[0];
    assert_eq!(plot.layers.len(), 4);
    assert!(plot.layers[0].points.len() > 100);
}

// A ramp lowers the model factor below the full-speed bound, and the drive
// class decides the lift-off speed (HD2: creep).
#[test]
fn ramp_and_creep_speed_lower_the_model_factor() {
    let instant = run(&rope_item(&[])).unwrap();
    let ramped = run(&rope_item(&[("drive_ramp_time", "1 s")])).unwrap();
    assert!(output(&ramped, "model_dynamic_factor") < output(&instant, "model_dynamic_factor"));
    let out = run(&[
        ("hoisted_mass", "1000 kg"),
        ("basis", "en13001"),
        ("hoisting_class", "HC2"),
        ("drive_class", "HD2"),
        ("hoisting_speed", "0.5 m/s"),
        ("creep_speed", "0.05 m/s"),
        ("falls", "1"),
        ("rope_diameter", "20 mm"),
        ("fill_factor", "0.58"),
        ("rope_modulus", "100 GPa"),
        ("rope_length", "10 m"),
    ])
    .unwrap();
    assert!(close(output(&out, "liftoff_speed"), 0.05, 1e-12));
    let k: f64 = 1.822_124e6;
    let bound = 1.0 + 0.05 * (k / 1000.0).sqrt() / G;
    assert!(close(output(&out, "model_dynamic_factor"), bound, 1e-6));
}

/// A 16 mm grade 8 chain hoist, one fall of 4 m.
fn chain_item(extra: &[(&'static str, &'static str)]) -> Vec<(&'static str, &'static str)> {
    let mut given = vec![
        ("hoisted_mass", "2000 kg"),
        ("basis", "cmaa70"),
        ("hoisting_speed", "0.1 m/s"),
        ("medium", "chain"),
        ("falls", "1"),
        ("chain_size", "16 mm"),
        ("chain_grade", "G8"),
        ("rope_length", "4 m"),
    ];
    given.extend_from_slice(extra);
    given
}

// Chain as the spring (reference.md §3.5): A = 2 π d²/4 = 4.0212e-4 m² at
// 16 mm; E = (5.40 − 0.0040 · 16) · 10¹⁰ Pa, the DNV studless R3 formula
// (CONFIRMED as quoted) used for grade 8 as an approximation from memory;
// EN 818-2 grade 8 BF = 2 (π/4) d² 800 N/mm² = 321.7 kN (CONSISTENT).
#[test]
fn chain_medium_stiffness_and_breaking_force() {
    let out = run(&chain_item(&[("mechanism_group", "M5")])).unwrap();
    let a = 2.0 * std::f64::consts::PI * 0.016f64.powi(2) / 4.0;
    assert!(close(a, 4.0212e-4, 1e-4));
    let e = (5.40 - 0.0040 * 16.0) * 1e10;
    let k = e * a / 4.0;
    assert!(close(output(&out, "stiffness"), k, 1e-9));
    let bf = 321.7e3;
    let sf = output(&out, "rope_safety_factor");
    assert!(close(sf, bf / (2000.0 * G), 1e-4));
    assert_eq!(
        check(&out, "rope_safety_factor").unwrap().status,
        Status::Pass
    );
    // Lift-off at full speed: the closed form on the chain's k.
    let bound = 1.0 + 0.1 * (k * 2000.0).sqrt() / (2000.0 * G);
    assert!(close(output(&out, "liftoff_bound_factor"), bound, 1e-9));
    assert!(close(output(&out, "model_dynamic_factor"), bound, 1e-6));
    assert!(out
        .notes
        .iter()
        .any(|n| n.contains("verify with the chain maker")));
    // A certificate's breaking force wins over the grade formula.
    let out = run(&chain_item(&[("rope_breaking_force", "350 kN")])).unwrap();
    assert!(close(
        output(&out, "rope_safety_factor"),
        350e3 / (2000.0 * G),
        1e-12
    ));
}

#[test]
fn chain_medium_validation_points_at_spans() {
    let errs = |given: &[(&str, &str)]| -> Vec<(String, bool)> {
        let inputs = Inputs::from_text(&declaration(), given).unwrap();
        HoistLoads
            .check_inputs(&inputs)
            .into_iter()
            .map(|e| match e {
                CalcError::Input {
                    input,
                    span,
                    expected,
                    ..
                } => {
                    assert!(expected.contains(':'), "an example: {expected}");
                    let blame = if input == "chain_grade" || input == "falls" {
                        "medium"
                    } else {
                        input.as_str()
                    };
                    let ok = span.is_some() && span == inputs.span_of(blame);
                    (input, ok)
                }
                other => panic!("{other:?}"),
            })
            .collect()
    };
    // Chain without its grade and falls: both missing, blamed on `medium`.
    let given: Vec<_> = chain_item(&[])
        .into_iter()
        .filter(|(n, _)| *n != "chain_grade" && *n != "falls")
        .collect();
    assert_eq!(
        errs(&given),
        vec![("falls".into(), true), ("chain_grade".into(), true)]
    );
    // Wire-rope data with a chain is an error at the rope input.
    assert_eq!(
        errs(&chain_item(&[("fill_factor", "0.58")])),
        vec![("fill_factor".into(), true)]
    );
    // Chain data with the rope medium is an error at the chain input.
    let mut given = rope_item(&[("chain_size", "16 mm")]);
    given.retain(|(n, _)| *n != "medium");
    assert_eq!(errs(&given), vec![("chain_size".into(), true)]);
    let mut given = rope_item(&[("chain", "g8-16-hoist-chain")]);
    given.retain(|(n, _)| *n != "medium");
    assert_eq!(errs(&given), vec![("chain".into(), true)]);
    // A drive spring needs a hook mass.
    assert_eq!(
        errs(&chain_item(&[("drive_stiffness", "50 MN/m")])),
        vec![("drive_stiffness".into(), true)]
    );
}

// The two-degree model through the module: a soft drive lowers the model
// factor below the prescribed-drive one; a stiff drive and light hook
// reproduce it (within 0.2 %); a hook mass without a drive spring changes
// nothing.
#[test]
fn two_degree_model_end_to_end() {
    let single = output(&run(&rope_item(&[])).unwrap(), "model_dynamic_factor");
    let stiff = run(&rope_item(&[
        ("hook_mass", "1 kg"),
        ("drive_stiffness", "1822 MN/m"),
    ]))
    .unwrap();
    let stiff_f = output(&stiff, "model_dynamic_factor");
    assert!(close(stiff_f, single, 2e-3), "{stiff_f} vs {single}");
    assert!(stiff.notes.iter().any(|n| n.contains("Two-degree model")));
    let soft = output(
        &run(&rope_item(&[
            ("hook_mass", "50 kg"),
            ("drive_stiffness", "2 MN/m"),
        ]))
        .unwrap(),
        "model_dynamic_factor",
    );
    assert!(soft < single);
    let rigid = run(&rope_item(&[("hook_mass", "50 kg")])).unwrap();
    assert_eq!(output(&rigid, "model_dynamic_factor"), single);
    assert!(rigid.notes.iter().any(|n| n.contains("drive is rigid")));
}
