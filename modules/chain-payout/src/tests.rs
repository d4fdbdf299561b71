//! Tests of the module wrapper: the declaration, the mapping of inputs to
//! the physics and of results to outputs, checks and errors.

use super::*;
use packwright_api::{Measure, Status};

const GN: f64 = 9.806_65;

fn run(given: &[(&str, &str)]) -> Result<Outcome, CalcError> {
    let decl = ChainPayout.declaration();
    let inputs = Inputs::from_text(&decl, given).unwrap();
    ChainPayout.compute(&inputs)
}

fn errors(given: &[(&str, &str)]) -> Vec<CalcError> {
    let decl = ChainPayout.declaration();
    let inputs = Inputs::from_text(&decl, given).unwrap();
    ChainPayout.check_inputs(&inputs)
}

fn value(out: &Outcome, name: &str) -> f64 {
    let m: &Measure = out
        .outputs
        .get(name)
        .unwrap_or_else(|| panic!("no output `{name}`: {:?}", out.outputs.keys()));
    m.value
}

fn check<'a>(out: &'a Outcome, name: &str) -> &'a Check {
    out.checks
        .iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("no check `{name}`"))
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

fn all_finite(out: &Outcome) {
    for (name, m) in &out.outputs {
        assert!(m.value.is_finite(), "{name}");
    }
    for s in &out.series {
        assert!(s.rows.len() <= SERIES_ROWS);
        assert!(s.rows.iter().flatten().all(|x| x.is_finite()));
    }
}

#[test]
fn declaration_is_valid() {
    let decl = ChainPayout.declaration();
    assert_eq!(decl.validate(), Ok(()));
    // Every declared check and output name is unique and every input that
    // belongs to one case is declared.
    for name in PILE_ONLY.iter().chain(BRAKE_ONLY.iter()) {
        assert!(decl.input(name).is_some(), "{name}");
    }
}

#[test]
fn cayley_case_through_the_module() {
    // Cayley (1857), reference sheet §3.1, FROM MEMORY (H): with no push, no
    // friction and no overhang the chain falls with g/3 and v² = 2 g x/3;
    // with standard gravity the 2 m drop takes sqrt(6 × 2 / g_n) s.
    let out = run(&[
        ("case", "pile"),
        ("mass_per_length", "10 kg/m"),
        ("drop_height", "2 m"),
        ("payout_length", "2 m"),
        ("working_load_limit", "10 kN"),
    ])
    .unwrap();
    all_finite(&out);
    assert!(rel(value(&out, "payout_time"), (12.0 / GN).sqrt()) < 1e-9);
    assert!(rel(value(&out, "max_speed"), (2.0 * GN * 2.0 / 3.0).sqrt()) < 1e-9);
    // Energy lost at pickup is one third of λ g x²/2 (reference sheet §3.1).
    assert!(rel(value(&out, "pickup_energy"), 10.0 * GN * 4.0 / 6.0) < 1e-7);
    // Classical steady state α = β = 0: v = sqrt(g h), no rise.
    assert!(rel(value(&out, "steady_speed"), (GN * 2.0).sqrt()) < 1e-12);
    assert_eq!(value(&out, "rise_above_pile"), 0.0);
    assert_eq!(check(&out, "chain_runs_out").status, Status::Pass);
    assert_eq!(check(&out, "tension_within_wll").status, Status::Pass);
    assert_eq!(out.plots.len(), 2);
}

#[test]
fn fountain_case_through_the_module() {
    // Reference sheet §3.2 check (Biggins & Warner 2014, FROM MEMORY (M),
    // DERIVED) at g = 9.81: h1 = 1 m, α = 0.1, β = 0.2, λ = 0.05 kg/m gives
    // h2 = 0.142857 m, T0 = 0.630643 N, T_f = 0.140143 N. The module uses
    // g_n = 9.80665, so the tensions scale with g_n / 9.81; the rise does not.
    let out = run(&[
        ("case", "pile"),
        ("mass_per_length", "0.05 kg/m"),
        ("drop_height", "1 m"),
        ("pile_push", "0.1"),
        ("landing_push", "0.2"),
        ("payout_length", "30 m"),
        ("working_load_limit", "50 N"),
        ("clearance_above_pile", "0.1 m"),
    ])
    .unwrap();
    all_finite(&out);
    let scale = GN / 9.81;
    assert!(rel(value(&out, "rise_above_pile"), 0.142857) < 1e-5);
    assert!(rel(value(&out, "rise_to_drop_ratio"), 0.1 / 0.7) < 1e-12);
    assert!(rel(value(&out, "pickup_tension"), 0.630643 * scale) < 1e-5);
    assert!(rel(value(&out, "landing_tension"), 0.140143 * scale) < 1e-5);
    assert!(rel(value(&out, "steady_speed"), 3.74357 * scale.sqrt()) < 1e-5);
    // Steady dissipation λ g h v.
    let v = value(&out, "steady_speed");
    assert!(rel(value(&out, "dissipated_power"), 0.05 * GN * 1.0 * v) < 1e-12);
    assert!(out.outputs.contains_key("time_to_steady"));
    // The arc rises 0.143 m into 0.1 m of clearance: a failed check.
    let c = check(&out, "rise_within_clearance");
    assert_eq!(c.status, Status::Fail);
    assert!(c.explanation.contains("strike"));
}

