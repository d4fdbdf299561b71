//! Tests of the belt-pickup module against the published formulas and check
//! values of the shared reference sheet (shared/reference.md §1, beside the repository), each
//! assertion naming its source and carrying that sheet's label.

use super::*;
use packwright_api::units::{HORSEPOWER, POUND_FORCE};
use packwright_api::{InputKind, Relation, Status};
use proptest::prelude::*;

/// The §1.1 / §1.3 check case: I_v = 0.27778 m³/s at ρ = 1000 kg/m³
/// (ṁ = 1000 t/h), v = 4 m/s, μ1 = μ2 = 0.6, b1 = 0.8 m.
const CHECK_CASE: &[(&str, &str)] = &[
    ("mass_flow", "1000 t/h"),
    ("belt_speed", "4 m/s"),
    ("bulk_density", "1000 kg/m3"),
    ("belt_friction", "0.6"),
    ("skirt_friction", "0.6"),
    ("skirt_width", "0.8 m"),
];

fn run(extra: &[(&str, &str)]) -> Outcome {
    let decl = BeltPickup.declaration();
    let mut given: Vec<(&str, &str)> = CHECK_CASE
        .iter()
        .copied()
        .filter(|(name, _)| !extra.iter().any(|(n, _)| n == name))
        .collect();
    given.extend_from_slice(extra);
    let inputs = Inputs::from_text(&decl, &given).expect("test inputs parse");
    BeltPickup.compute(&inputs).expect("computes")
}

fn out(outcome: &Outcome, name: &str) -> f64 {
    outcome
        .outputs
        .get(name)
        .unwrap_or_else(|| panic!("output `{name}` missing"))
        .value
}

fn check<'a>(outcome: &'a Outcome, name: &str) -> &'a Check {
    outcome
        .checks
        .iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("check `{name}` missing"))
}

#[track_caller]
fn assert_rel(actual: f64, expected: f64, tol: f64) {
    let err = ((actual - expected) / expected).abs();
    assert!(
        err <= tol,
        "{actual} differs from {expected} by {err:.3e} (tolerance {tol:.1e})"
    );
}

fn all_finite(outcome: &Outcome) -> bool {
    outcome.outputs.values().all(|m| m.value.is_finite())
        && outcome
            .series
            .iter()
            .all(|s| s.rows.iter().flatten().all(|x| x.is_finite()))
        && outcome
            .plots
            .iter()
            .flat_map(|p| &p.layers)
            .flat_map(|l| &l.points)
            .all(|(x, y)| x.is_finite() && y.is_finite())
}

#[test]
fn declaration_is_valid() {
    let decl = BeltPickup.declaration();
    assert_eq!(decl.validate(), Ok(()));
    assert_eq!(decl.name, "belt-pickup");
    assert_eq!(decl.version, "1.0.0");
    let material = decl.input("material").expect("material input");
    assert_eq!(
        material.kind,
        InputKind::Material {
            material_kind: "bulk".into()
        }
    );
    let key: Vec<&str> = decl
        .outputs
        .iter()
        .filter(|o| o.key)
        .map(|o| o.name.as_str())
        .collect();
    assert_eq!(key, ["acceleration_force"]);
    assert!(decl
        .criterion("max_acceleration_length")
        .unwrap()
        .default
        .is_none());
}

#[test]
fn momentum_and_energy_table_v0_zero() {
    // reference.md §1.1 table, row v0 = 0 (CONFIRMED for v0 = 0: Halliday &
    // Resnick, Physics; Symon, Mechanics, 3rd ed.). Table rounded to 0.01.
    let o = run(&[]);
    assert_rel(out(&o, "acceleration_force"), 1111.11, 1e-5);
    assert_rel(out(&o, "acceleration_power"), 4444.44, 1e-5);
    assert_rel(out(&o, "kinetic_power"), 2222.22, 1e-5);
    assert_rel(out(&o, "dissipated_power"), 2222.22, 1e-5);
}

#[test]
fn momentum_and_energy_table_v0_one_and_a_half() {
    // reference.md §1.1 table, row v0 = 1.5 m/s (DERIVED from the same
    // balance). Table rounded to 0.01.
    let o = run(&[("feed_speed_along_belt", "1.5 m/s")]);
    assert_rel(out(&o, "acceleration_force"), 694.44, 1e-5);
    assert_rel(out(&o, "acceleration_power"), 2777.78, 1e-5);
    assert_rel(out(&o, "kinetic_power"), 1909.72, 1e-5);
    assert_rel(out(&o, "dissipated_power"), 868.06, 1e-5);
}

