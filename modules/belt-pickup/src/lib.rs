//! The belt-pickup calculation module: bulk material fed onto a moving belt
//! at a loading point is brought up to belt speed.
//!
//! This crate owns the loading-point physics (momentum and energy of the
//! feed, the ISO 5048 acceleration length and skirt friction, the CEMA
//! accelerating tension, which is the same momentum term) in [`physics`],
//! and the [`BeltPickup`] module that maps an item's inputs onto it. It
//! depends on the plug-in contract crate `packwright-api` only.

pub mod physics;

use packwright_api::prelude::*;
use packwright_api::units::format_significant;

use physics::{
    acceleration_force, acceleration_length, acceleration_power, approach_acceleration,
    can_be_carried, dissipated_power, impact_force, iso_gravity, kinetic_power, mean_slip_speed,
    skirt_friction, speed_at,
};

/// The belt-pickup module (`module: belt-pickup` in an item file).
pub struct BeltPickup;

/// Check names, shared by the declaration and the computation.
const CHECK_CARRIED: &str = "material_can_be_accelerated";
const CHECK_SKIRT: &str = "acceleration_length_within_skirt";
const CHECK_LIMIT: &str = "acceleration_length_within_limit";

/// Points along the slipping zone in the speed profile; spaced evenly in
/// speed, not distance, so the steep start of a feed from rest is resolved.
const PROFILE_POINTS: usize = 81;

/// Three significant figures for numbers quoted in notes and explanations.
fn fmt(x: f64) -> String {
    format_significant(x, 3)
}

fn deg(a: Angle) -> f64 {
    a.to_si().to_degrees()
}