#[test]
fn braked_let_go_through_the_module() {
    // Hand calculation as in brake::tests (DERIVED, reference sheet §3.4),
    // with g_n = 9.80665: M = 1000 kg, λ = 50 kg/m, brake at 10 m;
    //   F_b = 2 g_n (2000³ − 1000³) / (3 (2000² − 1500²)) = 26 151.0667 N
    //   stops at 20 m, stopping length 10 m, brake energy 261.511 kJ,
    //   v_a² = 2 g_n (1500³ − 1000³) / (3 × 50 × 1500²) = 138.0267 m²/s².
    // Chain U2 50 mm: breaking load 1373 kN (IACS UR W18 formula,
    // CONSISTENT); UR A3 80 % holding = 1098.4 kN (CONFIRMED).
    let out = run(&[
        ("case", "brake"),
        ("mass_per_length", "50 kg/m"),
        ("chain_grade", "U2"),
        ("chain_size", "50 mm"),
        ("end_mass", "1000 kg"),
        ("depth", "60 m"),
        ("brake_force", "26151.066666667 N"),
        ("brake_applied_at", "10 m"),
    ])
    .unwrap();
    all_finite(&out);
    let va2 = 2.0 * GN * (1500.0f64.powi(3) - 1e9) / (3.0 * 50.0 * 1500.0 * 1500.0);
    assert!(rel(value(&out, "speed_at_brake"), va2.sqrt()) < 1e-8);
    assert!(rel(value(&out, "stopping_length"), 10.0) < 1e-7);
    assert!(rel(value(&out, "stopped_at"), 20.0) < 1e-8);
    assert!(rel(value(&out, "brake_energy"), 261_510.666_67) < 1e-7);
    assert!(
        rel(
            value(&out, "peak_chain_tension"),
            26_151.066_667 + 50.0 * va2
        ) < 1e-8
    );
    assert!(rel(value(&out, "chain_breaking_load"), 1_373_000.0) < 1e-4);
    assert!(rel(value(&out, "brake_holding_requirement"), 1_098_400.0) < 1e-4);
    assert_eq!(check(&out, "chain_stops").status, Status::Pass);
    assert_eq!(
        check(&out, "brake_within_ur_a3_holding").status,
        Status::Pass
    );
    assert_eq!(
        check(&out, "tension_within_breaking_load").status,
        Status::Pass
    );
    // Speed against time, tension against time, speed against length with
    // the brake point and the sea bed drawn as reference lines.
    assert_eq!(out.plots.len(), 3);
    let by_length = &out.plots[2];
    let last = by_length.layers[0].points.last().unwrap();
    assert!(rel(last.0, 20.0) < 1e-8 && last.1 == 0.0);
    assert_eq!(by_length.layers[2].points[0].0, 60.0);
}

#[test]
fn a_brake_that_cannot_stop_is_a_failed_check_not_an_error() {
    let out = run(&[
        ("case", "brake"),
        ("mass_per_length", "50 kg/m"),
        ("breaking_load", "1373 kN"),
        ("end_mass", "3000 kg"),
        ("submerged", "true"),
        ("freeboard", "6 m"),
        ("depth", "30 m"),
        ("brake_force", "20 kN"),
        ("brake_applied_at", "10 m"),
        ("max_chain_speed", "5 m/s"),
    ])
    .unwrap();
    all_finite(&out);
    let c = check(&out, "chain_stops");
    assert_eq!(c.status, Status::Fail);
    assert!(c.explanation.contains("sea bed"), "{}", c.explanation);
    assert!(value(&out, "end_speed") > 0.0);
    assert!(!out.outputs.contains_key("stopping_length"));
    assert_eq!(check(&out, "speed_within_limit").status, Status::Fail);
}