#[test]
fn textbook_sand_on_a_belt() {
    // Halliday & Resnick, Physics; Symon, Mechanics, 3rd ed. (CONFIRMED,
    // reference.md §1.1): 5.10 kg/s onto a belt at 0.600 m/s needs 3.06 N
    // and 1.836 W, of which 0.918 W becomes kinetic energy.
    let o = run(&[("mass_flow", "5.10 kg/s"), ("belt_speed", "0.6 m/s")]);
    assert_rel(out(&o, "acceleration_force"), 3.06, 1e-4);
    assert_rel(out(&o, "acceleration_power"), 1.836, 1e-4);
    assert_rel(out(&o, "kinetic_power"), 0.918, 1e-4);
    assert_rel(out(&o, "dissipated_power"), 0.918, 1e-4);
}

#[test]
fn iso_5048_acceleration_force_length_and_skirt_friction() {
    // ISO 5048:1989 clause 4 F_bA, l_b,min and F_f, FROM MEMORY (M-H),
    // check values of reference.md §1.3 (g = 9.81 m/s², I_v = 0.27778 m³/s,
    // so the table's own rounding of I_v allows 2e-5).
    let o = run(&[]);
    assert_rel(out(&o, "acceleration_force"), 1111.11, 1e-5);
    assert_rel(out(&o, "acceleration_length"), 1.35916, 1e-5);
    assert_rel(out(&o, "skirt_friction_force"), 241.13, 1e-4);
    assert_rel(out(&o, "loading_resistance"), 1111.11 + 241.13, 1e-4);
    assert_rel(out(&o, "loading_power"), (1111.11 + 241.13) * 4.0, 1e-4);

    let o = run(&[("feed_speed_along_belt", "1.5 m/s")]);
    assert_rel(out(&o, "acceleration_force"), 694.44, 1e-5);
    assert_rel(out(&o, "acceleration_length"), 1.16803, 1e-5);
    assert_rel(out(&o, "skirt_friction_force"), 109.60, 1e-4);
}

#[test]
fn iso_5048_skirt_friction_beyond_the_zone_per_metre() {
    // ISO 5048:1989 F_gl = μ2 I_v² ρ g l / (v² b1²), FROM MEMORY (M-H):
    // reference.md §1.3 gives 44.352 N per metre for the check case. The same
    // function with the mean speed set to belt speed must give it (DERIVED
    // structure: F = μ2 ρ g h² l).
    let f = skirt_friction(
        0.6,
        si(277.778),
        si(1000.0),
        si(9.81),
        si(1.0),
        si(4.0),
        si(0.8),
    );
    assert_rel(f.to_si(), 44.352, 1e-4);
}

#[test]
fn cema_accelerating_tension_in_us_units() {
    // CEMA, Belt Conveyors for Bulk Materials, 7th ed., ch. 6:
    // T_am = 2.8755e-4 Q (V - V_o) lbf, Q in stph, V in fpm. FROM MEMORY (H),
    // reference.md §1.2 and §5 row 3: 1102.311 stph at 787.402 fpm -> 249.58 lbf.
    let o = run(&[
        ("mass_flow", "1102.311 stph"),
        ("belt_speed", "787.402 fpm"),
    ]);
    let t_am_lbf = out(&o, "acceleration_force") / POUND_FORCE;
    // CEMA's coefficient uses g = 32.2 ft/s² where the exact pound-force uses
    // 32.174 ft/s²: the 0.08 % that reference.md §1.2 explains.
    assert_rel(t_am_lbf, 2.8755e-4 * 1102.311 * 787.402, 1e-3);
    assert_rel(t_am_lbf, 249.58, 1e-3);
    // With the exact gravity the coefficient is 2000/3600/32.174049/60 (DERIVED).
    let exact = 2000.0 / 3600.0 / (9.80665 / 0.3048) / 60.0;
    assert_rel(t_am_lbf, exact * 1102.311 * 787.402, 1e-9);
    // Its share of drive power, hp = T V / 33000 (CEMA, confirmed relation):
    // 5.955 hp in reference.md §1.2, again within CEMA's 32.2 rounding.
    let hp = out(&o, "acceleration_power") / HORSEPOWER;
    assert_rel(hp, 249.58 * 787.40 / 33000.0, 1e-3);
}