impl Module for BeltPickup {
    fn declaration(&self) -> ModuleDeclaration {
        let quarter_turn = std::f64::consts::FRAC_PI_2;
        ModuleDeclaration {
            name: "belt-pickup".into(),
            version: "1.0.0".into(),
            purpose: "Force, power and length needed to bring bulk material fed onto a belt \
                      up to belt speed, with the skirt friction in the acceleration zone."
                .into(),
            inputs: vec![
                InputSpec::quantity(
                    "mass_flow",
                    Dimension::MassRate,
                    "Feed rate onto the belt, ṁ.",
                )
                .above(0.0),
                InputSpec::quantity("belt_speed", Dimension::Velocity, "Belt speed, v.").above(0.0),
                InputSpec::quantity(
                    "feed_speed_along_belt",
                    Dimension::Velocity,
                    "Speed of the arriving material in the belt's direction of travel, v_0 \
                     (from the chute or feeder).",
                )
                .default("0 m/s")
                .at_least(0.0),
                InputSpec::quantity(
                    "feed_speed_normal",
                    Dimension::Velocity,
                    "Speed of the arriving material normal to the belt surface, v_n.",
                )
                .default("0 m/s")
                .at_least(0.0),
                InputSpec::quantity(
                    "belt_slope",
                    Dimension::Angle,
                    "Slope of the belt at the loading point, δ, positive when the belt \
                     climbs in its direction of travel.",
                )
                .default("0 deg")
                .above(-quarter_turn)
                .below(quarter_turn),
                InputSpec::quantity("bulk_density", Dimension::Density, "Loose bulk density, ρ.")
                    .above(0.0),
                InputSpec::number(
                    "belt_friction",
                    "Friction coefficient between material and belt cover, μ1.",
                )
                .above(0.0)
                .at_most(2.0),
                InputSpec::number(
                    "skirt_friction",
                    "Friction coefficient between material and skirt plates, μ2.",
                )
                .at_least(0.0)
                .at_most(2.0),
                InputSpec::quantity(
                    "skirt_width",
                    Dimension::Length,
                    "Clear width between the skirt plates, b1.",
                )
                .above(0.0),
                InputSpec::quantity(
                    "skirt_length",
                    Dimension::Length,
                    "Length of the skirts from the feed point downstream; when given, the \
                     acceleration length is checked against it.",
                )
                .optional()
                .above(0.0),
                InputSpec::material(
                    "material",
                    "bulk",
                    "A named bulk material whose properties fill bulk_density, belt_friction \
                     and skirt_friction where the item leaves them out.",
                )
                .optional(),
            ],
            outputs: vec![
                OutputSpec::new(
                    "acceleration_force",
                    Dimension::Force,
                    "kN",
                    "lbf",
                    "Force the belt applies to bring the feed to belt speed, F_bA = ṁ (v − v_0) \
                     (ISO 5048 F_bA; CEMA T_am); negative when the belt brakes the feed.",
                )
                .key()
                .optional(),
                OutputSpec::new(
                    "acceleration_power",
                    Dimension::Power,
                    "kW",
                    "hp",
                    "Power the drive delivers to the feed, F_bA v.",
                )
                .optional(),
                OutputSpec::new(
                    "kinetic_power",
                    Dimension::Power,
                    "kW",
                    "hp",
                    "Rate of kinetic-energy gain of the feed, ½ ṁ (v² − v_0²).",
                )
                .optional(),
                OutputSpec::new(
                    "dissipated_power",
                    Dimension::Power,
                    "kW",
                    "hp",
                    "Power lost to slip between feed and belt, ½ ṁ (v − v_0)².",
                )
                .optional(),
                OutputSpec::new(
                    "acceleration_length",
                    Dimension::Length,
                    "m",
                    "ft",
                    "Distance from the feed point at which the feed reaches belt speed, l_b.",
                )
                .optional(),
                OutputSpec::new(
                    "skirt_friction_force",
                    Dimension::Force,
                    "kN",
                    "lbf",
                    "Friction between material and skirt plates over the acceleration length, F_f.",
                )
                .optional(),
                OutputSpec::new(
                    "loading_resistance",
                    Dimension::Force,
                    "kN",
                    "lbf",
                    "Resistance of the loading point to the belt, F_bA + F_f.",
                )
                .optional(),
                OutputSpec::new(
                    "loading_power",
                    Dimension::Power,
                    "kW",
                    "hp",
                    "Drive power taken by the loading point, (F_bA + F_f) v.",
                )
                .optional(),
                OutputSpec::new(
                    "impact_force",
                    Dimension::Force,
                    "kN",
                    "lbf",
                    "Mean force of the feed on the impact idlers, ṁ v_n.",
                ),
            ],
            criteria: vec![CriterionSpec::new(
                "max_acceleration_length",
                Dimension::Length,
                None,
                "Longest acceleration length accepted (a layout or owner's limit).",
                "No default: the limit is the project's own (layout, owner's specification); \
                 common practice, no source.",
            )],
            checks: vec![
                CheckSpec::new(
                    CHECK_CARRIED,
                    "Friction can bring the feed to belt speed and carry it there: \
                     μ1 cos δ > |sin δ|.",
                ),
                CheckSpec::new(
                    CHECK_SKIRT,
                    "The feed reaches belt speed before the skirts end (when skirt_length is \
                     given), so it is contained while it slips.",
                ),
                CheckSpec::new(
                    CHECK_LIMIT,
                    "The acceleration length is within max_acceleration_length (when the item \
                     sets one).",
                ),
            ],
            method: method(),
            assumptions: vec![
                "Steady, continuous feed at a constant rate; surges and start-up with the \
                 skirts full are not covered."
                    .into(),
                "The feed slips on the belt as one body with a single, uniform friction \
                 coefficient μ1 over the whole acceleration zone; no internal shear, no air drag."
                    .into(),
                "The feed lands at the feed point; its speed normal to the belt is wholly \
                 destroyed there (no bounce), its speed along the belt is v_0."
                    .into(),
                "The belt speed does not change under load (the drive holds it).".into(),
                "Skirt friction follows ISO 5048: lateral pressure ρ g h on a stream whose \
                 height comes from continuity at the mean speed (v + v_0)/2 between flat skirts \
                 b1 apart; trough shape and the cos δ reduction on a slope are ignored (the \
                 latter errs high)."
                    .into(),
                "Skirt friction beyond the acceleration zone (ISO 5048 F_gl, a special \
                 resistance) and the drag of skirt seals are not included."
                    .into(),
                "g = 9.81 m/s², as ISO 5048 and DIN 22101 calculate.".into(),
            ],
            cautions: vec![
                "An acceleration length longer than the skirts means material still slipping \
                 where it is no longer contained: spillage builds up under the loading point, \
                 and clearing spillage beside a running belt is a leading cause of conveyor \
                 injuries. Lengthen the skirts or reduce the speed difference rather than rely \
                 on clean-up, and isolate the conveyor before anyone clears it."
                    .into(),
                "Friction coefficients vary with moisture, cover wear and temperature: wet or \
                 sticky fines can drop μ1 well below the test value. Check the acceleration \
                 length and, on a climbing belt, the roll-back margin with the lowest credible \
                 μ1."
                .into(),
                "On a climbing belt a loaded belt runs back if the drive stops; the holdback or \
                 brake must be sized for the full-load case, and material that cannot be carried \
                 (μ1 cos δ ≤ sin δ) slides back onto the tail area."
                    .into(),
                "impact_force is the mean of a steady stream. Lumps and surges hit the impact \
                 idlers or bed far harder; size them from the lump mass and drop height, not \
                 from this value."
                    .into(),
                "Starting a belt with material packed between the skirts can take several times \
                 the running skirt friction; the drive's start-up torque must cover it."
                    .into(),
            ],
            references: vec![
                "ISO 5048:1989 (2nd ed.), Continuous mechanical handling equipment — Belt \
                 conveyors with carrying idlers — Calculation of operating power and tensile \
                 forces, clause 4 (secondary resistances: F_bA, skirt friction F_f, minimum \
                 acceleration length). Formulas from memory (medium to high confidence)."
                    .into(),
                "DIN 22101:2011, Stetigförderer — Gurtförderer für Schüttgüter, secondary \
                 resistances (Nebenwiderstände) in the acceleration zone, same structure."
                    .into(),
                "CEMA, Belt Conveyors for Bulk Materials, 7th ed. (2014), ch. 6 Belt tension, \
                 power and drive engineering: accelerating tension T_am = 2.8755e-4 Q (V − V_o) \
                 lbf. Coefficient from memory (high confidence)."
                    .into(),
                "D. Halliday, R. Resnick, Physics (sand dropped on a moving belt: half the \
                 drive's work is lost); K. R. Symon, Mechanics, 3rd ed. (variable-mass systems)."
                    .into(),
            ],
        }
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        let m_dot: MassRate = inputs.quantity("mass_flow")?;
        let v: Velocity = inputs.quantity("belt_speed")?;
        let v0: Velocity = inputs.quantity("feed_speed_along_belt")?;
        let v_n: Velocity = inputs.quantity("feed_speed_normal")?;
        let slope: Angle = inputs.quantity("belt_slope")?;
        let rho: MassDensity = inputs.quantity("bulk_density")?;
        let mu1 = inputs.number("belt_friction")?;
        let mu2 = inputs.number("skirt_friction")?;
        let b1: Length = inputs.quantity("skirt_width")?;
        let skirt_length: Option<Length> = inputs.opt_quantity("skirt_length")?;
        let limit: Option<Length> = inputs.criterion("max_acceleration_length")?;
        let g = iso_gravity();

        let mut out = Outcome::new();
        out.set("impact_force", impact_force(m_dot, v_n));

        let sin_d = slope.sin().to_si();
        let cos_d = slope.cos().to_si();
        if !can_be_carried(mu1, slope) {
            let why = if sin_d > 0.0 {
                format!(
                    "The belt cannot accelerate the material: μ1 cos δ = {} is not more than \
                     sin δ = {}, so on this {} deg climb the material slides back down the belt; \
                     the slope must stay below the friction angle atan μ1 = {} deg.",
                    fmt(mu1 * cos_d),
                    fmt(sin_d),
                    fmt(deg(slope)),
                    fmt(mu1.atan().to_degrees())
                )
            } else {
                format!(
                    "The belt cannot hold the material: μ1 cos δ = {} is not more than \
                     |sin δ| = {}, so on this {} deg descent the material slides down the belt \
                     faster than the belt runs; the descent must stay below the friction angle \
                     atan μ1 = {} deg.",
                    fmt(mu1 * cos_d),
                    fmt(sin_d.abs()),
                    fmt(deg(slope).abs()),
                    fmt(mu1.atan().to_degrees())
                )
            };
            out.check(Check::condition(CHECK_CARRIED, false, &why));
            out.note(
                "The feed never moves steadily at belt speed, so the acceleration force, the \
                 powers, the acceleration length, the skirt friction and the loading resistance \
                 do not exist and are left out; only impact_force is reported, and the \
                 skirt-length checks are not made.",
            );
            return Ok(out);
        }
        out.check(Check::condition(
            CHECK_CARRIED,
            true,
            &format!(
                "μ1 cos δ = {} exceeds |sin δ| = {}, so friction brings the material to belt \
                 speed and carries it there.",
                fmt(mu1 * cos_d),
                fmt(sin_d.abs())
            ),
        ));

        let a = approach_acceleration(g, mu1, slope, v, v0);
        let l_b = acceleration_length(v, v0, a).ok_or_else(|| {
            CalcError::numerical(
                "acceleration_length",
                "the approach to belt speed has no positive acceleration although friction \
                 can carry the material",
                &["belt_friction", "belt_slope"],
            )
        })?;
        let f_ba = acceleration_force(m_dot, v, v0);
        let f_f = skirt_friction(mu2, m_dot, rho, g, l_b, mean_slip_speed(v, v0), b1);
        let resistance = f_ba + f_f;
        out.set("acceleration_force", f_ba);
        out.set("acceleration_power", acceleration_power(m_dot, v, v0));
        out.set("kinetic_power", kinetic_power(m_dot, v, v0));
        out.set("dissipated_power", dissipated_power(m_dot, v, v0));
        out.set("acceleration_length", l_b);
        out.set("skirt_friction_force", f_f);
        out.set("loading_resistance", resistance);
        out.set("loading_power", resistance * v);

        if let Some(skirt) = skirt_length {
            let text = if l_b <= skirt {
                format!(
                    "The material reaches belt speed {} m from the feed point, inside the {} m \
                     skirts, so it is contained while it slips.",
                    fmt(l_b.to_si()),
                    fmt(skirt.to_si())
                )
            } else {
                format!(
                    "The material is still slipping where the skirts end ({} m) and reaches \
                     belt speed only {} m from the feed point, so it can spill over the belt \
                     edges: lengthen the skirts or reduce the speed difference.",
                    fmt(skirt.to_si()),
                    fmt(l_b.to_si())
                )
            };
            out.check(Check::at_most(CHECK_SKIRT, l_b, skirt, &text));
        } else {
            out.note(
                "skirt_length is not given, so the acceleration length is not checked against \
                 the skirts.",
            );
        }
        if let Some(limit) = limit {
            let text = if l_b <= limit {
                format!(
                    "The acceleration length {} m is within the {} m limit set for this item.",
                    fmt(l_b.to_si()),
                    fmt(limit.to_si())
                )
            } else {
                format!(
                    "The acceleration length {} m exceeds the {} m limit set for this item.",
                    fmt(l_b.to_si()),
                    fmt(limit.to_si())
                )
            };
            out.check(Check::at_most(CHECK_LIMIT, l_b, limit, &text));
        }

        let zone = Zone {
            v,
            v0,
            slope,
            mu1,
            a,
            l_b,
            skirt_length,
            limit,
        };
        case_notes(&mut out, &zone);

        let (series, plot) = speed_profile(&zone);
        out.series.push(series);
        out.plots.push(plot);
        Ok(out)
    }
}

