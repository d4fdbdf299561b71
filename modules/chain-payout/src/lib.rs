//! The `chain-payout` calculation module: chain running off a pile over a
//! rim (the chain fountain, Cayley's falling chain and the start-up from
//! rest), and chain with an end load paid out through a braked wheel (an
//! anchor let go from a windlass), with chain strength by grade.
//!
//! The physics lives in plain functions of `uom` quantities in [`pile`],
//! [`brake`] and [`chain`], integrated in time by the small adaptive
//! integrator in [`ode`]; [`ChainPayout`] only maps inputs and outputs. This
//! crate depends on the plug-in contract (`packwright-api`) only.

pub mod brake;
pub mod chain;
pub mod ode;
pub mod pile;

use crate::brake::{BrakeEnding, BrakePoint, BrakedChain};
use crate::chain::Grade;
use crate::ode::Tolerance;
use crate::pile::{PileChain, Regime, StartEnding};
use packwright_api::prelude::*;

/// The chain-payout module (`module: chain-payout`).
pub struct ChainPayout;

/// Inputs only the pile case reads.
const PILE_ONLY: [&str; 8] = [
    "drop_height",
    "rim_height",
    "pile_push",
    "landing_push",
    "initial_overhang",
    "rim_friction",
    "rim_wrap_angle",
    "clearance_above_pile",
];
/// Inputs only the brake case reads.
const BRAKE_ONLY: [&str; 12] = [
    "end_mass",
    "submerged",
    "water_density",
    "steel_density",
    "freeboard",
    "depth",
    "brake_force",
    "brake_applied_at",
    "brake_applied_at_speed",
    "locker_pickup",
    "chain_stopper",
    "drag_factor",
];

/// Largest number of rows a series keeps.
const SERIES_ROWS: usize = 200;
/// Band around the steady speed that counts as "steady" (1 %).
const STEADY_BAND: f64 = 0.01;

fn q(dimension: Dimension, name: &str, meaning: &str) -> InputSpec {
    InputSpec::quantity(name, dimension, meaning)
}