#[test]
fn half_the_energy_is_lost_when_fed_from_rest() {
    // Halliday & Resnick, Physics (CONFIRMED, reference.md §1.1): with v0 = 0
    // the drive's work splits exactly in half between kinetic energy and slip.
    for (flow, speed) in [
        ("1000 t/h", "4 m/s"),
        ("7500 t/h", "5.2 m/s"),
        ("3 kg/s", "0.3 m/s"),
    ] {
        let o = run(&[("mass_flow", flow), ("belt_speed", speed)]);
        let p = out(&o, "acceleration_power");
        assert_rel(out(&o, "kinetic_power"), p / 2.0, 1e-12);
        assert_rel(out(&o, "dissipated_power"), p / 2.0, 1e-12);
    }
}

#[test]
fn climbing_belt_lengthens_the_zone() {
    // Block on an incline (DERIVED): a = g (μ1 cos δ − sin δ).
    let o = run(&[("belt_slope", "12 deg"), ("feed_speed_along_belt", "1 m/s")]);
    let d = 12f64.to_radians();
    let a = 9.81 * (0.6 * d.cos() - d.sin());
    assert_rel(
        out(&o, "acceleration_length"),
        (16.0 - 1.0) / (2.0 * a),
        1e-12,
    );
    // The momentum term does not depend on the slope.
    assert_rel(out(&o, "acceleration_force"), 277.7778 * 3.0, 1e-6);
    assert_eq!(check(&o, CHECK_CARRIED).status, Status::Pass);
    assert!(o.notes.iter().any(|n| n.contains("climbs at 12.0 deg")));
}

#[test]
fn material_that_cannot_be_accelerated_fails_plainly() {
    // atan 0.6 = 30.96 deg: on a 35 deg climb friction loses to gravity.
    let o = run(&[("belt_slope", "35 deg"), ("feed_speed_normal", "3 m/s")]);
    let c = check(&o, CHECK_CARRIED);
    assert_eq!(c.status, Status::Fail);
    assert_eq!(c.relation, Relation::Condition);
    assert!(
        c.explanation.contains("cannot accelerate"),
        "{}",
        c.explanation
    );
    assert!(c.explanation.contains("30.96") || c.explanation.contains("31.0"));
    let names: Vec<&str> = o.outputs.keys().map(String::as_str).collect();
    assert_eq!(names, ["impact_force"]);
    assert_rel(out(&o, "impact_force"), 277.7778 * 3.0, 1e-6);
    assert!(all_finite(&o));
    assert!(o.plots.is_empty());
    // The engine leaves out only outputs declared optional.
    let decl = BeltPickup.declaration();
    for spec in &decl.outputs {
        assert!(spec.optional || o.outputs.contains_key(&spec.name));
    }

    // Descending steeper than the friction angle: the feed runs away.
    let o = run(&[("belt_slope", "-33 deg")]);
    let c = check(&o, CHECK_CARRIED);
    assert_eq!(c.status, Status::Fail);
    assert!(c.explanation.contains("cannot hold"), "{}", c.explanation);
    assert!(all_finite(&o));
    assert!(!o.outputs.contains_key("acceleration_length"));
}