/// The method, step by step, in the order the package prints it.
fn method() -> Vec<MethodStep> {
    vec![
        MethodStep::equation(
            "The belt must change the momentum of the feed from v_0 to v in its direction of \
             travel; this is ISO 5048's inertial resistance in the acceleration area F_bA, and \
             CEMA's accelerating tension T_am (in US units T_am = 2.8755e-4 Q (V − V_o) lbf with \
             Q in stph and V in fpm).",
            "F_(b A) = dot(m) (v - v_0)",
        ),
        MethodStep::equation(
            "Power the drive delivers to the feed.",
            "P_A = F_(b A) v = dot(m) v (v - v_0)",
        ),
        MethodStep::equation(
            "Of that power the feed keeps the gain in kinetic energy along the belt; the rest is \
             lost to slip friction. With v_0 = 0 exactly half is lost.",
            "P_k = 1/2 dot(m) (v^2 - v_0^2), quad P_d = P_A - P_k = 1/2 dot(m) (v - v_0)^2",
        ),
        MethodStep::equation(
            "While it slips, friction and the slope change the feed's speed at a constant rate; \
             the first form applies when the belt speeds the feed up, the second when it brakes \
             it (v_0 > v). Friction can carry the feed at belt speed only if the condition on \
             the right holds.",
            "a = g (mu_1 cos delta - sin delta) \" or \" a = g (mu_1 cos delta + sin delta), \
             quad mu_1 cos delta > abs(sin delta)",
        ),
        MethodStep::equation(
            "Acceleration length: the distance from the feed point to where the feed moves at \
             belt speed (ISO 5048 l_b,min for a horizontal belt, where a = g mu_1).",
            "l_b = abs(v^2 - v_0^2) / (2 a)",
        ),
        MethodStep::equation(
            "Speed of the feed along the acceleration zone, then belt speed beyond it.",
            "v(s)^2 = v_0^2 plus.minus 2 a s, quad 0 <= s <= l_b",
        ),
        MethodStep::equation(
            "Friction of the material on the skirt plates over the acceleration length (ISO \
             5048), from the stream height at the mean speed (v + v_0)/2.",
            "F_f = frac(mu_2 dot(m)^2 g l_b, rho ((v + v_0)/2)^2 b_1^2)",
        ),
        MethodStep::equation(
            "Resistance and drive power of the loading point.",
            "F_L = F_(b A) + F_f, quad P_L = F_L v",
        ),
        MethodStep::equation(
            "Mean force on the impact idlers from the feed's speed normal to the belt.",
            "F_i = dot(m) v_n",
        ),
    ]
}

