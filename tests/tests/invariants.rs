//! Module invariants as property tests, through the modules' public API
//! (`Module::declaration`, `Inputs::from_text`, `Module::compute`): energy
//! balances, and responses that must move one way when one input grows.
//! Each property is derived from the module's own method, not from a
//! published table; the modules' own tests check the published values.

use packwright_api::{Inputs, Module, Outcome};
use packwright_belt_pickup::BeltPickup;
use packwright_chain_payout::ChainPayout;
use packwright_hoist_loads::HoistLoads;
use packwright_hopper_outlet::HopperOutlet;
use proptest::prelude::*;

/// Computes `module` on inputs written as an item would write them.
fn compute(module: &dyn Module, given: &[(&str, String)]) -> Outcome {
    let pairs: Vec<(&str, &str)> = given.iter().map(|(n, t)| (*n, t.as_str())).collect();
    let inputs = Inputs::from_text(&module.declaration(), &pairs)
        .unwrap_or_else(|e| panic!("inputs {pairs:?}: {e}"));
    module
        .compute(&inputs)
        .unwrap_or_else(|e| panic!("inputs {pairs:?}: {e}"))
}

fn out(outcome: &Outcome, name: &str) -> f64 {
    let value = outcome
        .outputs
        .get(name)
        .unwrap_or_else(|| panic!("output `{name}` missing"))
        .value;
    assert!(value.is_finite(), "{name} = {value}");
    value
}

fn belt(flow: f64, v: f64, v0: f64, mu1: f64) -> Vec<(&'static str, String)> {
    vec![
        ("mass_flow", format!("{flow} t/h")),
        ("belt_speed", format!("{v} m/s")),
        ("feed_speed_along_belt", format!("{v0} m/s")),
        ("bulk_density", "1600 kg/m3".into()),
        ("belt_friction", format!("{mu1}")),
        ("skirt_friction", "0.5".into()),
        ("skirt_width", "1.0 m".into()),
    ]
}