#[test]
fn feed_faster_than_belt_is_braked() {
    // v0 > v: the belt brakes the feed (DERIVED from the §1.1 balance):
    // F = ṁ (v − v0) < 0, l = |v² − v0²| / (2 g μ1) on a horizontal belt.
    let o = run(&[("belt_speed", "2 m/s"), ("feed_speed_along_belt", "3 m/s")]);
    let m = 1000.0 / 3.6;
    assert_rel(out(&o, "acceleration_force"), -m, 1e-12);
    assert_rel(out(&o, "acceleration_power"), -2.0 * m, 1e-12);
    assert_rel(out(&o, "kinetic_power"), 0.5 * m * (4.0 - 9.0), 1e-12);
    assert_rel(out(&o, "dissipated_power"), 0.5 * m, 1e-12);
    assert_rel(
        out(&o, "acceleration_length"),
        5.0 / (2.0 * 9.81 * 0.6),
        1e-12,
    );
    assert!(out(&o, "skirt_friction_force") > 0.0);
    assert!(o.notes.iter().any(|n| n.contains("brakes it")));
    assert!(all_finite(&o));

    // On a climb, friction and slope both slow the feed: a = g (μ1 cos δ + sin δ).
    let o = run(&[
        ("belt_speed", "2 m/s"),
        ("feed_speed_along_belt", "3 m/s"),
        ("belt_slope", "10 deg"),
    ]);
    let d = 10f64.to_radians();
    let a = 9.81 * (0.6 * d.cos() + d.sin());
    assert_rel(out(&o, "acceleration_length"), 5.0 / (2.0 * a), 1e-12);

    // The speed profile falls from v0 to v and then stays at v.
    let layer = &o.plots[0].layers[0];
    assert_rel(layer.points[0].1, 3.0, 1e-12);
    assert!(layer.points.windows(2).all(|w| w[1].1 <= w[0].1 + 1e-12));
    assert_rel(layer.points.last().unwrap().1, 2.0, 1e-12);
}

#[test]
fn feed_at_belt_speed_needs_nothing() {
    let o = run(&[("feed_speed_along_belt", "4 m/s"), ("skirt_length", "2 m")]);
    assert_eq!(out(&o, "acceleration_force"), 0.0);
    assert_eq!(out(&o, "acceleration_length"), 0.0);
    assert_eq!(out(&o, "skirt_friction_force"), 0.0);
    assert_eq!(check(&o, CHECK_SKIRT).status, Status::Pass);
    assert!(all_finite(&o));
}

#[test]
fn skirt_and_limit_checks() {
    // l_b = 1.35916 m for the check case.
    let o = run(&[
        ("skirt_length", "1.2 m"),
        ("max_acceleration_length", "1.5 m"),
    ]);
    let skirt = check(&o, CHECK_SKIRT);
    assert_eq!(skirt.status, Status::Fail);
    assert_eq!(skirt.relation, Relation::AtMost);
    assert_rel(skirt.value.unwrap().value, 1.35916, 1e-5);
    assert_rel(skirt.limit.unwrap().value, 1.2, 1e-12);
    assert!(skirt.explanation.contains("spill"), "{}", skirt.explanation);
    assert_eq!(check(&o, CHECK_LIMIT).status, Status::Pass);

    let o = run(&[
        ("skirt_length", "3 m"),
        ("max_acceleration_length", "1.3 m"),
    ]);
    assert_eq!(check(&o, CHECK_SKIRT).status, Status::Pass);
    assert_eq!(check(&o, CHECK_LIMIT).status, Status::Fail);
    assert!(o.notes.iter().any(|n| n.contains("F_gl")));

    // Neither given: no skirt or limit check, and a note says so.
    let o = run(&[]);
    assert!(o.checks.iter().all(|c| c.name == CHECK_CARRIED));
    assert!(o
        .notes
        .iter()
        .any(|n| n.contains("skirt_length is not given")));
}

#[test]
fn speed_profile_plot() {
    let o = run(&[
        ("feed_speed_along_belt", "1 m/s"),
        ("skirt_length", "2.5 m"),
    ]);
    assert_eq!(o.plots.len(), 1);
    let plot = &o.plots[0];
    assert_eq!(
        plot.x,
        Axis::new("distance from the feed point", Dimension::Length)
    );
    assert_eq!(
        plot.y,
        Axis::new("material speed along the belt", Dimension::Velocity)
    );
    let styles: Vec<LayerStyle> = plot.layers.iter().map(|l| l.style).collect();
    assert_eq!(
        styles,
        [
            LayerStyle::Line,
            LayerStyle::Reference,
            LayerStyle::Points,
            LayerStyle::Reference
        ]
    );
    let l_b = out(&o, "acceleration_length");
    let a = 9.81 * 0.6;
    let material = &plot.layers[0].points;
    assert_eq!(material[0], (0.0, 1.0));
    for &(s, u) in material {
        let expected = if s < l_b {
            (1.0 + 2.0 * a * s).sqrt()
        } else {
            4.0
        };
        assert_rel(u, expected, 1e-9);
        assert!(u <= 4.0 + 1e-12);
    }
    assert!(material.iter().any(|&(s, _)| (s - l_b).abs() < 1e-12));
    assert!(material.last().unwrap().0 > 2.5);
    // The skirt end is drawn where the skirts end.
    assert!(plot.layers[3].points.iter().all(|&(x, _)| x == 2.5));
    // The series carries the same profile, within the row limit.
    assert_eq!(o.series[0].rows.len(), material.len());
    assert!(o.series[0].rows.len() <= 200);
}

