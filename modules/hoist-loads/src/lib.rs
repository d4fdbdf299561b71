//! The `hoist-loads` calculation module: the dynamic factor a hoist load is
//! designed to by a named basis (EN 13001-2 / ISO 8686-1, FEM 1.001, CMAA
//! Specification 70, marine lifting guidelines), the design hoist load, the
//! rope's safety factor, and the rope-and-mass model behind the factors:
//! the stiffness of wire rope or grade 8 lifting chain, a simulated lift-off
//! of a grounded load (hook drive prescribed, or the hook as a second mass on
//! a drive spring), and the closed forms for lift-off at full speed and for a
//! load dropping onto a slack rope.
//!
//! The crate owns the physics ([`factors`], [`rope`], [`chain`], [`sim`]) and the
//! mapping of an item's inputs onto it ([`HoistLoads`]). It depends on the
//! plug-in contract `packwright-api` only.

pub mod chain;
pub mod factors;
pub mod rope;
pub mod sim;

use factors::{DriveClass, FemCraneFamily, HoistingClass, LiftLocation, ReleaseRate};
use packwright_api::prelude::*;
use packwright_api::{Axis, LayerStyle};

/// The hoist-loads module (unit struct registered by the binary).
pub struct HoistLoads;

const BASES: [&str; 4] = ["en13001", "fem1001", "cmaa70", "offshore"];
const CRANE_TYPES: [&str; 5] = ["overhead", "gantry", "jib", "bucket", "magnet"];
/// Inputs that switch on the rope-and-mass model; with any of them, all are needed.
const ROPE_MODEL: [&str; 5] = [
    "falls",
    "rope_diameter",
    "fill_factor",
    "rope_modulus",
    "rope_length",
];

/// The dynamic-factor basis with the parameters it needs, read from inputs.
#[derive(Debug, Clone, Copy)]
enum Basis {
    En13001 {
        class: HoistingClass,
        drive: DriveClass,
        v_max: Velocity,
        v_creep: Option<Velocity>,
    },
    Fem1001 {
        family: FemCraneFamily,
        v: Velocity,
    },
    Cmaa70 {
        v: Velocity,
        bucket_or_magnet: bool,
    },
    Offshore {
        location: LiftLocation,
    },
}

impl Basis {
    /// The factor on the hoist load for a hoisted mass `m`.
    fn factor(&self, m: Mass) -> f64 {
        match *self {
            Basis::En13001 {
                class,
                drive,
                v_max,
                v_creep,
            } => {
                // validate() guarantees the creep speed for HD2 and HD3.
                let v_h = factors::characteristic_speed_a1(drive, v_max, v_creep).unwrap_or(v_max);
                factors::phi2(class, v_h)
            }
            Basis::Fem1001 { family, v } => factors::fem_psi(family, v),
            Basis::Cmaa70 {
                v,
                bucket_or_magnet,
            } => 1.0 + factors::cmaa_hlf(v, bucket_or_magnet),
            Basis::Offshore { location } => factors::offshore_daf(m, location),
        }
    }
}

fn present(inputs: &Inputs, name: &str) -> bool {
    inputs.values.contains_key(name)
}