impl Module for ChainPayout {
    fn declaration(&self) -> ModuleDeclaration {
        use Dimension as D;
        let grade_words: Vec<&str> = Grade::WORDS.to_vec();
        ModuleDeclaration {
            name: "chain-payout".into(),
            version: "1.0.0".into(),
            purpose: "Speed, tension and energy of chain running off a pile over a rim, or paid \
                      out with an end load through a braked wheel, with the brake checked \
                      against IACS UR A3."
                .into(),
            inputs: vec![
                InputSpec::choice(
                    "case",
                    &["pile", "brake"],
                    "pile: chain drawn off a resting pile over a rim and falling to a lower \
                     landing; brake: chain with an end load paid out from a locker through a \
                     braked wheel",
                ),
                InputSpec::material(
                    "chain",
                    "chain",
                    "a named chain in materials/ whose properties fill the chain inputs below",
                )
                .optional(),
                q(
                    D::LinearDensity,
                    "mass_per_length",
                    "chain mass per length λ",
                )
                .above(0.0),
                q(
                    D::Length,
                    "chain_size",
                    "nominal (bar) diameter d of the chain",
                )
                .optional()
                .above(0.0)
                .at_most(0.25),
                InputSpec::choice(
                    "chain_grade",
                    &grade_words,
                    "chain grade: U1, U2, U3 (IACS stud-link anchor chain), R3, R3S, R4 \
                     (offshore mooring chain), G8 (EN 818-2 grade 8 lifting chain)",
                )
                .optional(),
                InputSpec::flag(
                    "studless",
                    "whether the R3S or R4 chain is studless (changes only its proof load)",
                )
                .default("false"),
                q(
                    D::Force,
                    "breaking_load",
                    "minimum breaking load of the chain; given, it overrides the grade formula",
                )
                .optional()
                .above(0.0),
                q(
                    D::Force,
                    "working_load_limit",
                    "working load limit of the chain, as a force; for G8 it defaults to the \
                     EN 818-2 table by size",
                )
                .optional()
                .above(0.0),
                q(
                    D::Length,
                    "drop_height",
                    "pile case: height h from the pile surface down to the landing",
                )
                .optional()
                .above(0.0),
                q(
                    D::Length,
                    "rim_height",
                    "pile case: height e of the rim (container edge, lip, fairlead) above the \
                     pile surface; 0 puts the rim at the pile surface",
                )
                .default("0 m")
                .at_least(0.0),
                InputSpec::number(
                    "pile_push",
                    "pile case: α, the fraction of λ v² the pile's push supplies to the link \
                     being lifted (from tests on the actual chain; 0 is the classical theory)",
                )
                .default("0")
                .at_least(0.0)
                .below(0.5),
                InputSpec::number(
                    "landing_push",
                    "pile case: β, the tension at the landing as a fraction of λ v² (from tests \
                     on the actual chain; 0 is the classical theory)",
                )
                .default("0")
                .at_least(0.0)
                .below(0.5),
                q(
                    D::Length,
                    "payout_length",
                    "pile case: length of chain on the pile to run out; brake case: chain \
                     available below the wheel to the bitter end",
                )
                .optional()
                .above(0.0),
                q(
                    D::Length,
                    "initial_overhang",
                    "pile case: length hanging below the rim at release (0 with the rim at \
                     the pile surface is Cayley's start from nothing)",
                )
                .default("0 m")
                .at_least(0.0),
                InputSpec::number(
                    "rim_friction",
                    "pile case: capstan friction coefficient μ between chain and rim",
                )
                .default("0")
                .at_least(0.0)
                .at_most(2.0),
                q(
                    D::Angle,
                    "rim_wrap_angle",
                    "pile case: wrap angle θ of the chain over the rim",
                )
                .default("180 deg")
                .at_least(0.0)
                .at_most(2.0 * std::f64::consts::PI),
                q(
                    D::Length,
                    "clearance_above_pile",
                    "pile case: free height above the pile surface before the chain would \
                     strike a hood or leave its container",
                )
                .optional()
                .above(0.0),
                q(
                    D::Mass,
                    "end_mass",
                    "brake case: end mass M (anchor, counterweight, load)",
                )
                .optional()
                .above(0.0),
                InputSpec::flag(
                    "submerged",
                    "brake case: whether the chain and end mass run into water below the \
                     freeboard (buoyancy reduces their weight)",
                )
                .default("false"),
                q(D::Density, "water_density", "brake case: water density ρ_w")
                    .default("1025 kg/m3")
                    .above(0.0),
                q(
                    D::Density,
                    "steel_density",
                    "brake case: density ρ_s of the chain and end mass",
                )
                .default("7850 kg/m3")
                .above(0.0),
                q(
                    D::Length,
                    "freeboard",
                    "brake case: height of the wheel above the water; chain and end mass above \
                     it weigh their full weight",
                )
                .default("0 m")
                .at_least(0.0),
                q(
                    D::Length,
                    "depth",
                    "brake case: height of the wheel above the sea bed or landing; the end mass \
                     lands when this length is paid out (chain hanging vertically)",
                )
                .optional()
                .above(0.0),
                q(
                    D::Force,
                    "brake_force",
                    "brake case: force the slipping brake exerts, referred to the chain",
                )
                .optional()
                .at_least(0.0),
                q(
                    D::Length,
                    "brake_applied_at",
                    "brake case: paid-out length at which the brake is applied (0: on from the \
                     start); give this or brake_applied_at_speed, not both",
                )
                .optional()
                .at_least(0.0),
                q(
                    D::Velocity,
                    "brake_applied_at_speed",
                    "brake case: chain speed at which the brake is applied, at the first \
                     instant the running chain reaches it (0: on from the start); give this or \
                     brake_applied_at, not both",
                )
                .optional()
                .at_least(0.0),
                InputSpec::flag(
                    "locker_pickup",
                    "brake case: whether links are picked up from rest in the locker (costing \
                     λ v²); false means they reach the wheel already moving",
                )
                .default("true"),
                InputSpec::flag(
                    "chain_stopper",
                    "brake case: whether a chain stopper is fitted (IACS UR A3 then asks the \
                     brake to hold 45 % of the breaking load instead of 80 %)",
                )
                .default("false"),
                q(
                    D::LinearDensity,
                    "drag_factor",
                    "brake case: c in the drag F_D = c v² on the moving end mass and chain, \
                     c = ½ ρ C_D A summed; 0 ignores drag, which is conservative for stopping",
                )
                .default("0 kg/m")
                .at_least(0.0),
            ],
            outputs: vec![
                OutputSpec::new(
                    "chain_breaking_load",
                    D::Force,
                    "kN",
                    "lbf",
                    "minimum breaking load used (given, or from the grade formula)",
                )
                .optional(),
                OutputSpec::new(
                    "chain_proof_load",
                    D::Force,
                    "kN",
                    "lbf",
                    "proof load from the grade formula",
                )
                .optional(),
                OutputSpec::new(
                    "chain_working_load_limit",
                    D::Force,
                    "kN",
                    "lbf",
                    "working load limit used (given, or the EN 818-2 table)",
                )
                .optional(),
                OutputSpec::new(
                    "steady_speed",
                    D::Velocity,
                    "m/s",
                    "ft/s",
                    "pile: steady running speed v",
                )
                .optional()
                .key(),
                OutputSpec::new(
                    "rise_above_pile",
                    D::Length,
                    "m",
                    "ft",
                    "pile: height of the chain's highest point above the pile surface",
                )
                .optional(),
                OutputSpec::number(
                    "rise_to_drop_ratio",
                    "pile: rise above the pile over the drop to the landing",
                )
                .optional(),
                OutputSpec::new(
                    "pickup_tension",
                    D::Force,
                    "kN",
                    "lbf",
                    "pile: steady tension just above the pile, (1 − α) λ v²",
                )
                .optional(),
                OutputSpec::new(
                    "landing_tension",
                    D::Force,
                    "kN",
                    "lbf",
                    "pile: steady tension at the landing, β λ v²",
                )
                .optional(),
                OutputSpec::new(
                    "max_tension",
                    D::Force,
                    "kN",
                    "lbf",
                    "pile: largest chain tension, steady or during start-up",
                )
                .optional(),
                OutputSpec::new(
                    "dissipated_power",
                    D::Power,
                    "kW",
                    "hp",
                    "pile: power dissipated in steady running, λ g h v",
                )
                .optional(),
                OutputSpec::new(
                    "payout_time",
                    D::Time,
                    "s",
                    "s",
                    "pile: time from release until the payout length has left the pile",
                )
                .optional(),
                OutputSpec::new(
                    "time_to_steady",
                    D::Time,
                    "s",
                    "s",
                    "pile: time from release until the speed stays within 1 % of the steady \
                     speed",
                )
                .optional(),
                OutputSpec::new(
                    "max_speed",
                    D::Velocity,
                    "m/s",
                    "ft/s",
                    "largest chain speed in the run",
                )
                .optional(),
                OutputSpec::new(
                    "pickup_energy",
                    D::Energy,
                    "kJ",
                    "ft*lbf",
                    "energy dissipated picking links up from rest during the run",
                )
                .optional(),
                OutputSpec::new(
                    "speed_at_brake",
                    D::Velocity,
                    "m/s",
                    "ft/s",
                    "brake: chain speed when the brake is applied",
                )
                .optional()
                .key(),
                OutputSpec::new(
                    "stopping_length",
                    D::Length,
                    "m",
                    "ft",
                    "brake: chain paid out while the brake slips, until the chain stops",
                )
                .optional(),
                OutputSpec::new(
                    "stopped_at",
                    D::Length,
                    "m",
                    "ft",
                    "brake: paid-out length at which the chain stops",
                )
                .optional(),
                OutputSpec::new(
                    "peak_brake_load",
                    D::Force,
                    "kN",
                    "lbf",
                    "brake: largest load on the brake (slipping force, or static hold)",
                )
                .optional(),
                OutputSpec::new(
                    "peak_chain_tension",
                    D::Force,
                    "kN",
                    "lbf",
                    "brake: largest chain tension outboard of the wheel, F_b + λ v²",
                )
                .optional(),
                OutputSpec::new(
                    "brake_energy",
                    D::Energy,
                    "kJ",
                    "ft*lbf",
                    "brake: energy the brake absorbs, ∫ F_b v dt",
                )
                .optional(),
                OutputSpec::new(
                    "brake_holding_requirement",
                    D::Force,
                    "kN",
                    "lbf",
                    "brake: pull the brake must hold by IACS UR A3 (80 % or 45 % of the \
                     breaking load)",
                )
                .optional(),
                OutputSpec::new(
                    "end_speed",
                    D::Velocity,
                    "m/s",
                    "ft/s",
                    "brake: speed when the end mass reaches the sea bed or the bitter end \
                     reaches the wheel, if the chain is still running",
                )
                .optional(),
            ],
            criteria: vec![CriterionSpec::new(
                "max_chain_speed",
                D::Velocity,
                None,
                "largest chain speed allowed",
                "no general published limit; set it from the windlass or equipment maker's \
                 limit or the plant's own rule",
            )],
            checks: vec![
                CheckSpec::new(
                    "chain_runs_out",
                    "pile: the overhang pulls the chain over the rim and it runs until the \
                     payout length has left the pile",
                ),
                CheckSpec::new(
                    "rise_within_clearance",
                    "pile: the chain's highest point stays below the clearance above the pile",
                ),
                CheckSpec::new(
                    "tension_within_wll",
                    "the largest chain tension does not exceed the working load limit",
                ),
                CheckSpec::new(
                    "speed_within_limit",
                    "the largest chain speed does not exceed the allowed speed",
                ),
                CheckSpec::new(
                    "chain_stops",
                    "brake: the brake stops the chain before the end mass reaches the sea bed \
                     or the bitter end reaches the wheel",
                ),
                CheckSpec::new(
                    "brake_within_ur_a3_holding",
                    "brake: the peak brake load does not exceed the pull IACS UR A3 requires \
                     the brake to hold",
                ),
                CheckSpec::new(
                    "tension_within_breaking_load",
                    "brake: the peak chain tension stays below the chain's breaking load",
                ),
            ],
            method: method(),
            assumptions: vec![
                "Links are inextensible and every moving link has the same speed; links are \
                 picked up from rest and laid down at rest without rebound."
                    .into(),
                "Pile case: the pile surface stays at one level while it empties; the rising \
                 leg is vertical and as long as the rim height; the falling leg is vertical; \
                 the quasi-static arc over the rim carries no inertia of its own."
                    .into(),
                "Pile case: rim friction acts on the effective tension T − λ v², because λ v² \
                 turns the links round the rim without pressing on it; where T − λ v² is \
                 negative the chain lifts clear of the rim and friction does not act."
                    .into(),
                "Pile case: during start-up the arc is taken at the rim; its rise, α v²/g, is \
                 used for the steady state only."
                    .into(),
                "Pile case: the payout ends when the payout length has left the pile; the \
                 whip of the tail end that follows is not modelled."
                    .into(),
                "Brake case: the chain hangs vertically below the wheel; the brake, once \
                 applied, slips at a constant force (no ramp, no fade) and holds statically \
                 once the chain stops; added mass of water and chain elasticity (snatch at the \
                 stop) are not modelled."
                    .into(),
                "Brake case: with locker_pickup false the links reach the wheel already at \
                 chain speed with no reaction on the moving chain."
                    .into(),
                "Submerged weights use the steel density for the end mass as well as the chain."
                    .into(),
                "Gravity is standard gravity, 9.80665 m/s².".into(),
            ],
            cautions: vec![
                "A chain running off a pile or out of a locker can whip, kick up and rise above \
                 its container, and the tail end lashes as it leaves; keep everyone out of an \
                 exclusion zone round the pile, the rim, the falling leg, the hawse and the \
                 locker while chain runs, and never stand in the bight."
                    .into(),
                "The pile push α and landing push β must come from tests on the actual chain \
                 and pile: published values are for small bead chains, and the origin of the \
                 push is still disputed. With α = 0 the rise above the pile is not zero in \
                 practice."
                    .into(),
                "Brake force fades as linings heat up in a long or repeated let-go; a brake that \
                 just stops the chain when cold may not when hot. Check the brake energy against \
                 the maker's rating and do not rely on the brake alone to arrest an anchor run \
                 out in deep water: walk the anchor back with the windlass."
                    .into(),
                "The snatch when a running chain is stopped, or when slack is taken up, can \
                 exceed the tensions computed here; chain elasticity and the shock of a sudden \
                 stop are not in this model."
                    .into(),
                "Breaking loads from grade formulas are minimum values for new chain; wear, \
                 corrosion and damaged links reduce them. Check against the chain's certificate."
                    .into(),
            ],
            references: vec![
                "A. Cayley, On a class of dynamical problems, Proc. R. Soc. Lond. 8 (1857) \
                 506-511: the chain drawn from a heap (acceleration g/3)."
                    .into(),
                "J. S. Biggins and M. Warner, Understanding the chain fountain, Proc. R. Soc. A \
                 470: 20130689 (2014), doi:10.1098/rspa.2013.0689."
                    .into(),
                "C. W. Wong and K. Yasui, Falling chains, Am. J. Phys. 74, 490 (2006).".into(),
                "IACS UR A3 Anchor windlass design and testing, Rev.1 2019: brake holding 80 % \
                 of the chain's minimum breaking strength, 45 % with a chain stopper."
                    .into(),
                "IACS UR W18 Anchor chain cables and accessories: stud-link grades U1, U2, U3, \
                 breaking and proof loads c · d² (44 − 0.08 d) kN."
                    .into(),
                "DNV-OS-E302 Offshore mooring chain (also IACS UR W22): grades R3, R3S, R4.".into(),
                "EN 818-2 Short link chain for lifting purposes, grade 8 (medium tolerance)."
                    .into(),
                "E. E. Zajac, Dynamics and kinematics of the laying and recovery of submarine \
                 cable, Bell Syst. Tech. J. 36 (1957) 1129: cable laid from a ship, for the \
                 related steady laying problem (not computed here)."
                    .into(),
            ],
        }
    }