#[test]
fn chain_stopper_lowers_the_holding_requirement_to_45_percent() {
    // IACS UR A3 (Rev.1 2019), CONFIRMED: 45 % with a chain stopper; U2
    // 50 mm -> 617.85 kN (reference sheet §3.4).
    let out = run(&[
        ("case", "brake"),
        ("mass_per_length", "50 kg/m"),
        ("chain_grade", "U2"),
        ("chain_size", "50 mm"),
        ("end_mass", "4000 kg"),
        ("payout_length", "40 m"),
        ("brake_force", "800 kN"),
        ("brake_applied_at", "5 m"),
        ("chain_stopper", "true"),
    ])
    .unwrap();
    assert!(rel(value(&out, "brake_holding_requirement"), 617_850.0) < 1e-4);
    let c = check(&out, "brake_within_ur_a3_holding");
    assert_eq!(c.status, Status::Fail);
}

#[test]
fn grade_8_working_load_limit_comes_from_the_table() {
    // EN 818-2 (CONSISTENT, FROM MEMORY (H)), reference sheet §3.5: 13 mm
    // grade 8 -> WLL 5.3 t, BF 212.4 kN.
    let out = run(&[
        ("case", "pile"),
        ("mass_per_length", "3.8 kg/m"),
        ("chain_grade", "G8"),
        ("chain_size", "13 mm"),
        ("drop_height", "4 m"),
        ("payout_length", "15 m"),
        ("initial_overhang", "1 m"),
    ])
    .unwrap();
    all_finite(&out);
    assert!(rel(value(&out, "chain_working_load_limit"), 5300.0 * GN) < 1e-12);
    assert!((value(&out, "chain_breaking_load") / 1e3 - 212.4).abs() < 0.05);
}

#[test]
fn a_chain_that_cannot_start_is_a_failed_check() {
    let out = run(&[
        ("case", "pile"),
        ("mass_per_length", "20 kg/m"),
        ("working_load_limit", "50 kN"),
        ("drop_height", "3 m"),
        ("rim_height", "0.8 m"),
        ("rim_friction", "0.4"),
        ("initial_overhang", "1 m"),
        ("payout_length", "20 m"),
    ])
    .unwrap();
    all_finite(&out);
    let c = check(&out, "chain_runs_out");
    assert_eq!(c.status, Status::Fail);
    assert!(c.explanation.contains("does not start"));
    assert!(!out.outputs.contains_key("payout_time"));
}

#[test]
fn case_inputs_are_checked_with_spans() {
    let e = errors(&[("case", "pile"), ("mass_per_length", "10 kg/m")]);
    let names: Vec<&str> = e
        .iter()
        .filter_map(|e| match e {
            CalcError::Input { input, span, .. } => {
                assert!(span.is_some());
                Some(input.as_str())
            }
            _ => None,
        })
        .collect();
    assert!(names.contains(&"drop_height"));
    assert!(names.contains(&"payout_length"));
    assert!(names.contains(&"working_load_limit"));

    let e = errors(&[
        ("case", "brake"),
        ("mass_per_length", "10 kg/m"),
        ("end_mass", "500 kg"),
        ("brake_force", "20 kN"),
        ("brake_applied_at", "5 m"),
        ("breaking_load", "300 kN"),
    ]);
    assert_eq!(e.len(), 1);
    assert!(matches!(&e[0], CalcError::Input { input, .. } if input == "depth"));

    // A grade 8 size that is not in the EN 818-2 table, without a WLL.
    let e = errors(&[
        ("case", "pile"),
        ("mass_per_length", "2 kg/m"),
        ("chain_grade", "G8"),
        ("chain_size", "9 mm"),
        ("drop_height", "2 m"),
        ("payout_length", "5 m"),
    ]);
    assert_eq!(e.len(), 1);
    match &e[0] {
        CalcError::Input { message, .. } => assert!(message.contains("EN 818-2")),
        other => panic!("{other:?}"),
    }

    // compute refuses the same inputs with the first error.
    assert!(run(&[("case", "brake"), ("mass_per_length", "10 kg/m")]).is_err());
}