/// Validation the declaration cannot express: the inputs each basis needs,
/// the rope model's inputs as a group, and consistency between inputs.
fn validate(inputs: &Inputs) -> Vec<CalcError> {
    let mut errors = Vec::new();
    let basis = match inputs.opt_choice("basis") {
        Ok(Some(b)) => b.to_string(),
        _ => return errors,
    };
    let basis_span = inputs.span_of("basis");
    let needs: &[(&str, &str, &str)] = match basis.as_str() {
        "en13001" => &[
            (
                "hoisting_class",
                "the EN 13001-2 hoisting class HC1 to HC4",
                "hoisting_class: HC2",
            ),
            (
                "drive_class",
                "the EN 13001-2 hoist drive class HD1 to HD5",
                "drive_class: HD2",
            ),
            (
                "hoisting_speed",
                "the steady hoisting speed v_h,max",
                "hoisting_speed: 8 m/min",
            ),
        ],
        "fem1001" => &[
            (
                "hoisting_speed",
                "the hoisting speed V_L",
                "hoisting_speed: 8 m/min",
            ),
            (
                "crane_type",
                "overhead, gantry or jib, which sets ξ",
                "crane_type: overhead",
            ),
        ],
        "cmaa70" => &[(
            "hoisting_speed",
            "the hoist speed for the hoist load factor",
            "hoisting_speed: 20 fpm",
        )],
        "offshore" => &[(
            "lift_location",
            "onshore, inshore or offshore, which selects the column of the DAF table",
            "lift_location: inshore",
        )],
        _ => &[],
    };
    for (name, why, example) in needs {
        if !present(inputs, name) {
            errors.push(CalcError::input(
                name,
                basis_span.clone(),
                &format!("basis `{basis}` needs `{name}` ({why}) but it was not given"),
                &format!("`{example}` under `inputs:`"),
            ));
        }
    }

    if basis == "en13001" {
        if let Ok(Some(word)) = inputs.opt_choice("drive_class") {
            let uses_creep = DriveClass::parse(word).is_some_and(DriveClass::uses_creep_speed);
            if uses_creep && !present(inputs, "creep_speed") {
                errors.push(CalcError::input(
                    "creep_speed",
                    inputs.span_of("drive_class").or_else(|| inputs.span_of("basis")),
                    &format!(
                        "drive class {word} takes the characteristic hoisting speed from the creep speed, but `creep_speed` was not given"
                    ),
                    "`creep_speed: 0.8 m/min` under `inputs:`",
                ));
            }
        }
    }
    if basis == "fem1001" {
        if let Ok(Some(word @ ("bucket" | "magnet"))) = inputs.opt_choice("crane_type") {
            errors.push(CalcError::input(
                "crane_type",
                inputs.span_of("crane_type"),
                &format!("FEM 1.001's ψ is set by the crane's structure, not its attachment: `{word}` does not say whether it is a bridge or a jib crane"),
                "`crane_type: overhead`, `gantry` or `jib`",
            ));
        }
    }
    if let (Ok(Some(vc)), Ok(Some(v))) = (
        inputs.opt_quantity::<Velocity>("creep_speed"),
        inputs.opt_quantity::<Velocity>("hoisting_speed"),
    ) {
        if vc > v {
            errors.push(CalcError::input(
                "creep_speed",
                inputs.span_of("creep_speed"),
                "the creep speed is higher than the hoisting speed",
                "a creep speed below `hoisting_speed`, for example 10 % of it",
            ));
        }
    }
    if present(inputs, "released_mass") {
        if !present(inputs, "release_rate") {
            errors.push(CalcError::input(
                "release_rate",
                inputs.span_of("released_mass"),
                "`released_mass` is given, so φ3 needs `release_rate` (slow: grab or magnet; rapid: load breaking free)",
                "`release_rate: slow` under `inputs:`",
            ));
        }
        if let (Ok(Some(dm)), Ok(Some(m))) = (
            inputs.opt_quantity::<Mass>("released_mass"),
            inputs.opt_quantity::<Mass>("hoisted_mass"),
        ) {
            if dm > m {
                errors.push(CalcError::input(
                    "released_mass",
                    inputs.span_of("released_mass"),
                    "the released mass is more than the hoisted mass",
                    "a part of `hoisted_mass`, for example `2 t` of `8 t`",
                ));
            }
        }
    }

    let chain = is_chain(inputs);
    if chain {
        validate_chain(inputs, &mut errors);
    } else {
        for name in ["chain", "chain_size", "chain_grade"] {
            if present(inputs, name) {
                errors.push(CalcError::input(
                    name,
                    inputs.span_of(name),
                    &format!("`{name}` describes a chain, but the hoisting medium is a wire rope (`medium: rope`, the default)"),
                    "`medium: chain` under `inputs:` to hoist on chain, or leave the chain data out",
                ));
            }
        }
    }
    validate_two_mass(inputs, chain, &mut errors);

    // The rope model: rope data switches it on, and then all of it is needed.
    let trigger = if chain {
        None
    } else {
        ROPE_MODEL[1..].iter().find(|n| present(inputs, n))
    };
    if let Some(first) = trigger {
        let span = inputs.span_of(first);
        let examples = [
            "falls: 4",
            "rope_diameter: 16 mm",
            "fill_factor: 0.58",
            "rope_modulus: 100 GPa",
            "rope_length: 9 m",
        ];
        for (name, example) in ROPE_MODEL.iter().zip(examples) {
            if !present(inputs, name) {
                errors.push(CalcError::input(
                    name,
                    span.clone(),
                    &format!("the rope-and-mass model (switched on by `{first}`) needs `{name}` but it was not given"),
                    &format!("`{example}` under `inputs:`"),
                ));
            }
        }
        if !present(inputs, "hoisting_speed") {
            errors.push(CalcError::input(
                "hoisting_speed",
                span.clone(),
                &format!("the rope-and-mass model (switched on by `{first}`) lifts the load off at the hoisting speed, but `hoisting_speed` was not given"),
                "`hoisting_speed: 8 m/min` under `inputs:`",
            ));
        }
    } else if present(inputs, "slack_height") && !chain {
        errors.push(CalcError::input(
            "slack_height",
            inputs.span_of("slack_height"),
            "the snatch load needs the rope's stiffness, but no rope data (`rope_diameter`, `fill_factor`, `rope_modulus`, `rope_length`, `falls`) was given",
            "`rope_diameter: 16 mm`, `fill_factor: 0.58`, `rope_modulus: 100 GPa`, `rope_length: 9 m` and `falls: 4` with the slack height",
        ));
    }
    if present(inputs, "rope_breaking_force") && !present(inputs, "falls") {
        errors.push(CalcError::input(
            "falls",
            inputs.span_of("rope_breaking_force"),
            "the rope safety factor needs the number of falls the load hangs on",
            "`falls: 4` under `inputs:`",
        ));
    }
    errors
}

/// True when the item hoists on chain (`medium: chain`).
fn is_chain(inputs: &Inputs) -> bool {
    matches!(inputs.opt_choice("medium"), Ok(Some("chain")))
}

/// True when the item gives what the rope-and-mass model needs to start.
fn model_on(inputs: &Inputs) -> bool {
    is_chain(inputs) || ROPE_MODEL[1..].iter().any(|n| present(inputs, n))
}

/// The chain as the hoisting medium: its data is needed and the wire-rope
/// data does not apply.
fn validate_chain(inputs: &Inputs, errors: &mut Vec<CalcError>) {
    let span = inputs.span_of("medium");
    let needs = [
        (
            "falls",
            "the number of chain falls (legs) carrying the hook",
            "falls: 1",
        ),
        (
            "chain_size",
            "the chain's nominal diameter",
            "chain_size: 16 mm",
        ),
        ("chain_grade", "the chain grade", "chain_grade: G8"),
        (
            "rope_length",
            "the free length of one chain fall at lift-off",
            "rope_length: 4 m",
        ),
        (
            "hoisting_speed",
            "the speed at which the model lifts the load off",
            "hoisting_speed: 8 m/min",
        ),
    ];
    for (name, why, example) in needs {
        if !present(inputs, name) {
            errors.push(CalcError::input(
                name,
                span.clone(),
                &format!("`medium: chain` needs `{name}` ({why}) but it was not given"),
                &format!("`{example}` under `inputs:`"),
            ));
        }
    }
    for name in ["rope_diameter", "fill_factor", "rope_modulus"] {
        if present(inputs, name) {
            errors.push(CalcError::input(
                name,
                inputs.span_of(name),
                &format!("`{name}` describes a wire rope, but the hoisting medium is chain; the chain's area and modulus follow from `chain_size`"),
                "`chain_size: 16 mm` and `chain_grade: G8` without the wire-rope data, or `medium: rope`",
            ));
        }
    }
}