    fn check_inputs(&self, inputs: &Inputs) -> Vec<CalcError> {
        validate(inputs)
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        if let Some(first) = validate(inputs).into_iter().next() {
            return Err(first);
        }
        let g = standard_gravity();
        let mut out = Outcome::new();
        let strength = chain_strength(inputs, g)?;
        if let Some(mbl) = strength.breaking {
            out.set("chain_breaking_load", mbl);
        }
        if let Some(proof) = strength.proof {
            out.set("chain_proof_load", proof);
        }
        if let Some(wll) = strength.wll {
            out.set("chain_working_load_limit", wll);
        }
        for note in &strength.notes {
            out.note(note.clone());
        }
        let case = inputs.choice("case")?;
        let unused: Vec<&str> = if case == "pile" {
            BRAKE_ONLY.to_vec()
        } else {
            PILE_ONLY.to_vec()
        }
        .into_iter()
        .filter(|n| inputs.given(n))
        .collect();
        if !unused.is_empty() {
            out.note(format!(
                "Inputs not used by the {case} case: {}.",
                unused.join(", ")
            ));
        }
        if case == "pile" {
            compute_pile(inputs, g, &strength, &mut out)?;
        } else {
            compute_brake(inputs, g, &strength, &mut out)?;
        }
        Ok(out)
    }
}