#[test]
fn unused_inputs_of_the_other_case_are_noted() {
    let out = run(&[
        ("case", "pile"),
        ("mass_per_length", "10 kg/m"),
        ("working_load_limit", "10 kN"),
        ("drop_height", "2 m"),
        ("payout_length", "4 m"),
        ("brake_force", "10 kN"),
    ])
    .unwrap();
    assert!(out.notes.iter().any(|n| n.contains("brake_force")));
}

#[test]
fn brake_applied_at_a_speed_matches_the_hand_calculation() {
    // Hand calculation (DERIVED from the momentum equation of reference
    // sheet §3.4). Chain and anchor submerged from the wheel down (freeboard
    // 0), no locker pickup, no drag, so (M + λx) dv/dt = k g_n (M + λx) − F_b
    // with k = 1 − 1025/7850 = 0.869427 (Archimedes):
    //   free run: a free fall at g_eff = k g_n = 0.869427 × 9.80665
    //             = 8.526164 m/s²;
    //   set speed v_b = 5 m/s, reached after t_b = 5 / 8.526164 = 0.586430 s
    //             at x_b = 5² / (2 × 8.526164) = 1.466076 m;
    //   braking:  with u = v²/2, du/dx = g_eff − F_b/(M + λx), so
    //             u = v_b²/2 + g_eff (x − x_b) − (F_b/λ) ln[(M + λx)/(M + λx_b)];
    //   M = 1000 kg, λ = 50 kg/m; choose the stop 8 m after x_b:
    //             m_b = 1000 + 50 × 1.466076 = 1073.3038 kg,
    //             m_s = m_b + 50 × 8 = 1473.3038 kg,
    //             ln(m_s/m_b) = ln(1.3726811) = 0.3167658,
    //             F_b = 50 × (12.5 + 8 × 8.526164) / 0.3167658
    //                 = 50 × 80.70931 / 0.3167658 = 12 739.587 N;
    //   brake energy F_b × 8 m = 101.917 kJ; the stopped load then weighs
    //   8.526164 × 1473.3038 = 12 561.7 N < F_b, so the brake holds it.
    let k = 1.0 - 1025.0 / 7850.0;
    let g_eff = k * GN;
    let x_b = 25.0 / (2.0 * g_eff);
    let (m_b, m_s) = (1000.0 + 50.0 * x_b, 1000.0 + 50.0 * (x_b + 8.0));
    let fb = 50.0 * (12.5 + 8.0 * g_eff) / (m_s / m_b).ln();
    assert!((x_b - 1.466_076).abs() < 1e-6);
    assert!((fb - 12_739.587).abs() < 1e-3);
    let fb_text = format!("{fb} N");
    let out = run(&[
        ("case", "brake"),
        ("mass_per_length", "50 kg/m"),
        ("breaking_load", "900 kN"),
        ("end_mass", "1000 kg"),
        ("submerged", "true"),
        ("locker_pickup", "false"),
        ("depth", "60 m"),
        ("brake_force", &fb_text),
        ("brake_applied_at_speed", "5 m/s"),
    ])
    .unwrap();
    all_finite(&out);
    assert!(rel(value(&out, "speed_at_brake"), 5.0) < 1e-9);
    assert!(rel(value(&out, "stopping_length"), 8.0) < 1e-7);
    assert!(rel(value(&out, "stopped_at"), x_b + 8.0) < 1e-8);
    assert!(rel(value(&out, "brake_energy"), fb * 8.0) < 1e-7);
    assert!(rel(value(&out, "peak_brake_load"), fb) < 1e-12);
    assert_eq!(check(&out, "chain_stops").status, Status::Pass);
    // The note states the instant of application, t_b = 0.59 s.
    assert!(
        out.notes.iter().any(|n| n.contains("0.59 s after release")),
        "{:?}",
        out.notes
    );
}