/// The second mass: a drive spring needs a hook mass to act on, and both
/// belong to the rope-and-mass model.
fn validate_two_mass(inputs: &Inputs, chain: bool, errors: &mut Vec<CalcError>) {
    let hook_mass = inputs
        .opt_quantity::<Mass>("hook_mass")
        .ok()
        .flatten()
        .map_or(0.0, |m| m.to_si());
    let model = chain || ROPE_MODEL[1..].iter().any(|n| present(inputs, n));
    if present(inputs, "drive_stiffness") && hook_mass <= 0.0 {
        errors.push(CalcError::input(
            "drive_stiffness",
            inputs.span_of("drive_stiffness"),
            "`drive_stiffness` sets the spring between the drive and the hook, which needs the hook's mass, but `hook_mass` is zero or not given",
            "`hook_mass: 250 kg` with `drive_stiffness: 50 MN/m` under `inputs:`",
        ));
    }
    if !model {
        for name in ["drive_stiffness", "hook_mass"] {
            if present(inputs, name) && (name == "drive_stiffness" || hook_mass > 0.0) {
                errors.push(CalcError::input(
                    name,
                    inputs.span_of(name),
                    &format!("`{name}` belongs to the rope-and-mass model, but no rope or chain data was given"),
                    "`rope_diameter`, `fill_factor`, `rope_modulus`, `rope_length` and `falls`, or `medium: chain` with `chain_size`, `chain_grade`, `rope_length` and `falls`",
                ));
            }
        }
    }
}

fn read_basis(inputs: &Inputs) -> Result<Basis, CalcError> {
    let bad = |name: &str, word: &str| {
        CalcError::contract(format!("input `{name}` has an undeclared option `{word}`"))
    };
    Ok(match inputs.choice("basis")? {
        "en13001" => {
            let hc = inputs.choice("hoisting_class")?;
            let hd = inputs.choice("drive_class")?;
            Basis::En13001 {
                class: HoistingClass::parse(hc).ok_or_else(|| bad("hoisting_class", hc))?,
                drive: DriveClass::parse(hd).ok_or_else(|| bad("drive_class", hd))?,
                v_max: inputs.quantity("hoisting_speed")?,
                v_creep: inputs.opt_quantity("creep_speed")?,
            }
        }
        "fem1001" => Basis::Fem1001 {
            family: match inputs.choice("crane_type")? {
                "jib" => FemCraneFamily::Jib,
                _ => FemCraneFamily::Bridge,
            },
            v: inputs.quantity("hoisting_speed")?,
        },
        "cmaa70" => Basis::Cmaa70 {
            v: inputs.quantity("hoisting_speed")?,
            bucket_or_magnet: matches!(inputs.opt_choice("crane_type")?, Some("bucket" | "magnet")),
        },
        "offshore" => {
            let word = inputs.choice("lift_location")?;
            Basis::Offshore {
                location: LiftLocation::parse(word).ok_or_else(|| bad("lift_location", word))?,
            }
        }
        other => return Err(bad("basis", other)),
    })
}

/// The hook speed at which the model lifts the load off, and why.
fn liftoff_speed(basis: &Basis, inputs: &Inputs) -> Result<(Velocity, String), CalcError> {
    let v: Velocity = inputs.quantity("hoisting_speed")?;
    let creep: Option<Velocity> = inputs.opt_quantity("creep_speed")?;
    Ok(match *basis {
        Basis::En13001 { drive, .. } => match drive {
            DriveClass::Hd1 => (v, "drive class HD1 lifts off at the hoisting speed".into()),
            DriveClass::Hd2 | DriveClass::Hd3 => (
                creep.unwrap_or(v),
                "drive class HD2/HD3 lifts off at the creep speed".into(),
            ),
            DriveClass::Hd4 => (v * 0.5, "drive class HD4 is taken to lift off at half the hoisting speed, as EN 13001-2 assumes for load combinations A1 and B1".into()),
            DriveClass::Hd5 => (v, "drive class HD5: the model lifts off at the hoisting speed and the automatic control is represented by the drive ramp time alone".into()),
        },
        _ => match creep {
            Some(c) => (c, "the creep speed is given, so the model lifts off at it".into()),
            None => (v, "no creep speed is given, so the model lifts off at the hoisting speed".into()),
        },
    })
}

fn format3(x: f64) -> String {
    format!("{x:.3}")
}

impl Module for HoistLoads {
    fn declaration(&self) -> ModuleDeclaration {
        declaration()
    }