fn method() -> Vec<MethodStep> {
    vec![
        MethodStep::text(
            "Pile case. Links are lifted from rest at the pile, pass over the rim and fall to \
             the landing, where they come to rest. The pile pushes up on the link being lifted \
             with a force α λ v² and the landing pulls with β λ v² (Biggins and Warner 2014).",
        ),
        MethodStep::equation(
            "Tensions in steady running: just above the pile, at the top of the free arc and at \
             the landing.",
            "T_0 = (1 - alpha) lambda v^2, quad T_\"top\" = lambda v^2, quad T_f = beta lambda v^2",
        ),
        MethodStep::equation(
            "Steady speed and rise of the arc above the pile, with the chain free of the rim.",
            "(1 - beta) v^2 = g (h + h_2), quad h_2 = frac(alpha v^2, g), quad \
             frac(h_2, h) = frac(alpha, 1 - alpha - beta)",
        ),
        MethodStep::equation(
            "Where the rim, a height e above the pile, is higher than the free arc, the chain \
             bears on it and friction acts on the effective tension S = T - λ v² with the \
             capstan ratio E.",
            "E = e^(mu theta), quad v^2 (1 - beta - alpha E) = g (h - e (E - 1))",
        ),
        MethodStep::equation(
            "Start-up from rest: the moving chain (rising leg e, falling leg y) gains links at \
             the pile; the tip is free until it reaches the landing.",
            "lambda (e + y) dot(v) = lambda g (y - e) - (1 - alpha) lambda v^2 + T_\"tip\" - \
             F_\"rim\"",
        ),
        MethodStep::equation(
            "With the rim at the pile surface, no friction and no overhang this is Cayley's \
             falling chain, started on its exact solution because the equation is singular at \
             y = 0.",
            "dot(v) = frac(g, 3 - 2 alpha), quad v^2 = frac(2 g y, 3 - 2 alpha) quad \
             (alpha = 0: g/3, v^2 = 2 g y / 3)",
        ),
        MethodStep::text(
            "The start-up is integrated with an adaptive Dormand-Prince 5(4) scheme (relative \
             and absolute tolerance 1e-10 per step); the landing and the end of the payout are \
             located as events. Energy is accounted for: the potential energy released equals \
             the kinetic energy plus the energy dissipated at pickup, (1/2 - α) λ v³, on the \
             rim and at the landing, (1/2 - β) λ v³.",
        ),
        MethodStep::text(
            "Brake case. The end mass hangs below the wheel on the paid-out length x; links are \
             picked up from rest in the locker. The brake slips at a constant force from the \
             instant it is applied: when a set length has been paid out, or when the chain \
             first reaches a set speed.",
        ),
        MethodStep::equation(
            "Momentum of the end mass and hanging chain, with primes for submerged weights.",
            "(M + lambda x) dot(v) = (M' + lambda' x) g - lambda v^2 - F_b - c v^2",
        ),
        MethodStep::equation(
            "Submerged weight below the freeboard.",
            "M' = M (1 - rho_w / rho_s), quad lambda' = lambda (1 - rho_w / rho_s)",
        ),
        MethodStep::equation(
            "The instant t_a the brake is applied is the first at which the paid-out length \
             reaches the set length x_\"set\", or the chain speed the set speed v_\"set\". It \
             is located as an event of the integration (regula falsi on the step in which the \
             set value is crossed), so the speed at the brake equals v_\"set\" to the \
             integration accuracy. A set speed the free run never reaches leaves the brake off.",
            "x(t_a) = x_\"set\" quad \"or\" quad v(t_a) = v_\"set\", quad v(t) < v_\"set\" \
             \" for \" t < t_a",
        ),
        MethodStep::equation(
            "Chain tension outboard of the wheel, and the brake energy.",
            "T = F_b + lambda v^2, quad E_b = integral F_b v dif t",
        ),
        MethodStep::equation(
            "IACS UR A3: the brake must hold a pull of 80 % of the chain's minimum breaking \
             load, 45 % with a chain stopper fitted.",
            "F_\"hold\" = 0.80 F_\"MBL\" quad \"or\" quad 0.45 F_\"MBL\"",
        ),
        MethodStep::equation(
            "Chain strength by grade (d in mm, loads in kN): IACS U1-U3 and DNV R3-R4 formulas; \
             EN 818-2 grade 8 from 800 N/mm² on both legs, WLL from the table.",
            "F = c d^2 (44 - 0.08 d), quad F_(B F) = 2 dot frac(pi d^2, 4) dot 800 \" N/mm\"^2",
        ),
    ]
}

/// Chain strength resolved from the inputs.
struct Strength {
    breaking: Option<Force>,
    proof: Option<Force>,
    wll: Option<Force>,
    notes: Vec<String>,
}

/// The grade and size, when both are given.
fn grade_and_size(inputs: &Inputs) -> Result<(Option<Grade>, Option<Length>), CalcError> {
    let grade = inputs.opt_choice("chain_grade")?.and_then(Grade::from_word);
    let size = inputs.opt_quantity::<Length>("chain_size")?;
    Ok((grade, size))
}

fn chain_strength(inputs: &Inputs, g: Acceleration) -> Result<Strength, CalcError> {
    let (grade, size) = grade_and_size(inputs)?;
    let mut notes = Vec::new();
    let given_mbl = inputs.opt_quantity::<Force>("breaking_load")?;
    let formula_mbl = match (grade, size) {
        (Some(Grade::G8), Some(d)) => Some(chain::g8_breaking_force(d)),
        (Some(gr), Some(d)) => chain::formula_breaking_load(gr, d),
        _ => None,
    };
    let breaking = match (given_mbl, formula_mbl) {
        (Some(b), Some(f)) => {
            notes.push(format!(
                "Breaking load given directly ({:.1} kN) overrides the grade formula ({:.1} kN).",
                b.to_si() / 1e3,
                f.to_si() / 1e3
            ));
            Some(b)
        }
        (Some(b), None) => Some(b),
        (None, Some(f)) => {
            notes.push(grade_note(grade, size));
            Some(f)
        }
        (None, None) => None,
    };
    let proof = match (grade, size) {
        (Some(Grade::G8), Some(d)) => Some(chain::g8_proof_force(d)),
        (Some(gr), Some(d)) => chain::formula_proof_load(gr, d, inputs.flag("studless")?),
        _ => None,
    };
    let wll = match inputs.opt_quantity::<Force>("working_load_limit")? {
        Some(w) => Some(w),
        None => match (grade, size) {
            (Some(Grade::G8), Some(d)) => chain::g8_working_load_limit(d).map(|m| {
                notes.push(format!(
                    "Working load limit {:.2} t from the EN 818-2 grade 8 table for {:.0} mm \
                     (CONSISTENT, from memory (H)).",
                    m.to_si() / 1e3,
                    d.to_si() * 1e3
                ));
                m * g
            }),
            _ => None,
        },
    };
    Ok(Strength {
        breaking,
        proof,
        wll,
        notes,
    })
}