fn hopper(extra: &[(&'static str, String)]) -> Vec<(&'static str, String)> {
    let mut given = vec![
        ("bulk_density", "1800 kg/m3".to_string()),
        ("particle_size", "5 mm".to_string()),
    ];
    given.extend(extra.iter().cloned());
    given
}

const HOISTING_CLASSES: [&str; 4] = ["HC1", "HC2", "HC3", "HC4"];
const DRIVE_CLASSES: [&str; 5] = ["HD1", "HD2", "HD3", "HD4", "HD5"];

fn en13001(class: &str, drive: &str, speed: f64) -> Vec<(&'static str, String)> {
    vec![
        ("hoisted_mass", "5 t".into()),
        ("basis", "en13001".into()),
        ("hoisting_class", class.into()),
        ("drive_class", drive.into()),
        ("hoisting_speed", format!("{speed} m/s")),
        ("creep_speed", format!("{} m/s", (speed / 4.0).min(0.05))),
    ]
}

fn pile(drop: f64, push: f64) -> Vec<(&'static str, String)> {
    vec![
        ("case", "pile".into()),
        ("mass_per_length", "5.7 kg/m".into()),
        ("drop_height", format!("{drop} m")),
        ("payout_length", format!("{} m", 2.0 * drop + 5.0)),
        ("pile_push", format!("{push}")),
        ("working_load_limit", "400 kN".into()),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    /// belt-pickup: the drive's work on the feed goes into kinetic energy or
    /// is lost to slip, whether the feed is slower or faster than the belt;
    /// with a feed from rest, half of it is lost.
    #[test]
    fn belt_pickup_energy_balance(
        flow in 10.0f64..10_000.0,
        v in 0.1f64..8.0,
        v0 in 0.0f64..10.0,
        mu1 in 0.2f64..1.2,
    ) {
        let o = compute(&BeltPickup, &belt(flow, v, v0, mu1));
        let p = out(&o, "acceleration_power");
        let kinetic = out(&o, "kinetic_power");
        let lost = out(&o, "dissipated_power");
        let scale = flow / 3.6 * (v + v0).powi(2);
        prop_assert!((p - (kinetic + lost)).abs() <= 1e-9 * scale, "{p} vs {kinetic} + {lost}");
        prop_assert!(lost >= 0.0);
        let from_rest = compute(&BeltPickup, &belt(flow, v, 0.0, mu1));
        let (k0, l0) = (out(&from_rest, "kinetic_power"), out(&from_rest, "dissipated_power"));
        prop_assert!((k0 - l0).abs() <= 1e-9 * k0, "{k0} vs {l0}");
    }

    /// belt-pickup: more flow or a faster belt needs more force; a faster
    /// belt needs a longer acceleration zone, a grippier belt a shorter one.
    #[test]
    fn belt_pickup_monotonic(
        flow in 10.0f64..8_000.0,
        more in 1.01f64..3.0,
        v in 0.5f64..6.0,
        v0 in 0.0f64..0.45,
        mu1 in 0.2f64..1.0,
    ) {
        let v0 = v0 * v;
        let base = compute(&BeltPickup, &belt(flow, v, v0, mu1));
        let more_flow = compute(&BeltPickup, &belt(flow * more, v, v0, mu1));
        let faster = compute(&BeltPickup, &belt(flow, v * more, v0, mu1));
        let grippier = compute(&BeltPickup, &belt(flow, v, v0, (mu1 * more).min(2.0)));
        let force = |o: &Outcome| out(o, "acceleration_force");
        let length = |o: &Outcome| out(o, "acceleration_length");
        prop_assert!(force(&more_flow) > force(&base));
        prop_assert!(force(&faster) > force(&base));
        prop_assert!(length(&faster) > length(&base));
        prop_assert!(length(&grippier) < length(&base));
        prop_assert!(out(&faster, "loading_power") > out(&base, "loading_power"));
    }

    /// hopper-outlet: a larger outlet discharges more, by every method and
    /// shape, and a denser solid discharges more mass.
    #[test]
    fn hopper_outlet_flow_grows_with_outlet_size(
        size in 0.05f64..1.5,
        more in 1.01f64..3.0,
        half_angle in 5.0f64..40.0,
    ) {
        let flow = |extra: Vec<(&'static str, String)>| {
            out(&compute(&HopperOutlet, &hopper(&extra)), "outlet_mass_flow")
        };
        let circular = |d: f64| flow(vec![("outlet_diameter", format!("{d} m"))]);
        prop_assert!(circular(size * more) > circular(size));
        let slot = |b: f64| flow(vec![
            ("outlet_shape", "slot".into()),
            ("outlet_width", format!("{b} m")),
            ("outlet_length", format!("{} m", 6.0 * size * more)),
        ]);
        prop_assert!(slot(size * more) > slot(size));
        let johanson = |d: f64| flow(vec![
            ("method", "johanson".into()),
            ("outlet_diameter", format!("{d} m")),
            ("hopper_half_angle", format!("{half_angle} deg")),
        ]);
        prop_assert!(johanson(size * more) > johanson(size));
        let denser = out(
            &compute(&HopperOutlet, &[
                ("bulk_density", "2400 kg/m3".to_string()),
                ("particle_size", "5 mm".to_string()),
                ("outlet_diameter", format!("{size} m")),
            ]),
            "outlet_mass_flow",
        );
        prop_assert!(denser > circular(size));
    }

    /// hoist-loads (en13001): the dynamic factor never falls as the
    /// hoisting speed rises, nor from one hoisting class to the next.
    #[test]
    fn hoist_dynamic_factor_non_decreasing_with_speed(
        speed in 0.01f64..2.0,
        more in 1.0f64..4.0,
        class in 0usize..4,
        drive in 0usize..5,
    ) {
        let (hc, hd) = (HOISTING_CLASSES[class], DRIVE_CLASSES[drive]);
        let factor = |hc: &str, s: f64| out(&compute(&HoistLoads, &en13001(hc, hd, s)), "dynamic_factor");
        let slow = factor(hc, speed);
        let fast = factor(hc, speed * more);
        prop_assert!(fast >= slow, "{hc} {hd}: {slow} at {speed} m/s, {fast} at {} m/s", speed * more);
        prop_assert!(slow >= 1.0);
        if class < 3 {
            let stiffer = factor(HOISTING_CLASSES[class + 1], speed);
            prop_assert!(stiffer >= slow, "{hc} -> next class at {speed} m/s");
        }
    }
}

proptest! {
    // The pile case integrates the run-out in time: fewer cases.
    #![proptest_config(ProptestConfig { cases: 16, ..ProptestConfig::default() })]

    /// chain-payout (pile): a longer drop gives a faster steady run-out.
    #[test]
    fn chain_steady_speed_grows_with_drop_height(
        drop in 1.0f64..40.0,
        more in 1.05f64..3.0,
        push in 0.0f64..0.3,
    ) {
        let speed = |h: f64| out(&compute(&ChainPayout, &pile(h, push)), "steady_speed");
        let low = speed(drop);
        let high = speed(drop * more);
        prop_assert!(high > low, "{low} m/s at {drop} m, {high} m/s at {} m", drop * more);
    }
}