    fn check_inputs(&self, inputs: &Inputs) -> Vec<CalcError> {
        validate(inputs)
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        if let Some(first) = validate(inputs).into_iter().next() {
            return Err(first);
        }
        let g = standard_gravity();
        let m: Mass = inputs.quantity("hoisted_mass")?;
        let weight: Force = m * g;
        let basis = read_basis(inputs)?;
        let mut out = Outcome::new();

        // Dynamic factor by the chosen basis.
        let phi = basis.factor(m);
        match basis {
            Basis::En13001 {
                class,
                drive,
                v_max,
                v_creep,
            } => {
                let v_h = factors::characteristic_speed_a1(drive, v_max, v_creep).unwrap_or(v_max);
                let (beta2, phi2_min) = class.parameters();
                let phi2c = factors::phi2(class, factors::characteristic_speed_c1(drive, v_max));
                out.set_number("dynamic_factor_c1", phi2c);
                out.set_number("dynamic_test_factor", factors::phi6_dynamic(phi));
                out.note(format!(
                    "EN 13001-2: φ2 = {phi2_min:.2} + {beta2:.2} s/m × v_h with v_h = {:.3} m/s for load combinations A1/B1 (drive class {}); φ2C = {} for C1 uses v_h = {:.3} m/s. φ1 = 1 ± a (a ≤ 0.1, so 0.9 to 1.1) applies to the crane's own mass, which this module does not carry.",
                    v_h.to_si(),
                    drive.name(),
                    format3(phi2c),
                    factors::characteristic_speed_c1(drive, v_max).to_si()
                ));
            }
            Basis::Fem1001 { family, v } => out.note(format!(
                "FEM 1.001: ψ = 1 + ξ V_L with ξ = {} for a {} crane and V_L = {:.3} m/s (capped at 1 m/s), not less than 1.15.",
                if family == FemCraneFamily::Jib { "0.3" } else { "0.6" },
                if family == FemCraneFamily::Jib { "jib" } else { "bridge-type" },
                v.to_si()
            )),
            Basis::Cmaa70 { v, bucket_or_magnet } => out.note(if bucket_or_magnet {
                "CMAA 70: a bucket or magnet crane takes the hoist load factor 0.50 whatever its speed.".to_string()
            } else {
                format!(
                    "CMAA 70: HLF = 0.005 × {:.1} ft/min within 0.15 to 0.50, so the load is multiplied by 1 + HLF = {}.",
                    v.to_si() / (packwright_api::units::FOOT / 60.0),
                    format3(phi)
                )
            }),
            Basis::Offshore { location } => out.note(format!(
                "Marine lifting DAF for a single crane in air, {} column, static hook load {:.2} t taken as the hoisted mass (loads under 3 t as 3 t).",
                location.name(),
                m.to_si() / 1000.0
            )),
        }
        out.set_number("dynamic_factor", phi);
        let design: Force = weight * phi;
        out.set("design_hoist_load", design);

        // Sudden release of part of the load (EN 13001-2 φ3 whatever the basis).
        if let Some(dm) = inputs.opt_quantity::<Mass>("released_mass")? {
            let rate_word = inputs.choice("release_rate")?;
            let rate = ReleaseRate::parse(rate_word).ok_or_else(|| {
                CalcError::contract(format!("undeclared release_rate `{rate_word}`"))
            })?;
            let phi3 = factors::phi3(dm, m, rate);
            out.set_number("release_factor", phi3);
            if !matches!(basis, Basis::En13001 { .. }) {
                out.note("The release factor φ3 is taken from EN 13001-2, which the other bases do not define in this form.");
            }
            out.check(Check::condition(
                "no_uplift_on_release",
                phi3 >= 0.0,
                &if phi3 >= 0.0 {
                    format!("Releasing {:.0} kg of {:.0} kg ({rate_word}) leaves φ3 = {} ≥ 0, so the remaining load still pulls down on the rope.", dm.to_si(), m.to_si(), format3(phi3))
                } else {
                    format!("Releasing {:.0} kg of {:.0} kg ({rate_word}) gives φ3 = {} < 0: the rebound lifts the remaining load and unloads the rope and crane, which must be designed for the upward action or the release prevented.", dm.to_si(), m.to_si(), format3(phi3))
                },
            ));
        }

        // Design load against the hoist's own design load at rated capacity.
        match inputs.opt_quantity::<Mass>("rated_capacity")? {
            Some(rated) => {
                let phi_rated = basis.factor(rated);
                let limit: Force = rated * g * phi_rated;
                out.check(Check::at_most(
                    "within_rated_capacity",
                    design,
                    limit,
                    &format!(
                        "The design hoist load φ m g is compared with the hoist's design load at its rated capacity, which carries the same basis's factor ({}); for a factor independent of mass this is the hoisted mass against the rated capacity.",
                        format3(phi_rated)
                    ),
                ));
            }
            None => out
                .note("No rated capacity given: the design load is not checked against the hoist."),
        }

        // Rope force per fall and safety factor.
        let falls = inputs.opt_count("falls")?;
        if let Some(n) = falls {
            let per_fall: Force = weight / n as f64;
            out.set("rope_force_per_fall", per_fall);
            let given: Option<Force> = inputs.opt_quantity("rope_breaking_force")?;
            let breaking = match given {
                Some(f) => Some(f),
                None if is_chain(inputs) => {
                    let d: Length = inputs.quantity("chain_size")?;
                    out.note(format!(
                        "Chain breaking force from EN 818-2 grade 8: BF = 2 (π/4) d² × 800 N/mm² = {:.1} kN for d = {:.0} mm (give `rope_breaking_force` to use the chain's certificate instead).",
                        chain::g8_breaking_force(d).to_si() / 1000.0,
                        d.to_si() * 1000.0
                    ));
                    Some(chain::g8_breaking_force(d))
                }
                None => None,
            };
            if let Some(mbf) = breaking {
                let factor = (mbf / per_fall).value;
                out.set_number("rope_safety_factor", factor);
                let explicit = inputs.criterion_number("required_rope_factor")?;
                let group = inputs.opt_choice("mechanism_group")?;
                let required = match (explicit, group) {
                    (Some(z), _) => Some((z, "the item's required rope factor".to_string())),
                    (None, Some(gw)) => factors::iso4308_zp(gw).map(|z| {
                        (
                            z,
                            format!("ISO 4308-1 Z_p for mechanism group {gw} (value from memory)"),
                        )
                    }),
                    (None, None) => None,
                };
                match required {
                    Some((z, source)) => out.check(Check::at_least(
                        "rope_safety_factor",
                        si::<Ratio>(factor),
                        si::<Ratio>(z),
                        &format!("The rope's minimum breaking force over the static rope force per fall ({n} falls, no sheave losses) must reach {source}."),
                    )),
                    None => out.note("No rope factor check: give `mechanism_group` (for ISO 4308-1 Z_p) or the criterion `required_rope_factor`."),
                }
            } else {
                out.note("No rope breaking force given: the rope safety factor is not computed.");
            }
        }

        if model_on(inputs) {
            rope_model(inputs, &basis, m, g, phi, &mut out)?;
        }
        Ok(out)
    }
}