fn grade_note(grade: Option<Grade>, size: Option<Length>) -> String {
    let d_mm = size.map(|d| d.to_si() * 1e3).unwrap_or(0.0);
    match grade {
        Some(Grade::G8) => format!(
            "Breaking and proof loads of the {d_mm:.0} mm grade 8 chain from EN 818-2's stress \
             basis, 800 and 500 N/mm² on both legs (CONSISTENT, from memory (H))."
        ),
        Some(Grade::U1 | Grade::U2 | Grade::U3) => format!(
            "Breaking and proof loads of the {d_mm:.0} mm stud-link chain from the IACS UR W18 \
             formula c d² (44 − 0.08 d) kN (CONSISTENT with the published table)."
        ),
        _ => {
            let checked = (34.0..=76.0).contains(&d_mm);
            format!(
                "Breaking and proof loads of the {d_mm:.0} mm mooring chain from the DNV-OS-E302 \
                 formula c d² (44 − 0.08 d) kN (CONSISTENT with a maker's table for 34-70 mm{}).",
                if checked {
                    ""
                } else {
                    "; this size is outside the range checked"
                }
            )
        }
    }
}

/// Checks that the declaration cannot express: inputs one case needs.
fn validate(inputs: &Inputs) -> Vec<CalcError> {
    let mut errors = Vec::new();
    let case = match inputs.opt_choice("case") {
        Ok(Some(c)) => c.to_string(),
        Ok(None) => return vec![CalcError::missing("case")],
        Err(e) => return vec![e],
    };
    let at_case = inputs.span_of("case");
    let need = |name: &str, example: &str, errors: &mut Vec<CalcError>| {
        if !inputs.values.contains_key(name) {
            errors.push(CalcError::input(
                name,
                at_case.clone(),
                &format!("the {case} case needs `{name}`, which is not given"),
                &format!("`{name}: {example}` under `inputs:`"),
            ));
        }
    };
    let (grade, size) = match grade_and_size(inputs) {
        Ok(x) => x,
        Err(e) => return vec![e],
    };
    if grade.is_some() && size.is_none() && !inputs.values.contains_key("breaking_load") {
        errors.push(CalcError::input(
            "chain_size",
            inputs.span_of("chain_grade"),
            "a chain grade is given without the chain's nominal size, so its breaking load \
             cannot be worked out",
            "`chain_size: 38 mm` in the item or the chain material",
        ));
    }
    if case == "pile" {
        need("drop_height", "3.5 m", &mut errors);
        need("payout_length", "40 m", &mut errors);
        let wll_known = inputs.values.contains_key("working_load_limit")
            || matches!((grade, size), (Some(Grade::G8), Some(d)) if chain::g8_working_load_limit(d).is_some());
        if !wll_known {
            let why = match (grade, size) {
                (Some(Grade::G8), Some(d)) => format!(
                    "{:.1} mm is not a size in the EN 818-2 grade 8 table",
                    d.to_si() * 1e3
                ),
                (Some(_), _) => "the grade has no published working load limit formula".to_string(),
                _ => "no chain grade is given".to_string(),
            };
            let span = inputs
                .span_of("chain_grade")
                .or_else(|| inputs.span_of("chain_size"))
                .or_else(|| inputs.span_of("mass_per_length"))
                .or_else(|| at_case.clone());
            errors.push(CalcError::input(
                "working_load_limit",
                span,
                &format!(
                    "the pile case checks the largest tension against the working load limit, \
                     which is not given, and {why}"
                ),
                "`working_load_limit: 40 kN` in the item or the chain material",
            ));
        }
    } else {
        need("end_mass", "1500 kg", &mut errors);
        need("brake_force", "120 kN", &mut errors);
        match (
            inputs.values.contains_key("brake_applied_at"),
            inputs.values.contains_key("brake_applied_at_speed"),
        ) {
            (false, false) => errors.push(CalcError::input(
                "brake_applied_at",
                at_case.clone(),
                "the brake case needs when the brake is applied, as a paid-out length \
                 (`brake_applied_at`) or a chain speed (`brake_applied_at_speed`), and neither \
                 is given",
                "`brake_applied_at: 25 m` or `brake_applied_at_speed: 4 m/s` under `inputs:`",
            )),
            (true, true) => errors.push(CalcError::input(
                "brake_applied_at_speed",
                at_case.clone(),
                "the brake case takes when the brake is applied either as a paid-out length \
                 (`brake_applied_at`) or as a chain speed (`brake_applied_at_speed`), and both \
                 are given",
                "only one of `brake_applied_at: 25 m` and `brake_applied_at_speed: 4 m/s` under \
                 `inputs:`",
            )),
            _ => {}
        }
        if !inputs.values.contains_key("depth") && !inputs.values.contains_key("payout_length") {
            errors.push(CalcError::input(
                "depth",
                at_case.clone(),
                "the brake case needs the depth to the sea bed or landing, or the payout length \
                 to the bitter end, and neither is given",
                "`depth: 18 m` or `payout_length: 110 m` under `inputs:`",
            ));
        }
        let mbl_known =
            inputs.values.contains_key("breaking_load") || (grade.is_some() && size.is_some());
        if !mbl_known {
            errors.push(CalcError::input(
                "breaking_load",
                inputs.span_of("chain").or_else(|| at_case.clone()),
                "the brake case checks the brake against IACS UR A3 and the tension against the \
                 chain's breaking load, which is neither given nor derivable (grade and size)",
                "`breaking_load: 900 kN`, or `chain_grade: U2` with `chain_size: 38 mm`",
            ));
        }
        if let Ok(Some(w)) = inputs.opt_quantity::<MassDensity>("water_density") {
            if let Ok(Some(s)) = inputs.opt_quantity::<MassDensity>("steel_density") {
                if inputs.flag("submerged").unwrap_or(false) && w >= s {
                    errors.push(CalcError::input(
                        "water_density",
                        inputs.span_of("water_density"),
                        "the water is as dense as the steel, so the submerged chain would not \
                         sink",
                        "`water_density: 1025 kg/m3` with `steel_density: 7850 kg/m3`",
                    ));
                }
            }
        }
    }
    errors
}