/// The acceleration zone as computed, for the notes and the plot.
#[derive(Clone, Copy)]
struct Zone {
    v: Velocity,
    v0: Velocity,
    slope: Angle,
    mu1: f64,
    /// Rate of approach to belt speed (positive).
    a: Acceleration,
    l_b: Length,
    skirt_length: Option<Length>,
    limit: Option<Length>,
}

/// Notes that tell the reviewer which case applied and why.
fn case_notes(out: &mut Outcome, zone: &Zone) {
    let Zone {
        v,
        v0,
        slope,
        mu1,
        a,
        l_b,
        skirt_length,
        ..
    } = *zone;
    let (v_si, v0_si) = (v.to_si(), v0.to_si());
    if v0_si < v_si {
        out.note(format!(
            "The feed arrives at {} m/s along the belt, slower than the {} m/s belt: the belt \
             speeds it up at {} m/s² and it reaches belt speed {} m from the feed point.",
            fmt(v0_si),
            fmt(v_si),
            fmt(a.to_si()),
            fmt(l_b.to_si())
        ));
    } else if v0_si > v_si {
        out.note(format!(
            "The feed arrives at {} m/s along the belt, faster than the {} m/s belt: the belt \
             brakes it, so acceleration_force, acceleration_power and kinetic_power are negative \
             (the material pushes the belt forward and returns power to the drive) while \
             dissipated_power stays positive. It slows at g (μ1 cos δ + sin δ) = {} m/s² and \
             reaches belt speed after |v² − v0²| / (2 a) = {} m.",
            fmt(v0_si),
            fmt(v_si),
            fmt(a.to_si()),
            fmt(l_b.to_si())
        ));
    } else {
        out.note(
            "The feed arrives at belt speed: there is no slip, the acceleration force, the powers \
             and the acceleration length are zero.",
        );
    }
    let slope_deg = deg(slope);
    if slope_deg != 0.0 && v0_si != v_si {
        let flat = iso_gravity().to_si() * mu1;
        let ratio = a.to_si() / flat;
        out.note(format!(
            "The belt {} at {} deg: the slope changes the rate of approach to belt speed from \
             g μ1 = {} m/s² (horizontal) to {} m/s², so the acceleration length is {} times the \
             horizontal one.",
            if slope_deg > 0.0 {
                "climbs"
            } else {
                "descends"
            },
            fmt(slope_deg.abs()),
            fmt(flat),
            fmt(a.to_si()),
            fmt(1.0 / ratio)
        ));
    }
    if let Some(skirt) = skirt_length {
        if skirt > l_b {
            out.note(format!(
                "Skirt friction over the {} m of skirt beyond the acceleration zone (ISO 5048 \
                 F_gl, a special resistance) is not included in loading_resistance.",
                fmt((skirt - l_b).to_si())
            ));
        }
    }
}