/// The rope-and-mass model part of `compute`.
fn rope_model(
    inputs: &Inputs,
    basis: &Basis,
    m: Mass,
    g: Acceleration,
    phi: f64,
    out: &mut Outcome,
) -> Result<(), CalcError> {
    let n = inputs.count("falls")?;
    let l: Length = inputs.quantity("rope_length")?;
    let k = if is_chain(inputs) {
        let d: Length = inputs.quantity("chain_size")?;
        let grade = inputs.choice("chain_grade")?;
        let e = chain::studless_r3_modulus(d);
        out.note(format!(
            "Chain as the spring: {n} fall(s) of {:.0} mm grade {grade} chain, k = n E A / L with A = 2 π d²/4 = {:.4e} m² (both legs of a link) and E = (5.40 − 0.0040 d) × 10¹⁰ Pa = {:.3e} Pa, the DNV studless R3 mooring-chain modulus taken as an approximation for short-link lifting chain (from memory / approximation, verify with the chain maker).",
            d.to_si() * 1000.0,
            chain::link_area(d).to_si(),
            e.to_si()
        ));
        chain::chain_stiffness(n, d, l)
    } else {
        let d: Length = inputs.quantity("rope_diameter")?;
        let f = inputs.number("fill_factor")?;
        let e: Pressure = inputs.quantity("rope_modulus")?;
        rope::reeving_stiffness(n, e, rope::metallic_area(d, f), l)
    };
    let tr: Time = inputs.quantity("drive_ramp_time")?;
    let zeta = inputs.number("damping_ratio")?;
    let slack: Option<Length> = inputs.opt_quantity("slack_height")?;
    let weight: Force = m * g;

    out.set("stiffness", k);
    out.set("static_stretch", rope::static_stretch(m, g, k));
    let (v, why) = liftoff_speed(basis, inputs)?;
    out.set("liftoff_speed", v);
    let bound = (rope::liftoff_bound(m, g, v, k) / weight).value;
    out.set_number("liftoff_bound_factor", bound);

    let base = sim::LiftOff {
        mass: m,
        stiffness: k,
        damping_ratio: zeta,
        gravity: g,
        hook_speed: v,
        ramp_time: tr,
        slack: slack.unwrap_or(si(0.0)),
    };
    let hook_mass: Mass = inputs.quantity("hook_mass")?;
    let drive: Option<Stiffness> = inputs.opt_quantity("drive_stiffness")?;
    let result = match drive {
        Some(kd) if hook_mass.to_si() > 0.0 => {
            out.note(format!(
                "Two-degree model: the motor's prescribed motion drives the hook ({:.0} kg) through the drive spring k_d = {:.4e} N/m, and the hook lifts the load through the {} spring k = {:.4e} N/m; both masses are integrated, the same damping ratio on both springs.",
                hook_mass.to_si(),
                kd.to_si(),
                if is_chain(inputs) { "chain" } else { "rope" },
                k.to_si()
            ));
            sim::simulate_two_mass_liftoff(&sim::TwoMassLiftOff {
                base,
                hook_mass,
                drive_stiffness: kd,
            })
        }
        _ => {
            if hook_mass.to_si() > 0.0 {
                out.note("A hook mass is given without `drive_stiffness`: the drive is rigid, so the hook follows the prescribed motion and its mass does not change the rope force; the single-mass model applies.");
            }
            sim::simulate_liftoff(&base)
        }
    };
    let history = result.map_err(|err| {
        CalcError::numerical(
            "model_dynamic_factor",
            &err.to_string(),
            &[
                "hoisting_speed",
                "drive_ramp_time",
                "rope_length",
                "rope_modulus",
                "hoisted_mass",
                "hook_mass",
                "drive_stiffness",
            ],
        )
    })?;
    let model = (history.peak_force / weight).value;
    out.set_number("model_dynamic_factor", model);
    if let Some(t) = history.liftoff_time {
        out.set("liftoff_time", t);
    }
    out.note(format!(
        "Rope-and-mass model: {why}, {:.3} m/s, drive ramp {:.2} s, damping ratio {zeta:.3}; peak rope force {} × weight against {} by the basis and {} for lift-off at full speed (closed form).",
        v.to_si(),
        tr.to_si(),
        format3(model),
        format3(phi),
        format3(bound)
    ));
    if model > phi {
        out.note(format!(
            "The model's factor {} exceeds the basis's {}: the rope is stiff for this speed. The model leaves out the crane structure's flexibility, which lowers it, but a stiff short reeving or a fast start deserves a slower lift-off (creep speed, longer ramp).",
            format3(model),
            format3(phi)
        ));
    }

    if let Some(h) = slack {
        let snatch = rope::slack_drop_force(m, g, h, k);
        out.set("snatch_load", snatch);
        out.note(format!(
            "Snatch: a load dropping {:.0} mm onto the rope would load it to {} × its weight (closed form, no damping). The lift-off simulation takes the same slack up with the hook before the rope tightens. Slack rope is to be prevented, not designed for.",
            h.to_si() * 1000.0,
            format3((snatch / weight).value)
        ));
    }

    // Time history: series (thinned) and plot.
    let w = weight.to_si();
    let mut series = Series::new(
        "liftoff_history",
        &[
            ("time", Dimension::Time),
            ("force_over_weight", Dimension::Dimensionless),
            ("rope_force", Dimension::Force),
            ("load_height", Dimension::Length),
            ("hook_travel", Dimension::Length),
        ],
    );
    for s in &history.samples {
        series.push(vec![
            s.time,
            s.force / w,
            s.force,
            s.load_height,
            s.hook_travel,
        ]);
    }
    series.thin_to(200);
    out.series.push(series);

    let t_end = history.samples.last().map_or(0.0, |s| s.time);
    let line: Vec<(f64, f64)> = history
        .samples
        .iter()
        .map(|s| (s.time, s.force / w))
        .collect();
    let plot = Plot::new(
        "liftoff",
        "Rope force over weight while the load is lifted off (rope-and-mass model)",
        Axis::new("time since the hoist drive starts", Dimension::Time),
        Axis::new("rope force / weight", Dimension::Dimensionless),
    )
    .layer(Some("model"), LayerStyle::Line, line)
    .layer(
        Some("factor by the basis"),
        LayerStyle::Reference,
        vec![(0.0, phi), (t_end, phi)],
    )
    .layer(
        Some("lift-off at full speed, closed form"),
        LayerStyle::Dashed,
        vec![(0.0, bound), (t_end, bound)],
    )
    .layer(
        Some("model peak"),
        LayerStyle::Points,
        vec![(history.peak_time.to_si(), model)],
    );
    out.plots.push(plot);
    Ok(())
}