fn compute_pile(
    inputs: &Inputs,
    g: Acceleration,
    strength: &Strength,
    out: &mut Outcome,
) -> Result<(), CalcError> {
    let lambda: LinearMassDensity = inputs.quantity("mass_per_length")?;
    let drop: Length = inputs.quantity("drop_height")?;
    let rim_height: Length = inputs.quantity("rim_height")?;
    let alpha = inputs.number("pile_push")?;
    let beta = inputs.number("landing_push")?;
    let payout: Length = inputs.quantity("payout_length")?;
    let overhang: Length = inputs.quantity("initial_overhang")?;
    let mu = inputs.number("rim_friction")?;
    let wrap: Angle = inputs.quantity("rim_wrap_angle")?;
    let p = PileChain {
        lambda,
        drop,
        rim_height,
        alpha,
        beta,
        capstan: pile::capstan_ratio(mu, wrap),
        g,
    };
    let steady = pile::steady_state(&p);
    let tol = Tolerance {
        max_step: 0.02 * ((rim_height + drop).to_si() / g.to_si()).sqrt(),
        ..Tolerance::default()
    };
    let run = pile::start_up(&p, overhang, payout, &tol).map_err(|e| {
        CalcError::numerical(
            "start-up",
            &e.to_string(),
            &[
                "drop_height",
                "payout_length",
                "initial_overhang",
                "rim_friction",
            ],
        )
    })?;

    let mut max_tension = run.max_tension;
    match &steady {
        Ok(s) => {
            out.set("steady_speed", s.speed);
            out.set("rise_above_pile", s.rise);
            out.set_number("rise_to_drop_ratio", ratio(s.rise / drop));
            out.set("pickup_tension", s.pickup_tension);
            out.set("landing_tension", s.landing_tension);
            out.set("dissipated_power", s.dissipated_power);
            if s.top_tension > max_tension {
                max_tension = s.top_tension;
            }
            out.note(match s.regime {
                Regime::Free => format!(
                    "In steady running the chain arcs clear of the rim (rim {:.3} m above the \
                     pile, arc {:.3} m), so rim friction does not act; Biggins and Warner's \
                     fountain relations apply.",
                    rim_height.to_si(),
                    (alpha * s.speed * s.speed / g).to_si()
                ),
                Regime::OnRim => format!(
                    "In steady running the chain bears on the rim {:.3} m above the pile (the \
                     free arc would rise only {:.3} m), so rim friction acts with capstan ratio \
                     {:.3}.",
                    rim_height.to_si(),
                    (alpha * s.speed * s.speed / g).to_si(),
                    p.capstan
                ),
            });
            if mu > 0.0 && rim_height.to_si() == 0.0 {
                out.note(
                    "Rim friction is given but the rim is at the pile surface, where the chain \
                     carries no pressure on it (T − λ v² ≤ 0), so the friction does not act; \
                     give rim_height if the rim stands above the pile.",
                );
            }
        }
        Err(stall) => {
            out.note(format!(
                "There is no steady running state: the falling leg ({:.3} m) cannot outweigh \
                 the rim side ({:.3} m of chain, capstan ratio {:.3}).",
                stall.falling_leg.to_si(),
                stall.held_by_rim.to_si(),
                p.capstan
            ));
        }
    }
    out.set("max_tension", max_tension);

    let started = run.ending == StartEnding::PaidOut;
    out.check(Check::condition(
        "chain_runs_out",
        started,
        &if started {
            format!(
                "The chain starts under its own weight and the {:.2} m payout has left the pile \
                 {:.2} s after release.",
                payout.to_si(),
                run.end.time.to_si()
            )
        } else {
            format!(
                "The chain does not start: the {:.3} m overhang does not outweigh the rim side, \
                 which resists like {:.3} m of hanging chain (rim height times the capstan \
                 ratio e^(μθ) = {:.3}).",
                overhang.to_si(),
                (rim_height * p.capstan).to_si(),
                p.capstan
            )
        },
    ));
    if started {
        out.set("payout_time", run.end.time);
        out.set("max_speed", run.max_speed);
        out.set("pickup_energy", run.energy.pickup);
        if run.singular_start {
            out.note(format!(
                "The chain starts from nothing hanging (Cayley's case), so the integration \
                 begins on the exact small-length solution, acceleration g/(3 − 2α) = {:.4} \
                 m/s².",
                pile::cayley_acceleration(alpha, g).to_si()
            ));
        }
        if let Some(land) = run.landing {
            out.note(format!(
                "The falling end reaches the landing {:.3} s after release at {:.3} m/s.",
                land.time.to_si(),
                land.speed.to_si()
            ));
        } else {
            out.note("The payout ends before the falling end reaches the landing.");
        }
        let a = run.energy;
        out.note(format!(
            "Energy account at the end of the payout: potential energy released {:.4} kJ = \
             kinetic {:.4} kJ + pickup {:.4} kJ + rim friction {:.4} kJ + landing {:.4} kJ \
             (residual {:.2e} kJ).",
            a.potential.to_si() / 1e3,
            a.kinetic.to_si() / 1e3,
            a.pickup.to_si() / 1e3,
            a.rim.to_si() / 1e3,
            a.landing.to_si() / 1e3,
            (a.potential - a.kinetic - a.pickup - a.rim - a.landing).to_si() / 1e3
        ));
        if let Ok(s) = &steady {
            match pile::time_to_steady(&run.samples, s.speed, STEADY_BAND) {
                Some(t) => out.set("time_to_steady", t),
                None => out.note(format!(
                    "The payout ends at {:.3} m/s, before the speed settles within 1 % of the \
                     steady {:.3} m/s.",
                    run.end.speed.to_si(),
                    s.speed.to_si()
                )),
            }
        }
        pile_series(&run, steady.as_ref().ok().map(|s| s.speed), strength, out);
    }

    if let (Some(clear), Ok(s)) = (
        inputs.opt_quantity::<Length>("clearance_above_pile")?,
        &steady,
    ) {
        out.check(Check::at_most(
            "rise_within_clearance",
            s.rise,
            clear,
            &format!(
                "In steady running the chain rises {:.3} m above the pile surface against {:.3} \
                 m of clearance{}.",
                s.rise.to_si(),
                clear.to_si(),
                if s.rise <= clear {
                    ""
                } else {
                    ": it would strike the hood or leave its container"
                }
            ),
        ));
    }
    if let Some(wll) = strength.wll {
        out.check(Check::at_most(
            "tension_within_wll",
            max_tension,
            wll,
            &format!(
                "The largest chain tension, {:.3} kN, is {:.0} % of the working load limit of \
                 {:.3} kN.",
                max_tension.to_si() / 1e3,
                100.0 * ratio(max_tension / wll),
                wll.to_si() / 1e3
            ),
        ));
    }
    speed_check(inputs, started.then_some(run.max_speed), out)?;
    Ok(())
}

/// A dimensionless quotient as a plain number.
fn ratio(r: Ratio) -> f64 {
    r.to_si()
}

fn speed_check(
    inputs: &Inputs,
    speed: Option<Velocity>,
    out: &mut Outcome,
) -> Result<(), CalcError> {
    if let (Some(limit), Some(v)) = (inputs.criterion::<Velocity>("max_chain_speed")?, speed) {
        out.check(Check::at_most(
            "speed_within_limit",
            v,
            limit,
            &format!(
                "The chain runs at up to {:.2} m/s against an allowed {:.2} m/s.",
                v.to_si(),
                limit.to_si()
            ),
        ));
    }
    Ok(())
}