/// The material speed along the acceleration zone, as a series and a plot
/// with the belt speed, the skirt end and the item's limit marked.
fn speed_profile(zone: &Zone) -> (Series, Plot) {
    let Zone {
        v,
        v0,
        a,
        l_b,
        skirt_length,
        limit,
        ..
    } = *zone;
    let (v_si, v0_si, l_si) = (v.to_si(), v0.to_si(), l_b.to_si());
    let marks: Vec<f64> = [skirt_length, limit]
        .iter()
        .flatten()
        .map(|l| l.to_si())
        .collect();
    let far = marks.iter().copied().fold(l_si, f64::max);
    // A zone of zero length (feed at belt speed) still gets a readable axis.
    let x_end = if far > 0.0 { 1.15 * far } else { 1.0 };

    let mut points: Vec<(f64, f64)> = Vec::with_capacity(PROFILE_POINTS + 1);
    if l_si > 0.0 {
        for i in 0..PROFILE_POINTS {
            let speed = v0_si + (v_si - v0_si) * i as f64 / (PROFILE_POINTS - 1) as f64;
            let s = if i + 1 == PROFILE_POINTS {
                l_si
            } else {
                (speed * speed - v0_si * v0_si).abs() / (2.0 * a.to_si())
            };
            // Report the speed the physics gives at s, so the plot and the
            // method cannot disagree.
            points.push((s, speed_at(si(s), v, v0, a).to_si()));
        }
    } else {
        points.push((0.0, v_si));
    }
    points.push((x_end, v_si));

    let mut series = Series::new(
        "speed_along_belt",
        &[
            ("distance", Dimension::Length),
            ("material_speed", Dimension::Velocity),
        ],
    );
    for (s, u) in &points {
        series.push(vec![*s, *u]);
    }
    series.thin_to(200);

    let y_top = 1.1 * v_si.max(v0_si);
    let mut plot = Plot::new(
        "speed_along_belt",
        "Material speed along the acceleration zone",
        Axis::new("distance from the feed point", Dimension::Length),
        Axis::new("material speed along the belt", Dimension::Velocity),
    )
    .layer(Some("material speed"), LayerStyle::Line, points)
    .layer(
        Some("belt speed"),
        LayerStyle::Reference,
        vec![(0.0, v_si), (x_end, v_si)],
    )
    .layer(
        Some("belt speed reached"),
        LayerStyle::Points,
        vec![(l_si, v_si)],
    );
    if let Some(skirt) = skirt_length {
        plot = plot.layer(
            Some("end of skirts"),
            LayerStyle::Reference,
            vec![(skirt.to_si(), 0.0), (skirt.to_si(), y_top)],
        );
    }
    if let Some(limit) = limit {
        plot = plot.layer(
            Some("acceleration length limit"),
            LayerStyle::Reference,
            vec![(limit.to_si(), 0.0), (limit.to_si(), y_top)],
        );
    }
    (series, plot)
}

#[cfg(test)]
mod tests;