fn declaration() -> ModuleDeclaration {
    let choice = |name: &str, options: &[&str], meaning: &str| {
        InputSpec::choice(name, options, meaning).optional()
    };
    ModuleDeclaration {
        name: "hoist-loads".into(),
        version: "1.0.0".into(),
        purpose: "Dynamic factor and design hoist load by a named standard, rope safety factor, and the rope-and-mass model of lift-off and snatch loads.".into(),
        inputs: vec![
            InputSpec::quantity("hoisted_mass", Dimension::Mass, "hoisted mass m: the load plus hook block, slings and every lifting attachment below the rope").above(0.0),
            InputSpec::quantity("rated_capacity", Dimension::Mass, "rated capacity (safe working load) of the hoist, m_R").above(0.0).optional(),
            InputSpec::choice("basis", &BASES, "basis of the dynamic factor: en13001 (EN 13001-2 / ISO 8686-1 φ2), fem1001 (FEM 1.001 ψ), cmaa70 (CMAA 70 hoist load factor), offshore (marine lifting DAF)"),
            choice("hoisting_class", &["HC1", "HC2", "HC3", "HC4"], "EN 13001-2 hoisting class (en13001)"),
            choice("drive_class", &["HD1", "HD2", "HD3", "HD4", "HD5"], "EN 13001-2 hoist drive class (en13001)"),
            InputSpec::quantity("hoisting_speed", Dimension::Velocity, "steady hoisting speed v_h,max (en13001, fem1001, cmaa70 and the rope model)").above(0.0).optional(),
            InputSpec::quantity("creep_speed", Dimension::Velocity, "creep (slow) speed used to take up the load, v_h,CS").above(0.0).optional(),
            choice("crane_type", &CRANE_TYPES, "crane type: overhead, gantry or jib sets FEM 1.001's ξ; bucket or magnet sets CMAA 70's factor to 1.5"),
            choice("lift_location", &["onshore", "inshore", "offshore"], "where a marine lift takes place (offshore)"),
            InputSpec::choice("medium", &["rope", "chain"], "hoisting medium acting as the spring: rope (wire rope, from rope_diameter, fill_factor, rope_modulus) or chain (short-link lifting chain, from chain_size and chain_grade)").default("rope"),
            InputSpec::count("falls", "number of rope (or chain) falls n carrying the hook block").at_least(1.0).optional(),
            InputSpec::quantity("rope_diameter", Dimension::Length, "nominal rope diameter d").above(0.0).optional(),
            InputSpec::number("fill_factor", "rope fill factor f: metallic area over the area of the circumscribed circle (6x36 IWRC about 0.58)").above(0.0).at_most(1.0).optional(),
            InputSpec::quantity("rope_modulus", Dimension::Pressure, "rope modulus E on the metallic area, after bedding in (stranded IWRC about 100 kN/mm2)").above(0.0).optional(),
            InputSpec::material("chain", "chain", "a named chain in materials/ (kind chain, the chain data the chain-payout module reads) whose chain_size and chain_grade fill those inputs; give it with medium chain").optional(),
            InputSpec::quantity("chain_size", Dimension::Length, "nominal (wire) diameter d of the lifting chain (medium chain)").above(0.0).optional(),
            choice("chain_grade", &["G8"], "chain grade (medium chain): G8 is EN 818-2 grade 8 short-link lifting chain"),
            InputSpec::quantity("rope_length", Dimension::Length, "free length L of one fall of rope or chain, head sheaves (or chain wheel) to hook block, at the lift-off position").above(0.0).optional(),
            InputSpec::quantity("rope_breaking_force", Dimension::Force, "minimum breaking force of the rope or chain F_min, from its certificate; for G8 chain it defaults to the EN 818-2 value 2 (π/4) d² × 800 N/mm²").above(0.0).optional(),
            choice("mechanism_group", &["M1", "M2", "M3", "M4", "M5", "M6", "M7", "M8"], "mechanism group of the hoist (ISO 4301-1), for the ISO 4308-1 rope coefficient Z_p"),
            InputSpec::quantity("drive_ramp_time", Dimension::Time, "time t_r for the hoist drive to reach the lift-off speed from rest; 0 s (instant) is the conservative default").at_least(0.0).default("0 s"),
            InputSpec::number("damping_ratio", "damping ratio ζ of the load bouncing on the rope, as a fraction of critical; 0 (none) is the conservative default").at_least(0.0).below(1.0).default("0"),
            InputSpec::quantity("hook_mass", Dimension::Mass, "mass m_h of the hook block and what moves with the drive side above the rope spring (two-degree model); 0 kg keeps the hook on the prescribed drive motion").at_least(0.0).default("0 kg"),
            InputSpec::quantity("drive_stiffness", Dimension::ForcePerLength, "stiffness k_d of the drive and structure between the motor's prescribed motion and the hook; with hook_mass above zero the hook becomes a second mass between k_d and the rope").above(0.0).optional(),
            InputSpec::quantity("slack_height", Dimension::Length, "slack h in the rope before it tightens (or height a load may drop before the rope catches it)").at_least(0.0).optional(),
            InputSpec::quantity("released_mass", Dimension::Mass, "part Δm of the hoisted mass that may be released suddenly (grab or magnet discharge, load breaking free)").above(0.0).optional(),
            choice("release_rate", &["slow", "rapid"], "how the part is released: slow (grab, magnet, β3 = 0.5) or rapid (β3 = 1.0)"),
        ],
        outputs: vec![
            OutputSpec::number("dynamic_factor", "dynamic factor on the hoist load by the basis (φ2, ψ, 1 + HLF or DAF)").key(),
            OutputSpec::new("design_hoist_load", Dimension::Force, "kN", "lbf", "design hoist load φ m g"),
            OutputSpec::number("dynamic_factor_c1", "EN 13001-2 φ2C for load combination C1").optional(),
            OutputSpec::number("dynamic_test_factor", "EN 13001-2 φ6 = ½(1 + φ2) on the dynamic test load").optional(),
            OutputSpec::number("release_factor", "EN 13001-2 φ3 on the load left after a sudden release").optional(),
            OutputSpec::new("rope_force_per_fall", Dimension::Force, "kN", "lbf", "static rope force per fall S = m g / n").optional(),
            OutputSpec::number("rope_safety_factor", "rope safety factor F_min / S").optional(),
            OutputSpec::new("stiffness", Dimension::ForcePerLength, "kN/mm", "lbf/in", "stiffness of the reeving at the hook k = n E A_m / L (rope) or n E A / L (chain)").optional(),
            OutputSpec::new("static_stretch", Dimension::Length, "mm", "in", "static stretch of the reeving under the weight m g / k").optional(),
            OutputSpec::new("liftoff_speed", Dimension::Velocity, "m/min", "fpm", "hook speed at which the model lifts the load off").optional(),
            OutputSpec::new("liftoff_time", Dimension::Time, "s", "s", "time from the drive start to lift-off in the model").optional(),
            OutputSpec::number("model_dynamic_factor", "peak rope force over weight in the rope-and-mass model").optional(),
            OutputSpec::number("liftoff_bound_factor", "closed-form factor for lift-off at full speed, 1 + v √(k m) / (m g)").optional(),
            OutputSpec::new("snatch_load", Dimension::Force, "kN", "lbf", "peak rope force when the load drops through the slack height onto the rope").optional(),
        ],
        criteria: vec![CriterionSpec::new(
            "required_rope_factor",
            Dimension::Dimensionless,
            None,
            "least rope safety factor F_min / S",
            "No fixed default: when the item gives no limit it is the ISO 4308-1:2003 coefficient Z_p for the item's mechanism group (M1 3.15, M2 3.35, M3 3.55, M4 4.0, M5 4.5, M6 5.6, M7 7.1, M8 9.0, running ropes; values from memory, not verified against the standard); with neither, the rope factor is not checked",
        )],
        checks: vec![
            CheckSpec::new("rope_safety_factor", "the rope's minimum breaking force is at least the required factor times the static rope force per fall"),
            CheckSpec::new("within_rated_capacity", "the design hoist load does not exceed the hoist's design load at its rated capacity"),
            CheckSpec::new("no_uplift_on_release", "φ3 is not negative: a sudden release does not throw the remaining load and the crane upward"),
        ],
        method: vec![
            MethodStep::equation("EN 13001-2 / ISO 8686-1: the factor on a grounded load hoisted by the crane rises with the characteristic hoisting speed v_h, which the hoist drive class takes from the hoisting or creep speed (HD1 v_max, HD2 and HD3 creep, HD4 half v_max, HD5 zero).", "phi_2 = phi_(2,\"min\") + beta_2 v_h"),
            MethodStep::equation("A sudden release of part of the load leaves the rest rebounding; β3 is 0.5 for a slow release (grab, magnet) and 1.0 for a rapid one. A negative φ3 means uplift.", "phi_3 = 1 - frac(Delta m, m) (1 + beta_3)"),
            MethodStep::equation("EN 13001-2 dynamic test load factor.", "phi_6 = 1/2 (1 + phi_2)"),
            MethodStep::equation("FEM 1.001 (1998): ξ = 0.6 for overhead travelling and bridge cranes, 0.3 for jib cranes, V_L in m/s.", "psi = max(1.15, 1 + xi min(V_L, 1))"),
            MethodStep::equation("CMAA Specification 70: hoist load factor from the hoist speed in ft/min (0.50 for bucket and magnet cranes); the load is multiplied by 1 + HLF.", "\"HLF\" = min(0.5, max(0.15, 0.005 v_\"fpm\"))"),
            MethodStep::equation("Marine lifting (GL Noble Denton 0027/ND Table 5-1): by static hook load SHL in tonnes and location; up to 100 t offshore and inshore by formula, fixed values above.", "\"DAF\"_\"offshore\" = 1 + 0.25 sqrt(100 / \"SHL\")"),
            MethodStep::equation("Design hoist load from the factor of the chosen basis; the rope force per fall and the safety factor use the static load, as ISO 4308-1's Z_p does.", "F_d = phi m g, quad S = frac(m g, n), quad Z = frac(F_\"min\", S) >= Z_p"),
            MethodStep::equation("The n falls act as parallel springs of metallic area A_m.", "k = frac(n E A_m, L), quad A_m = f frac(pi d^2, 4)"),
            MethodStep::equation("With `medium: chain` the n chain falls are the springs: both legs of a link carry the load, and E is the DNV studless R3 mooring-chain modulus (d in mm), taken as an approximation for short-link lifting chain (from memory / approximation, verify with the chain maker). The grade 8 breaking force follows EN 818-2 (800 N/mm² on both legs) unless the certificate's value is given.", "k = frac(n E A, L), quad A = 2 frac(pi d^2, 4), quad E = (5.40 - 0.0040 d) dot 10^10 \"Pa\", quad F_\"min\" = 2 frac(pi d^2, 4) dot 800 \"N/mm\"^2"),
            MethodStep::equation("Rope-and-mass model: the hook drive follows a prescribed motion, accelerating uniformly to the lift-off speed v over t_r; the rope pulls only when stretched; the load rests on the ground until the rope force reaches m g.", "m dot.double(y) = F - m g, quad F = max(0, k e + c dot(e)), quad e = x_h (t) - y - s, quad c = 2 zeta sqrt(k m)"),
            MethodStep::equation("Two-degree model (with `hook_mass` m_h above zero and `drive_stiffness` k_d): the motor's motion x_d (t) is prescribed as above and drives the hook mass through the drive spring; the hook lifts the load through the rope. The hook starts at rest hanging on the drive spring; the damping ratio applies to both springs.", "m_h dot.double(u) = k_d (x_d - u) + c_d (dot(x)_d - dot(u)) - F, quad m dot.double(y) = F - m g, quad e = u - y - s, quad c_d = 2 zeta sqrt(k_d m_h)"),
            MethodStep::text("The airborne motion is integrated by an adaptive Dormand-Prince 5(4) Runge-Kutta scheme with relative tolerance 1e-10; rope engagement, slack, landing and force peaks are located by bisection on the step size."),
            MethodStep::equation("Closed form for lift-off at full speed (instant ramp, no damping), and for a load falling a slack height h onto the rope.", "F_\"max\" = m g + v sqrt(k m), quad F_\"max\" = m g (1 + sqrt(1 + frac(2 k h, m g)))"),
        ],
        assumptions: vec![
            "The rope is a massless linear spring with viscous damping that cannot push; its stiffness uses the metallic area and the bedded-in modulus and ignores constructional stretch.".into(),
            "Only the falls are elastic unless `drive_stiffness` is given: the crane structure, sheaves, lead line to the drum and the drive are otherwise rigid, so the model's stiffness and factor are upper values for that reason.".into(),
            "The hook drive's motion is prescribed (uniform acceleration to the lift-off speed, then constant speed), unaffected by the load. In the two-degree model this is the motor's motion, the drive and structure are one linear spring k_d, and the hook is one rigid mass m_h; the motor does not slow under load.".into(),
            "The load is a rigid mass lifted vertically from rigid ground, with no swing and no suction or adhesion to the ground. The hook mass of the two-degree model is a separate mass on the drive side of the rope spring; the static loads, the design load and the rope force per fall use the hoisted mass alone.".into(),
            "Chain as the spring: a linear spring k = n E A / L with A on both legs of a link and E the DNV studless R3 mooring-chain modulus, an approximation for short-link grade 8 chain (from memory / approximation, verify with the chain maker); link seating and wear are ignored.".into(),
            "The static hook load for the marine DAF is the hoisted mass as given, with no weight contingency added.".into(),
            "Gravity is standard gravity, 9.80665 m/s2.".into(),
        ],
        cautions: vec![
            "This package does not replace the crane standard's full load combinations (A, B, C, with the crane's own mass, travel, wind and test loads), the crane's proof of competence, or the inspection, load testing and rope examination the standard and the law require.".into(),
            "Snatch loading is to be avoided, not designed for: take up slack at creep speed, keep slings tight before lift-off, never let a load drop into slack rope, and use slack-rope and overload protection. A snatch load can exceed the rope's breaking force many times over.".into(),
            "A load stuck to the ground, caught under an obstruction or frozen down is not a lift-off: the hoist pulls against a fixed point up to its stall or limiter force. Free the load first.".into(),
            "A sudden release (grab or magnet discharge, a sling or hook failing, a load breaking free) makes the rope and crane spring upward; with a negative φ3 the hook block and boom can be thrown, and ropes can jump their sheaves.".into(),
            "The rope force per fall leaves out sheave friction, the lead line to the drum, rope weight and fleet angle; the drum-line tension is higher. Take the breaking force from the rope's certificate and discard the rope by ISO 4309 criteria.".into(),
            "Several factors here come from memory of the standards (see the references): verify them against the edition in force for the project before the calculation is released.".into(),
            "A chain hoist snatches harder than a rope hoist of the same capacity: the chain is stiffer and has no constructional stretch. Never shock-load lifting chain; a kinked, twisted or knotted chain, or one with stretched or worn links, fails far below its breaking force.".into(),
            "Keep people out from under and beside a suspended load: a rope that breaks under a snatch recoils with the energy stored in it.".into(),
            "The marine DAF covers a single crane lifting in air; splash-zone, subsea and multi-crane lifts and vessel motions need their own analysis.".into(),
        ],
        references: vec![
            "EN 13001-2:2014 (revised 2021), Crane safety, General design, Part 2: Load actions: φ1, φ2 with hoisting classes HC1-HC4 and drive classes HD1-HD5, φ3, φ6 (values from memory, confidence medium to high).".into(),
            "ISO 8686-1:2012, Cranes, Design principles for loads and load combinations, Part 1: General (same φ scheme; from memory).".into(),
            "EN 1991-3:2006, Actions induced by cranes and machinery, §2 (dynamic factors, test loads §2.10).".into(),
            "FEM 1.001, Rules for the design of hoisting appliances, 3rd edition revised 1998, Booklet 2: dynamic coefficient ψ (from memory, medium confidence).".into(),
            "CMAA Specification No. 70, Specifications for top running bridge and gantry type multiple girder electric overhead travelling cranes: hoist load factor (from memory, high confidence).".into(),
            "GL Noble Denton, Guidelines for Marine Lifting & Lowering Operations, 0027/ND Rev 11, §5.5 Table 5-1 (dynamic amplification factor).".into(),
            "DNV-ST-N001, Marine operations and marine warranty (DAF table essentially as 0027/ND; from memory).".into(),
            "ISO 4308-1:2003, Cranes and lifting appliances, Selection of wire ropes, Part 1: General: coefficient Z_p by mechanism group (values from memory).".into(),
            "ISO 4309, Cranes, Wire ropes, Care and maintenance, inspection and discard.".into(),
            "EN 1993-1-11:2006, Design of structures with tension components: rope moduli (typical values, from memory).".into(),
            "EN 818-2, Short link chain for lifting purposes, Safety, Part 2: Medium tolerance chain for chain slings, Grade 8: breaking force on 800 N/mm² mean stress on both legs (Annex A basis, consistent with the working load limit table).".into(),
            "DNV-OS-E301, Position mooring: axial stiffness of studless R3 chain E = (5.40 − 0.0040 d) · 10¹⁰ Pa on A = 2 π d²/4 (as quoted in a secondary source); used here for grade 8 lifting chain as an approximation, to be verified with the chain maker.".into(),
        ],
    }
}

#[cfg(test)]
mod tests;