#[test]
fn the_speed_form_agrees_with_the_length_form() {
    // Applying the brake at the paid-out length where the speed form applied
    // it must give the same stopping length (the run is deterministic), here
    // with locker pickup, drag and a freeboard above the water.
    let common: [(&str, &str); 9] = [
        ("case", "brake"),
        ("mass_per_length", "50 kg/m"),
        ("chain_grade", "U2"),
        ("chain_size", "50 mm"),
        ("end_mass", "3000 kg"),
        ("submerged", "true"),
        ("freeboard", "5 m"),
        ("depth", "70 m"),
        ("drag_factor", "40 kg/m"),
    ];
    let with = |extra: &[(&str, &str)]| {
        let mut given = common.to_vec();
        given.extend_from_slice(extra);
        run(&given).unwrap()
    };
    let by_speed = with(&[
        ("brake_force", "90 kN"),
        ("brake_applied_at_speed", "7 m/s"),
    ]);
    all_finite(&by_speed);
    assert_eq!(check(&by_speed, "chain_stops").status, Status::Pass);
    assert!(rel(value(&by_speed, "speed_at_brake"), 7.0) < 1e-9);
    let x_b = value(&by_speed, "stopped_at") - value(&by_speed, "stopping_length");
    assert!(x_b > 0.0);
    let at = format!("{x_b} m");
    let by_length = with(&[("brake_force", "90 kN"), ("brake_applied_at", &at)]);
    assert_eq!(check(&by_length, "chain_stops").status, Status::Pass);
    assert!(rel(value(&by_length, "speed_at_brake"), 7.0) < 1e-8);
    assert!(
        rel(
            value(&by_length, "stopping_length"),
            value(&by_speed, "stopping_length")
        ) < 1e-7
    );
    assert!(
        rel(
            value(&by_length, "brake_energy"),
            value(&by_speed, "brake_energy")
        ) < 1e-7
    );
}

#[test]
fn a_brake_speed_never_reached_is_a_failed_check() {
    // Heavy drag holds the free run below sqrt((M + λx) g_n / c) =
    // sqrt(3000 × 9.80665 / 2000) = 3.84 m/s over the 20 m run (DERIVED), so
    // the 6 m/s set speed is never reached.
    let out = run(&[
        ("case", "brake"),
        ("mass_per_length", "50 kg/m"),
        ("breaking_load", "900 kN"),
        ("end_mass", "2000 kg"),
        ("locker_pickup", "false"),
        ("drag_factor", "2000 kg/m"),
        ("depth", "20 m"),
        ("brake_force", "100 kN"),
        ("brake_applied_at_speed", "6 m/s"),
    ])
    .unwrap();
    all_finite(&out);
    let c = check(&out, "chain_stops");
    assert_eq!(c.status, Status::Fail);
    assert!(c.explanation.contains("never reaches"), "{}", c.explanation);
    assert!(!out.outputs.contains_key("speed_at_brake"));
    assert!(value(&out, "end_speed") < (3000.0 * GN / 2000.0f64).sqrt());
}

#[test]
fn the_brake_point_is_given_once_as_a_length_or_a_speed() {
    let decl = ChainPayout.declaration();
    let base = [
        ("case", "brake"),
        ("mass_per_length", "10 kg/m"),
        ("end_mass", "500 kg"),
        ("brake_force", "20 kN"),
        ("depth", "30 m"),
        ("breaking_load", "300 kN"),
    ];
    /// Extra inputs, the input the error names and a word of its message.
    type Case<'a> = (&'a [(&'a str, &'a str)], &'a str, &'a str);
    let both: &[(&str, &str)] = &[
        ("brake_applied_at", "5 m"),
        ("brake_applied_at_speed", "3 m/s"),
    ];
    let cases: [Case<'_>; 2] = [
        (&[], "brake_applied_at", "neither"),
        (both, "brake_applied_at_speed", "both"),
    ];
    for (extra, name, word) in cases {
        let mut given = base.to_vec();
        given.extend_from_slice(extra);
        let inputs = Inputs::from_text(&decl, &given).unwrap();
        let e = ChainPayout.check_inputs(&inputs);
        assert_eq!(e.len(), 1, "{e:?}");
        match &e[0] {
            CalcError::Input {
                input,
                span,
                message,
                expected,
            } => {
                assert_eq!(input, name);
                assert!(span.is_some());
                assert_eq!(span, &inputs.span_of("case"));
                assert!(message.contains(word), "{message}");
                assert!(expected.contains("brake_applied_at: 25 m"), "{expected}");
                assert!(
                    expected.contains("brake_applied_at_speed: 4 m/s"),
                    "{expected}"
                );
            }
            other => panic!("{other:?}"),
        }
        // compute refuses the same inputs with that error.
        assert!(matches!(
            ChainPayout.compute(&inputs),
            Err(CalcError::Input { input, .. }) if input == name
        ));
    }
}