fn pile_series(
    run: &pile::StartUp,
    steady: Option<Velocity>,
    strength: &Strength,
    out: &mut Outcome,
) {
    let mut series = Series::new(
        "start_up",
        &[
            ("time", Dimension::Time),
            ("paid_out", Dimension::Length),
            ("speed", Dimension::Velocity),
            ("tension", Dimension::Force),
        ],
    );
    for s in &run.samples {
        series.push(vec![
            s.time.to_si(),
            s.paid_out.to_si(),
            s.speed.to_si(),
            s.tension.to_si(),
        ]);
    }
    series.thin_to(SERIES_ROWS);
    let speed_pts: Vec<(f64, f64)> = series.rows.iter().map(|r| (r[0], r[2])).collect();
    let tension_pts: Vec<(f64, f64)> = series.rows.iter().map(|r| (r[0], r[3])).collect();
    let t_end = run.end.time.to_si();
    let mut speed_plot = Plot::new(
        "speed",
        "Chain speed from release until the payout has left the pile",
        Axis::new("time from release", Dimension::Time),
        Axis::new("chain speed", Dimension::Velocity),
    )
    .layer(Some("start-up (integrated)"), LayerStyle::Line, speed_pts);
    if let Some(vs) = steady {
        speed_plot = speed_plot.layer(
            Some("steady speed"),
            LayerStyle::Reference,
            vec![(0.0, vs.to_si()), (t_end, vs.to_si())],
        );
    }
    if let Some(land) = run.landing {
        speed_plot = speed_plot.layer(
            Some("end reaches the landing"),
            LayerStyle::Points,
            vec![(land.time.to_si(), land.speed.to_si())],
        );
    }
    let max_t = run.max_tension.to_si();
    let mut tension_plot = Plot::new(
        "tension",
        "Largest chain tension (top of the falling leg) during start-up",
        Axis::new("time from release", Dimension::Time),
        Axis::new("chain tension", Dimension::Force),
    )
    .layer(Some("tension"), LayerStyle::Line, tension_pts);
    if let Some(wll) = strength.wll {
        // The limit line is drawn only where it does not squash the curve.
        if wll.to_si() <= 3.0 * max_t {
            tension_plot = tension_plot.layer(
                Some("working load limit"),
                LayerStyle::Reference,
                vec![(0.0, wll.to_si()), (t_end, wll.to_si())],
            );
        }
    }
    out.series.push(series);
    out.plots.push(speed_plot);
    out.plots.push(tension_plot);
}

fn compute_brake(
    inputs: &Inputs,
    g: Acceleration,
    strength: &Strength,
    out: &mut Outcome,
) -> Result<(), CalcError> {
    let lambda: LinearMassDensity = inputs.quantity("mass_per_length")?;
    let end_mass: Mass = inputs.quantity("end_mass")?;
    let submerged = inputs.flag("submerged")?;
    let rho_w: MassDensity = inputs.quantity("water_density")?;
    let rho_s: MassDensity = inputs.quantity("steel_density")?;
    let depth = inputs.opt_quantity::<Length>("depth")?;
    let payout = inputs.opt_quantity::<Length>("payout_length")?;
    let (end_length, end_word) = match (depth, payout) {
        (Some(d), Some(p)) if p < d => (p, "the bitter end reaches the wheel"),
        (Some(d), _) => (d, "the end mass reaches the sea bed"),
        (None, Some(p)) => (p, "the bitter end reaches the wheel"),
        (None, None) => return Err(CalcError::missing("depth")),
    };
    let end_word = if !submerged && end_word.contains("sea bed") {
        "the end mass reaches the landing"
    } else {
        end_word
    };
    let mbl = strength
        .breaking
        .ok_or_else(|| CalcError::missing("breaking_load"))?;
    let c = BrakedChain {
        lambda,
        end_mass,
        submerged_factor: if submerged {
            1.0 - ratio(rho_w / rho_s)
        } else {
            1.0
        },
        freeboard: if submerged {
            inputs.quantity("freeboard")?
        } else {
            si(0.0)
        },
        brake_force: inputs.quantity("brake_force")?,
        brake_at: match inputs.opt_quantity::<Length>("brake_applied_at")? {
            Some(x) => BrakePoint::Length(x),
            None => BrakePoint::Speed(inputs.quantity("brake_applied_at_speed")?),
        },
        locker_pickup: inputs.flag("locker_pickup")?,
        drag_factor: inputs.quantity("drag_factor")?,
        end_length,
        g,
    };
    let chain_stopper = inputs.flag("chain_stopper")?;
    let tol = Tolerance {
        max_step: 0.02 * (end_length.to_si() / g.to_si()).sqrt(),
        ..Tolerance::default()
    };
    let point_input = match c.brake_at {
        BrakePoint::Length(_) => "brake_applied_at",
        BrakePoint::Speed(_) => "brake_applied_at_speed",
    };
    let run = brake::let_go(&c, &tol).map_err(|e| {
        CalcError::numerical(
            "let-go",
            &e.to_string(),
            &["end_mass", "brake_force", point_input, "depth"],
        )
    })?;

    out.set("max_speed", run.max_speed);
    out.set("pickup_energy", run.pickup_energy);
    out.set("peak_brake_load", run.peak_brake_load);
    out.set("peak_chain_tension", run.peak_tension);
    out.set("brake_energy", run.brake_energy);
    let hold = chain::ur_a3_brake_holding(mbl, chain_stopper);
    out.set("brake_holding_requirement", hold);

    let stopped = run.ending != BrakeEnding::ReachedEnd;
    match (run.ending, run.applied) {
        (BrakeEnding::HeldFromStart, _) => {
            out.set("speed_at_brake", si::<Velocity>(0.0));
            out.set("stopping_length", si::<Length>(0.0));
            out.set("stopped_at", si::<Length>(0.0));
            out.note("The brake, on from the start, holds the end load: nothing runs out.");
        }
        (BrakeEnding::Stopped, Some(a)) => {
            out.set("speed_at_brake", a.speed);
            out.set("stopping_length", run.end.paid_out - a.paid_out);
            out.set("stopped_at", run.end.paid_out);
            out.note(format!(
                "The brake is applied at {:.2} m paid out, {:.2} s after release, at {:.2} m/s, \
                 and stops the chain at {:.2} m after {:.2} s of slipping.",
                a.paid_out.to_si(),
                a.time.to_si(),
                a.speed.to_si(),
                run.end.paid_out.to_si(),
                (run.end.time - a.time).to_si()
            ));
        }
        (_, applied) => {
            out.set("end_speed", run.end.speed);
            if let Some(a) = applied {
                out.set("speed_at_brake", a.speed);
            }
        }
    }
    let input_energy = run.potential + run.feed_energy;
    out.note(format!(
        "Energy account: potential energy released {:.3} kJ{} = kinetic {:.3} kJ + brake {:.3} \
         kJ + pickup {:.3} kJ + drag {:.3} kJ (residual {:.2e} kJ).",
        run.potential.to_si() / 1e3,
        if c.locker_pickup {
            String::new()
        } else {
            format!(" + feed {:.3} kJ", run.feed_energy.to_si() / 1e3)
        },
        run.kinetic.to_si() / 1e3,
        run.brake_energy.to_si() / 1e3,
        run.pickup_energy.to_si() / 1e3,
        run.drag_energy.to_si() / 1e3,
        (input_energy - run.kinetic - run.brake_energy - run.pickup_energy - run.drag_energy)
            .to_si()
            / 1e3
    ));

    out.check(Check::condition(
        "chain_stops",
        stopped,
        &if stopped {
            format!(
                "The brake stops the chain at {:.2} m paid out, before {end_word} at {:.2} m.",
                run.end.paid_out.to_si(),
                end_length.to_si()
            )
        } else if run.applied.is_none() {
            match c.brake_at {
                BrakePoint::Length(x) => format!(
                    "The brake is applied at {:.2} m, beyond the {:.2} m at which {end_word}, so \
                     the chain is still running at {:.2} m/s when it gets there.",
                    x.to_si(),
                    end_length.to_si(),
                    run.end.speed.to_si()
                ),
                BrakePoint::Speed(v) => format!(
                    "The chain never reaches the {:.2} m/s at which the brake is to be applied \
                     before {end_word} at {:.2} m, so the brake stays off and the chain is still \
                     running at {:.2} m/s when it gets there.",
                    v.to_si(),
                    end_length.to_si(),
                    run.end.speed.to_si()
                ),
            }
        } else {
            format!(
                "The brake cannot stop the chain before {end_word} at {:.2} m: it is still \
                 running at {:.2} m/s there; a {:.1} kN brake force is {}.",
                end_length.to_si(),
                run.end.speed.to_si(),
                c.brake_force.to_si() / 1e3,
                if c.brake_force < brake::hanging_weight(&c, end_length) {
                    "less than the hanging weight it must finally hold"
                } else {
                    "applied too late for the length left"
                }
            )
        },
    ));
    out.check(Check::at_most(
        "brake_within_ur_a3_holding",
        run.peak_brake_load,
        hold,
        &format!(
            "The brake carries up to {:.1} kN against the {:.1} kN ({} % of the {:.1} kN breaking \
             load, {}) that IACS UR A3 requires it to hold.",
            run.peak_brake_load.to_si() / 1e3,
            hold.to_si() / 1e3,
            if chain_stopper { 45 } else { 80 },
            mbl.to_si() / 1e3,
            if chain_stopper {
                "a chain stopper is fitted"
            } else {
                "no chain stopper"
            }
        ),
    ));
    out.check(Check::at_most(
        "tension_within_breaking_load",
        run.peak_tension,
        mbl,
        &format!(
            "The peak chain tension at the wheel, {:.1} kN, is {:.0} % of the {:.1} kN breaking \
             load.",
            run.peak_tension.to_si() / 1e3,
            100.0 * ratio(run.peak_tension / mbl),
            mbl.to_si() / 1e3
        ),
    ));
    if let Some(wll) = strength.wll {
        out.check(Check::at_most(
            "tension_within_wll",
            run.peak_tension,
            wll,
            &format!(
                "The peak chain tension, {:.2} kN, against the working load limit of {:.2} kN.",
                run.peak_tension.to_si() / 1e3,
                wll.to_si() / 1e3
            ),
        ));
    }
    speed_check(inputs, Some(run.max_speed), out)?;
    let end_label = if end_word.contains("bitter end") {
        "bitter end"
    } else if end_word.contains("sea bed") {
        "sea bed"
    } else {
        "landing"
    };
    brake_series(&run, end_length, end_label, out);
    Ok(())
}