#[test]
fn missing_and_out_of_range_inputs_are_refused() {
    let decl = BeltPickup.declaration();
    let given: Vec<(&str, &str)> = CHECK_CASE
        .iter()
        .copied()
        .filter(|(n, _)| *n != "bulk_density")
        .collect();
    let inputs = Inputs::from_text(&decl, &given).unwrap();
    match BeltPickup.compute(&inputs) {
        Err(CalcError::Input { input, .. }) => assert_eq!(input, "bulk_density"),
        other => panic!("expected a missing-input error, got {other:?}"),
    }
    let mut bad = CHECK_CASE.to_vec();
    bad.push(("feed_speed_along_belt", "-1 m/s"));
    assert!(Inputs::from_text(&decl, &bad).is_err());
    let mut bad = CHECK_CASE.to_vec();
    bad.push(("belt_slope", "95 deg"));
    assert!(Inputs::from_text(&decl, &bad).is_err());
}

proptest! {
    /// acceleration_power = kinetic_power + dissipated_power for any feed,
    /// including a feed faster than the belt (DERIVED from reference.md §1.1).
    #[test]
    fn energy_balance_of_the_physics(
        m in 0.01f64..10_000.0,
        v in 0.01f64..12.0,
        v0 in 0.0f64..15.0,
    ) {
        let (m, v, v0): (MassRate, Velocity, Velocity) = (si(m), si(v), si(v0));
        let p = acceleration_power(m, v, v0).to_si();
        let sum = (kinetic_power(m, v, v0) + dissipated_power(m, v, v0)).to_si();
        let scale = m.to_si() * (v.to_si() + v0.to_si()).powi(2);
        prop_assert!((p - sum).abs() <= 1e-12 * scale);
        prop_assert!(dissipated_power(m, v, v0).to_si() >= 0.0);
    }

    /// The same balance through the module, for any inputs it accepts; and
    /// whatever the inputs, nothing non-finite comes out and a failed
    /// carry check leaves out exactly the outputs that cannot exist.
    #[test]
    fn module_energy_balance_and_finiteness(
        flow in 1.0f64..12_000.0,
        v in 0.05f64..10.0,
        v0 in 0.0f64..12.0,
        v_n in 0.0f64..10.0,
        slope in -60.0f64..60.0,
        rho in 300.0f64..4000.0,
        mu1 in 0.05f64..1.5,
        mu2 in 0.0f64..1.5,
        b1 in 0.2f64..2.5,
        skirt in 0.1f64..20.0,
    ) {
        let texts = [
            format!("{flow} t/h"), format!("{v} m/s"), format!("{v0} m/s"),
            format!("{v_n} m/s"), format!("{slope} deg"), format!("{rho} kg/m3"),
            format!("{mu1}"), format!("{mu2}"), format!("{b1} m"), format!("{skirt} m"),
        ];
        let names = [
            "mass_flow", "belt_speed", "feed_speed_along_belt", "feed_speed_normal",
            "belt_slope", "bulk_density", "belt_friction", "skirt_friction",
            "skirt_width", "skirt_length",
        ];
        let given: Vec<(&str, &str)> =
            names.iter().copied().zip(texts.iter().map(String::as_str)).collect();
        let decl = BeltPickup.declaration();
        let inputs = Inputs::from_text(&decl, &given).unwrap();
        let o = BeltPickup.compute(&inputs).unwrap();
        prop_assert!(all_finite(&o));
        if check(&o, CHECK_CARRIED).status == Status::Pass {
            let p = out(&o, "acceleration_power");
            let sum = out(&o, "kinetic_power") + out(&o, "dissipated_power");
            let m = flow / 3.6;
            prop_assert!((p - sum).abs() <= 1e-12 * m * (v + v0).powi(2));
            prop_assert!(out(&o, "acceleration_length") >= 0.0);
            prop_assert!(out(&o, "skirt_friction_force") >= 0.0);
        } else {
            prop_assert_eq!(o.outputs.len(), 1);
            prop_assert!(o.outputs.contains_key("impact_force"));
        }
    }
}