fn brake_series(run: &brake::BrakeRun, end_length: Length, end_label: &str, out: &mut Outcome) {
    let mut series = Series::new(
        "let_go",
        &[
            ("time", Dimension::Time),
            ("paid_out", Dimension::Length),
            ("speed", Dimension::Velocity),
            ("tension", Dimension::Force),
            ("brake_force", Dimension::Force),
        ],
    );
    for s in &run.samples {
        series.push(vec![
            s.time.to_si(),
            s.paid_out.to_si(),
            s.speed.to_si(),
            s.tension.to_si(),
            s.brake.to_si(),
        ]);
    }
    series.thin_to(SERIES_ROWS);
    let mut speed_plot = Plot::new(
        "speed",
        "Chain speed during the let-go",
        Axis::new("time from release", Dimension::Time),
        Axis::new("chain speed", Dimension::Velocity),
    )
    .layer(
        Some("speed"),
        LayerStyle::Line,
        series.rows.iter().map(|r| (r[0], r[2])).collect(),
    );
    if let Some(a) = run.applied {
        speed_plot = speed_plot.layer(
            Some("brake applied"),
            LayerStyle::Points,
            vec![(a.time.to_si(), a.speed.to_si())],
        );
    }
    let tension_plot = Plot::new(
        "tension",
        "Chain tension outboard of the wheel and brake force during the let-go",
        Axis::new("time from release", Dimension::Time),
        Axis::new("force", Dimension::Force),
    )
    .layer(
        Some("chain tension at the wheel"),
        LayerStyle::Line,
        series.rows.iter().map(|r| (r[0], r[3])).collect(),
    )
    .layer(
        Some("brake force"),
        LayerStyle::Dashed,
        series.rows.iter().map(|r| (r[0], r[4])).collect(),
    );
    let mut distance_plot = Plot::new(
        "speed_by_length",
        "Chain speed against paid-out length, with where the run must end",
        Axis::new("paid-out length", Dimension::Length),
        Axis::new("chain speed", Dimension::Velocity),
    )
    .layer(
        Some("speed"),
        LayerStyle::Line,
        series.rows.iter().map(|r| (r[1], r[2])).collect(),
    );
    let top = run.max_speed.to_si();
    if let Some(a) = run.applied {
        let x = a.paid_out.to_si();
        distance_plot = distance_plot.layer(
            Some("brake applied"),
            LayerStyle::Reference,
            vec![(x, 0.0), (x, top)],
        );
    }
    distance_plot = distance_plot.layer(
        Some(end_label),
        LayerStyle::Reference,
        vec![(end_length.to_si(), 0.0), (end_length.to_si(), top)],
    );
    out.series.push(series);
    out.plots.push(speed_plot);
    out.plots.push(tension_plot);
    out.plots.push(distance_plot);
}

#[cfg(test)]
mod tests;
