//! The `chute-discharge` calculation module: a belt conveyor's discharge
//! through a transfer chute onto a receiving belt. The stream's section on
//! the belt (ISO 5048 troughed geometry), its release off the head pulley
//! and free trajectory (CEMA method), the first impact on the chute, the
//! flow along the chute (Roberts' chute-flow model), and the exit velocity
//! resolved onto the receiving belt, with checks and a to-scale elevation.
//!
//! The crate owns the physics (plain functions in `section`, `release`,
//! `path` and `flow`, each with its source) and the mapping from an item's
//! inputs to outputs. It depends on the plug-in contract
//! (`packwright-api`) only.
//!
//! Coordinates: head-pulley centre at the origin, x horizontal in the
//! direction of belt travel, y up, metres.

pub mod flow;
pub mod path;
pub mod release;
pub mod section;

use flow::{exit_components, follow_stream, Ending, Passage, PassageError};
use packwright_api::prelude::*;
use packwright_api::Dimension as D;
use path::{parse_chute, ChutePath};
use release::{cema_release, Release};
use section::{full_section, section_for_area, section_for_depth, Section};

/// The chute-discharge module (registered by the binary under `chute-discharge`).
pub struct ChuteDischarge;

const CHUTE_SHAPE: &str = "a list of connected segments in the side elevation (head-pulley centre at the origin, x in the direction of belt travel, y up; points in metres unless a unit is given), each `- line: { from: [x, y], to: [x, y] }` or `- arc: { centre: [x, y], radius: 1.0 m, from_angle: 0 deg, to_angle: -70 deg }` (angles counter-clockwise from +x, the path running from from_angle to to_angle)";

fn deg(x: f64) -> f64 {
    x.to_radians()
}

/// Everything computed before the outputs are written.
struct Analysis {
    belt_section: Section,
    full: Section,
    overfilled: bool,
    depth_given: bool,
    flow_area: Area,
    layers: [Release; 3],
    path: ChutePath,
    passage: Passage,
}

fn read_path(inputs: &Inputs) -> Result<ChutePath, Vec<CalcError>> {
    let node = inputs
        .structured("chute")
        .map_err(|e| vec![e])?
        .ok_or_else(|| vec![CalcError::missing("chute")])?;
    parse_chute(node)
}

fn analyse(inputs: &Inputs, path: ChutePath) -> Result<Analysis, CalcError> {
    let g = standard_gravity();
    let m_dot: MassRate = inputs.quantity("mass_flow")?;
    let v: Velocity = inputs.quantity("belt_speed")?;
    let rho: MassDensity = inputs.quantity("bulk_density")?;
    let belt_width: Length = inputs.quantity("belt_width")?;
    let trough: Angle = inputs.quantity("trough_angle")?;
    let l3: Length = inputs.quantity("centre_roll_length")?;
    let surcharge: Angle = inputs.quantity("surcharge_angle")?;
    let t_b: Length = inputs.quantity("belt_thickness")?;
    let d_p: Length = inputs.quantity("pulley_diameter")?;
    let slope: Angle = inputs.quantity("belt_slope")?;
    let mu = inputs.number("chute_friction")?;
    let retention = inputs.number("impact_retention")?;
    if trough.value > 0.0 && l3 >= section::usable_width(belt_width) {
        return Err(CalcError::input(
            "centre_roll_length",
            inputs.span_of("centre_roll_length"),
            "the centre roll is as long as the loaded width of the belt",
            "a centre roll shorter than the belt, for example `centre_roll_length: 465 mm` for a 1200 mm belt",
        ));
    }

    let flow_area: Area = m_dot / (rho * v);
    let full = full_section(belt_width, l3, trough, surcharge);
    let depth_given = inputs.given("burden_depth");
    let (belt_section, overfilled) = match inputs.opt_quantity::<Length>("burden_depth")? {
        Some(h) => section_for_depth(h, belt_width, l3, trough, surcharge),
        None => section_for_area(flow_area, belt_width, l3, trough, surcharge),
    };
    let r_belt = d_p * 0.5 + t_b;
    let layers = [
        cema_release(v, r_belt, slope, g),
        cema_release(v, r_belt + belt_section.centroid_height, slope, g),
        cema_release(v, r_belt + belt_section.depth, slope, g),
    ];
    let passage = follow_stream(&path, &layers[1], mu, retention, g).map_err(|e| match e {
        PassageError::NeverMeets => CalcError::input(
            "chute",
            Some(path.span.clone()),
            &format!(
                "the stream's centroid leaves the pulley at ({:.3}, {:.3}) m at {:.2} m/s, {:.1} deg to the horizontal, and its trajectory never meets the chute path",
                layers[1].x.value,
                layers[1].y.value,
                v.value,
                layers[1].launch_angle.value.to_degrees()
            ),
            "a chute path that lies across the trajectory (head-pulley centre at the origin, x in the direction of belt travel, y up)",
        ),
    })?;
    Ok(Analysis {
        belt_section,
        full,
        overfilled,
        depth_given,
        flow_area,
        layers,
        path,
        passage,
    })
}

fn velocity_out(name: &str, meaning: &str) -> OutputSpec {
    OutputSpec::new(name, D::Velocity, "m/s", "ft/s", meaning)
}

fn length_out(name: &str, meaning: &str) -> OutputSpec {
    OutputSpec::new(name, D::Length, "m", "ft", meaning)
}

fn angle_out(name: &str, meaning: &str) -> OutputSpec {
    OutputSpec::new(name, D::Angle, "deg", "deg", meaning)
}

impl Module for ChuteDischarge {
    fn declaration(&self) -> ModuleDeclaration {
        let pi = std::f64::consts::PI;
        ModuleDeclaration {
            name: "chute-discharge".into(),
            version: "1.0.0".into(),
            purpose: "Discharge trajectory off a head pulley, impact on the transfer chute, flow along it (Roberts) and exit velocity onto the receiving belt.".into(),
            inputs: vec![
                InputSpec::quantity("mass_flow", D::MassRate, "Mass flow on the feeding belt, m_dot.").above(0.0),
                InputSpec::quantity("belt_speed", D::Velocity, "Speed of the feeding belt, v.").above(0.0),
                InputSpec::material("material", "bulk", "Named bulk material; fills bulk_density, surcharge_angle and chute_friction.").optional(),
                InputSpec::quantity("bulk_density", D::Density, "Bulk density of the conveyed material, rho_b.").above(0.0),
                InputSpec::quantity("belt_width", D::Length, "Width of the feeding belt, B.").above(0.0),
                InputSpec::quantity("trough_angle", D::Angle, "Trough angle of the wing rolls, lambda (0 for a flat belt).").at_least(0.0).at_most(deg(60.0)).default("35 deg"),
                InputSpec::quantity("centre_roll_length", D::Length, "Length of the centre roll, l_3.").above(0.0),
                InputSpec::quantity("surcharge_angle", D::Angle, "Dynamic surcharge angle of the burden, theta.").above(0.0).at_most(deg(45.0)),
                InputSpec::quantity("belt_thickness", D::Length, "Total thickness of the feeding belt, t_b.").at_least(0.0),
                InputSpec::quantity("pulley_diameter", D::Length, "Head pulley diameter over lagging, D.").above(0.0),
                InputSpec::quantity("belt_slope", D::Angle, "Slope of the belt approaching the head pulley, alpha (positive climbing, negative declined).").at_least(deg(-30.0)).at_most(deg(30.0)).default("0 deg"),
                InputSpec::quantity("burden_depth", D::Length, "Burden depth at the belt centre, h, if known (otherwise from the section filled to the flow area).").above(0.0).optional(),
                InputSpec::structured("chute", CHUTE_SHAPE, "The chute path in the side elevation, in the order the stream runs along it."),
                InputSpec::number("chute_friction", "Equivalent friction coefficient of the stream on the chute, mu_E (Roberts).").at_least(0.0).at_most(2.0),
                InputSpec::number("impact_retention", "Fraction of the tangential speed kept at an impact, C_r (0 to 1; the normal component is always lost).").at_least(0.0).at_most(1.0),
                InputSpec::quantity("chute_width", D::Length, "Inside width of the chute at its exit, W_c.").above(0.0),
                InputSpec::quantity("receiving_belt_speed", D::Velocity, "Speed of the receiving belt, v_r.").above(0.0),
                InputSpec::quantity("receiving_belt_slope", D::Angle, "Slope of the receiving belt under the chute, beta_r (positive climbing in its direction of travel).").at_least(deg(-30.0)).at_most(deg(30.0)).default("0 deg"),
                InputSpec::quantity("plan_angle", D::Angle, "Plan angle between the belts, phi (0 in line, 90 deg for a right-angle transfer).").at_least(-pi).at_most(pi).default("0 deg"),
            ],
            outputs: vec![
                OutputSpec::new("flow_area", D::Area, "m2", "ft2", "Cross-section of the burden on the feeding belt, A = m_dot / (rho_b v)."),
                OutputSpec::number("fill_ratio", "Burden section over the full ISO 5048 section at the surcharge angle."),
                OutputSpec::new("burden_depth", D::Length, "mm", "in", "Burden depth at the belt centre, h."),
                OutputSpec::new("centroid_height", D::Length, "mm", "in", "Height of the burden's centroid above the belt, a_1."),
                OutputSpec::number("discharge_ratio", "CEMA discharge ratio V^2 / (g r) at the centroid radius."),
                angle_out("release_angle", "Position of the centroid's release point from top dead centre of the pulley, positive in the direction of travel."),
                angle_out("launch_angle", "Direction of the centroid's velocity at release, above the horizontal."),
                length_out("release_x_bottom", "Release point of the bottom layer (belt surface), x."),
                length_out("release_y_bottom", "Release point of the bottom layer, y."),
                length_out("release_x_centroid", "Release point of the centroid layer, x."),
                length_out("release_y_centroid", "Release point of the centroid layer, y."),
                length_out("release_x_top", "Release point of the top layer, x."),
                length_out("release_y_top", "Release point of the top layer, y."),
                length_out("impact_point_x", "First impact of the centroid trajectory on the chute, x."),
                length_out("impact_point_y", "First impact of the centroid trajectory on the chute, y."),
                velocity_out("impact_speed", "Speed of the stream arriving at the first impact."),
                angle_out("impact_angle", "Angle between the arriving stream and the chute surface at the first impact."),
                velocity_out("impact_speed_normal", "Speed component normal to the chute at the first impact (lost)."),
                velocity_out("speed_after_impact", "Speed along the chute just after the first impact."),
                velocity_out("exit_speed", "Speed of the stream leaving the chute.").optional(),
                velocity_out("exit_speed_along_belt", "Exit velocity component along the receiving belt's direction of travel.").optional().key(),
                velocity_out("exit_speed_normal", "Exit velocity component normal to the receiving belt, positive towards it.").optional(),
                velocity_out("exit_speed_across_belt", "Exit velocity component across the receiving belt (horizontal, square to its travel).").optional(),
                OutputSpec::number("speed_ratio", "Exit speed along the receiving belt over the receiving belt speed.").optional(),
                OutputSpec::new("stream_area_at_exit", D::Area, "m2", "ft2", "Cross-section of the stream leaving the chute at bulk density, m_dot / (rho_b v_e).").optional(),
                OutputSpec::new("exit_stream_depth", D::Length, "mm", "in", "Stream depth at the exit across the chute width, A_e / W_c.").optional(),
                length_out("exit_point_x", "Exit point of the stream from the chute, x.").optional(),
                length_out("exit_point_y", "Exit point of the stream from the chute, y.").optional(),
            ],
            criteria: vec![
                CriterionSpec::new("min_speed_ratio", D::Dimensionless, Some("0.8"), "Least exit speed along the receiving belt over its speed.", "common practice, no source"),
                CriterionSpec::new("max_speed_ratio", D::Dimensionless, Some("1.2"), "Greatest exit speed along the receiving belt over its speed.", "common practice, no source"),
                CriterionSpec::new("max_impact_angle", D::Angle, Some("20 deg"), "Greatest angle between the stream and the chute at an impact (liner wear, noise, degradation).", "common practice, no source"),
                CriterionSpec::new("max_exit_depth_ratio", D::Dimensionless, Some("0.5"), "Greatest stream depth at the exit over the chute width.", "common practice, no source"),
                CriterionSpec::new("max_fill_ratio", D::Dimensionless, Some("1.0"), "Greatest burden section over the full ISO 5048 section.", "ISO 5048:1989 clause 6 section, which already keeps the standard edge distance (from memory, M)"),
            ],
            checks: vec![
                CheckSpec::new("no_stall", "The stream keeps moving all along the chute."),
                CheckSpec::new("stream_stays_on_chute", "The stream does not lift off the chute without landing on it again."),
                CheckSpec::new("speed_ratio_min", "The stream arrives at least this fast along the receiving belt, relative to it."),
                CheckSpec::new("speed_ratio_max", "The stream arrives no faster than this along the receiving belt, relative to it."),
                CheckSpec::new("impact_angle", "Every impact of the stream on the chute is glancing enough."),
                CheckSpec::new("exit_stream_depth", "The stream at the exit is shallow enough against the chute width."),
                CheckSpec::new("belt_fill", "The burden fits the feeding belt's section."),
            ],
            method: vec![
                MethodStep::equation("Burden section from the flow (continuity):", "A = dot(m) / (rho_b v)"),
                MethodStep::equation("ISO 5048:1989 clause 6 usable width (B <= 2 m) and full section of a three-roll trough:", "b = 0.9 B - 0.05 \"m\", quad A_1 = [l_3 + (b - l_3) cos lambda]^2 (tan theta) / 6, quad A_2 = [l_3 + (b - l_3)/2 cos lambda] [(b - l_3)/2 sin lambda]"),
                MethodStep::text("The burden lies over a narrower spread when the belt is part-filled; the spread is solved so that the section equals A. The surcharge cap is a parabola meeting the edges at the surcharge angle, which gives the depth h and the centroid height a_1."),
                MethodStep::equation("Layer radii on the pulley, bottom, centroid and top:", "r_b = D/2 + t_b, quad r_c = r_b + a_1, quad r_t = r_b + h"),
                MethodStep::equation("CEMA release condition for each layer (belt slope alpha): the layer leaves at the tangent point if", "frac(V^2, g r) >= cos alpha"),
                MethodStep::equation("otherwise it rides round the pulley and leaves at the angle theta past top dead centre where", "cos theta = frac(V^2, g r)"),
                MethodStep::equation("Free flight of each layer from its release point (launch angle gamma; air drag neglected):", "x = x_0 + V cos gamma t, quad y = y_0 + V sin gamma t - 1/2 g t^2"),
                MethodStep::text("The first crossing of the centroid trajectory with the chute path is the impact point. The speed component normal to the surface is lost; the tangential component is kept times C_r."),
                MethodStep::equation("Along the chute (Roberts' continuum model, equivalent friction mu_E), with u = v^2/2, path direction t, normal n from the surface into the stream, curvature kappa (positive when concave to the stream):", "frac(d u, d s) = -g t_y - mu_E N, quad N = 2 u kappa + g n_y"),
                MethodStep::equation("On a concave arc of radius R this is Roberts' equation, theta from the horizontal through the centre; it is integrated with an adaptive Dormand-Prince 5(4) scheme and checked against its closed form:", "v frac(d v, d theta) = g R (cos theta - mu_E sin theta) - mu_E v^2"),
                MethodStep::equation("On a straight plate inclined beta below the horizontal:", "v^2 = v_0^2 + 2 g L (sin beta - mu_E cos beta)"),
                MethodStep::text("The stream stalls where its speed falls to zero, and lifts off (a convex arc, an overhang, a kink turning away) where N falls to zero; it then flies free until it meets the path again. A kink turning into the stream is an impact like the first."),
                MethodStep::equation("Exit velocity (v_x, v_y) resolved onto the receiving belt at plan angle phi and slope beta_r:", "v_\"along\" = v_x cos phi cos beta_r + v_y sin beta_r, quad v_\"normal\" = v_x cos phi sin beta_r - v_y cos beta_r"),
                MethodStep::equation("Speed ratio, stream section at exit and its depth across the chute:", "k_v = v_\"along\" / v_r, quad A_e = dot(m) / (rho_b v_e), quad h_e = A_e / W_c"),
            ],
            assumptions: vec![
                "Air drag on the trajectory is neglected, and so are CEMA's slip and adhesion refinements: the stream leaves the pulley at belt speed.".into(),
                "The stream is a continuum moving as one body along the chute (Roberts' lumped model) with a constant equivalent friction mu_E; the speed dependence of mu_E through the stream depth is not modelled.".into(),
                "The chute is a path in the side elevation; side-wall effects are in mu_E, and a plan curvature of the chute is not modelled.".into(),
                "At an impact the normal velocity component is lost and the tangential one is kept times the retention factor; the stream does not rebound.".into(),
                "The stream leaves the end of the path directly onto the receiving belt; its speed and section at exit are those at the end of the path, at bulk density.".into(),
                "The burden section does not include ISO 5048's reduction factor for an inclined belt.".into(),
            ],
            cautions: vec![
                "Chutes block. A stall, a build-up on a shallow plate or a choked exit fills the chute in seconds; never clear a blocked chute by entering it or rodding from below while the conveyors are not isolated and locked out: material hangs up and falls without warning.".into(),
                "High impact angles and speeds wear liners fast and break lumps; worn-through plates and falling liner bolts are a hazard to people under and beside the chute. Inspect wear at the computed impact point.".into(),
                "The equivalent friction of wet, sticky or fine material can be far higher than for dry material, and carry-back builds up: check the stall case with the worst friction expected, not the average.".into(),
                "A stream arriving much slower or faster than the receiving belt, or across it, spills, wears the belt and raises dust; skirting must contain it over the acceleration length.".into(),
                "Guard the head pulley and the chute inspection doors: a moving belt and stream can draw in a hand, and doors opened while running let material out.".into(),
            ],
            references: vec![
                "CEMA, Belt Conveyors for Bulk Materials, 7th edition (2014), chapter on discharge trajectories (release condition and trajectory).".into(),
                "ISO 5048:1989, Continuous mechanical handling equipment - Belt conveyors with carrying idlers - Calculation of operating power and tensile forces, clause 6 (cross-section).".into(),
                "A.W. Roberts, Chute Performance and Design for Rapid Flow Conditions, Chem. Eng. Technol. 26 (2003) 163-170.".into(),
                "A.W. Roberts, Chute Design Considerations for Feeding and Transfer (continuum chute-flow model).".into(),
                "D.B. Hastie, P.W. Wypych, Conveyor trajectory discharge angles, ICBMH (2007) (review of the CEMA method).".into(),
                "J.R. Dormand, P.J. Prince, A family of embedded Runge-Kutta formulae, J. Comput. Appl. Math. 6 (1980) 19-26.".into(),
            ],
        }
    }

    fn check_inputs(&self, inputs: &Inputs) -> Vec<CalcError> {
        match read_path(inputs) {
            Err(errors) => errors,
            // With the geometry sound, also see whether the stream meets it;
            // other missing inputs are the engine's to report.
            Ok(path) => match analyse(inputs, path) {
                Err(e @ CalcError::Input { .. }) if is_ours(&e) => vec![e],
                _ => Vec::new(),
            },
        }
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        let path = read_path(inputs).map_err(|mut e| e.remove(0))?;
        let a = analyse(inputs, path)?;
        let m_dot: MassRate = inputs.quantity("mass_flow")?;
        let rho: MassDensity = inputs.quantity("bulk_density")?;
        let mut out = Outcome::new();
        write_belt_and_release(&mut out, inputs, &a)?;
        write_impact(&mut out, inputs, &a)?;
        write_exit(&mut out, inputs, &a, m_dot, rho)?;
        write_profile_and_plot(&mut out, inputs, &a)?;
        Ok(out)
    }
}

/// Whether an input error is one this module raises (not a missing input).
fn is_ours(e: &CalcError) -> bool {
    matches!(e, CalcError::Input { input, span: Some(_), .. } if input == "chute" || input == "centre_roll_length")
}

fn write_belt_and_release(
    out: &mut Outcome,
    inputs: &Inputs,
    a: &Analysis,
) -> Result<(), CalcError> {
    out.set("flow_area", a.flow_area);
    let fill = (a.flow_area / a.full.area).value;
    out.set_number("fill_ratio", fill);
    out.set("burden_depth", a.belt_section.depth);
    out.set("centroid_height", a.belt_section.centroid_height);
    if a.depth_given {
        out.note(format!(
            "The burden depth is given ({:.0} mm); the layer radii use it, with the centroid of the section of that depth{}.",
            a.belt_section.depth.value * 1000.0,
            if a.overfilled { " scaled from the full section (the depth exceeds the full section's)" } else { "" }
        ));
    } else if a.overfilled {
        out.note("The flow exceeds the full ISO 5048 section: the depth is that of the full spread with a raised surcharge cap.");
    }
    if let Some(limit) = inputs.criterion_number("max_fill_ratio")? {
        out.check(Check::at_most(
            "belt_fill",
            Ratio::from_si(fill),
            Ratio::from_si(limit),
            "The burden section needed to carry the flow must fit the belt's standard section, or the belt spills before the head pulley.",
        ));
    }
    let c = &a.layers[1];
    out.set_number("discharge_ratio", c.ratio);
    out.set("release_angle", c.position_angle);
    out.set("launch_angle", c.launch_angle);
    for (layer, name) in a.layers.iter().zip(["bottom", "centroid", "top"]) {
        out.set(&format!("release_x_{name}"), layer.x);
        out.set(&format!("release_y_{name}"), layer.y);
    }
    let slope: Angle = inputs.quantity("belt_slope")?;
    out.note(if c.at_tangent {
        format!(
            "CEMA release: V^2/(g r) = {:.3} >= cos(alpha) = {:.3} at the centroid, so the stream leaves at the belt's tangent point, {:.1} deg to the horizontal.",
            c.ratio,
            slope.value.cos(),
            c.launch_angle.value.to_degrees()
        )
    } else {
        format!(
            "CEMA release: V^2/(g r) = {:.3} < cos(alpha) = {:.3} at the centroid, so the stream rides round the pulley and leaves {:.1} deg past top dead centre, where cos(theta) = V^2/(g r).",
            c.ratio,
            slope.value.cos(),
            c.position_angle.value.to_degrees()
        )
    });
    if a.layers[0].at_tangent != a.layers[2].at_tangent {
        out.note("The bottom and top layers release differently (one at the tangent point, one further round the pulley): the stream spreads at release.");
    }
    out.note("Air drag on the trajectory is neglected.");
    Ok(())
}

fn write_impact(out: &mut Outcome, inputs: &Inputs, a: &Analysis) -> Result<(), CalcError> {
    let impacts = &a.passage.impacts;
    let first = impacts[0];
    out.set("impact_point_x", si::<Length>(first.point[0]));
    out.set("impact_point_y", si::<Length>(first.point[1]));
    out.set("impact_speed", si::<Velocity>(first.speed));
    out.set("impact_angle", si::<Angle>(first.angle));
    out.set("impact_speed_normal", si::<Velocity>(first.normal_speed));
    out.set("speed_after_impact", si::<Velocity>(first.speed_after));
    for imp in impacts.iter().filter(|i| i.reversed) {
        out.note(format!(
            "At ({:.2}, {:.2}) m the stream arrives pointing back up the chute; it is taken to start from rest along the chute there.",
            imp.point[0], imp.point[1]
        ));
    }
    if impacts.len() > 1 {
        out.note(format!(
            "The stream strikes the chute {} times (after a lift-off or at a kink); the impact angle check takes the worst.",
            impacts.len()
        ));
    }
    for (p, s) in &a.passage.lift_offs {
        out.note(format!(
            "The stream lifts off the chute at ({:.2}, {:.2}) m, {:.2} m along the path, where the normal force falls to zero.",
            p[0], p[1], s
        ));
    }
    if let Some(limit) = inputs.criterion::<Angle>("max_impact_angle")? {
        let worst = impacts
            .iter()
            .copied()
            .max_by(|x, y| x.angle.total_cmp(&y.angle))
            .unwrap_or(first);
        out.check(Check::at_most(
            "impact_angle",
            si::<Angle>(worst.angle),
            limit,
            &format!(
                "The stream must strike the chute at a glancing angle to limit liner wear and lump breakage; the worst impact is at ({:.2}, {:.2}) m.",
                worst.point[0], worst.point[1]
            ),
        ));
    }
    Ok(())
}

fn write_exit(
    out: &mut Outcome,
    inputs: &Inputs,
    a: &Analysis,
    m_dot: MassRate,
    rho: MassDensity,
) -> Result<(), CalcError> {
    let stalled = matches!(a.passage.ending, Ending::Stall { .. });
    let left = matches!(a.passage.ending, Ending::LeftChute { .. });
    out.check(Check::condition(
        "no_stall",
        !stalled,
        &match a.passage.ending {
            Ending::Stall { point, distance } => format!(
                "The stream stops {distance:.2} m along the chute at ({:.2}, {:.2}) m: friction outweighs gravity there and the chute will block.",
                point[0], point[1]
            ),
            _ => "The stream keeps moving to the end of the chute.".to_string(),
        },
    ));
    out.check(Check::condition(
        "stream_stays_on_chute",
        !left,
        &match a.passage.ending {
            Ending::LeftChute { point, .. } => format!(
                "The stream leaves the chute at ({:.2}, {:.2}) m and does not meet it again: it flies free and the chute does not guide it onto the belt.",
                point[0], point[1]
            ),
            _ => "The stream stays on the chute (or lands on it again) to the end of the path.".to_string(),
        },
    ));
    let Ending::Exit { point, velocity } = a.passage.ending else {
        out.note(
            "The exit velocity is not given: the stream does not reach the end of the chute path.",
        );
        return Ok(());
    };
    let plan: Angle = inputs.quantity("plan_angle")?;
    let slope_r: Angle = inputs.quantity("receiving_belt_slope")?;
    let v_r: Velocity = inputs.quantity("receiving_belt_speed")?;
    let w_c: Length = inputs.quantity("chute_width")?;
    let speed = velocity[0].hypot(velocity[1]);
    let (along, normal, across) = exit_components(velocity, plan, slope_r);
    out.set("exit_speed", si::<Velocity>(speed));
    out.set("exit_speed_along_belt", si::<Velocity>(along));
    out.set("exit_speed_normal", si::<Velocity>(normal));
    out.set("exit_speed_across_belt", si::<Velocity>(across));
    out.set("exit_point_x", si::<Length>(point[0]));
    out.set("exit_point_y", si::<Length>(point[1]));
    let ratio = along / v_r.value;
    out.set_number("speed_ratio", ratio);
    if normal < 0.0 {
        out.note("The stream leaves the chute moving away from the receiving belt's surface (negative normal speed): check the exit geometry.");
    }
    if let Some(min) = inputs.criterion_number("min_speed_ratio")? {
        out.check(Check::at_least(
            "speed_ratio_min",
            Ratio::from_si(ratio),
            Ratio::from_si(min),
            "A stream much slower along the belt than the belt must be accelerated on it, which wears the belt and spills at the skirts.",
        ));
    }
    if let Some(max) = inputs.criterion_number("max_speed_ratio")? {
        out.check(Check::at_most(
            "speed_ratio_max",
            Ratio::from_si(ratio),
            Ratio::from_si(max),
            "A stream much faster along the belt than the belt bounces and rolls forward on it, spilling and raising dust.",
        ));
    }
    if speed > 0.0 {
        let area: Area = m_dot / (rho * si::<Velocity>(speed));
        out.set("stream_area_at_exit", area);
        let depth: Length = area / w_c;
        out.set("exit_stream_depth", depth);
        if let Some(max) = inputs.criterion_number("max_exit_depth_ratio")? {
            out.check(Check::at_most(
                "exit_stream_depth",
                Ratio::from_si((depth / w_c).value),
                Ratio::from_si(max),
                "The stream at the exit must be shallow against the chute width, or it fills the chute and chokes when the flow surges or the friction rises.",
            ));
        }
    } else {
        out.note("The stream leaves the chute at zero speed: the exit section is undefined and the exit checks are not made.");
    }
    Ok(())
}

fn write_profile_and_plot(
    out: &mut Outcome,
    inputs: &Inputs,
    a: &Analysis,
) -> Result<(), CalcError> {
    let mut series = Series::new(
        "speed_profile",
        &[
            ("distance along chute", D::Length),
            ("speed", D::Velocity),
            ("height", D::Length),
        ],
    );
    for p in &a.passage.profile {
        series.push(vec![p.distance, p.speed, p.point[1]]);
    }
    series.thin_to(200);
    out.series.push(series);

    let g = standard_gravity().value;
    let d_p: Length = inputs.quantity("pulley_diameter")?;
    let t_b: Length = inputs.quantity("belt_thickness")?;
    let slope: Angle = inputs.quantity("belt_slope")?;
    let belt_width: Length = inputs.quantity("belt_width")?;
    let plan: Angle = inputs.quantity("plan_angle")?;
    let slope_r: Angle = inputs.quantity("receiving_belt_slope")?;
    let r_p = d_p.value / 2.0;
    let r_b = r_p + t_b.value;
    let circle = |r: f64, from: f64, to: f64, n: usize| -> Vec<(f64, f64)> {
        (0..=n)
            .map(|i| {
                let phi = from + (to - from) * i as f64 / n as f64;
                (r * phi.sin(), r * phi.cos())
            })
            .collect()
    };
    let alpha = slope.value;
    let mut belt = vec![(
        -r_b * alpha.sin() - 2.0 * alpha.cos(),
        r_b * alpha.cos() - 2.0 * alpha.sin(),
    )];
    belt.extend(circle(r_b, -alpha, std::f64::consts::PI, 60));
    belt.push((-2.0, -r_b));

    let mut plot = Plot::new(
        "elevation",
        "Side elevation of the transfer, to scale (head-pulley centre at the origin)",
        Axis::new(
            "horizontal distance in the direction of belt travel",
            D::Length,
        ),
        Axis::new("height above the head-pulley centre", D::Length),
    )
    .layer(
        Some("head pulley"),
        LayerStyle::Surface,
        circle(r_p, 0.0, std::f64::consts::TAU, 72),
    )
    .layer(Some("feeding belt"), LayerStyle::Surface, belt);
    plot.equal_scale = true;

    // Centroid: the flight to the first impact. Bottom and top layers: to
    // their own first crossing with the chute, or down past its lowest point.
    let flight = |r: &Release| -> Vec<(f64, f64)> {
        let s = r.state_at(si(0.0), si(g));
        let (p, v) = ([s[0], s[1]], [s[2], s[3]]);
        let t_end = a.path.first_crossing(p, v, g, None).map_or_else(
            || {
                let floor = a.path.lowest() - 0.5;
                let disc = v[1] * v[1] + 2.0 * g * (p[1] - floor).max(0.0);
                (v[1] + disc.sqrt()) / g
            },
            |c| c.time,
        );
        (0..=80)
            .map(|i| {
                let t = t_end * i as f64 / 80.0;
                (p[0] + v[0] * t, p[1] + v[1] * t - 0.5 * g * t * t)
            })
            .collect()
    };
    let as_pairs = |pts: &[[f64; 2]]| pts.iter().map(|p| (p[0], p[1])).collect::<Vec<_>>();
    plot = plot
        .layer(
            Some("trajectory, centroid"),
            LayerStyle::Line,
            as_pairs(&a.passage.flights[0]),
        )
        .layer(
            Some("trajectory, bottom and top layers"),
            LayerStyle::Dashed,
            flight(&a.layers[0]),
        )
        .layer(None, LayerStyle::Dashed, flight(&a.layers[2]));
    for f in a.passage.flights.iter().skip(1) {
        plot = plot.layer(None, LayerStyle::Line, as_pairs(f));
    }
    plot = plot.layer(
        Some("chute"),
        LayerStyle::Surface,
        as_pairs(&a.path.polyline(3f64.to_radians())),
    );
    let impacts: Vec<(f64, f64)> = a
        .passage
        .impacts
        .iter()
        .map(|i| (i.point[0], i.point[1]))
        .collect();
    plot = plot.layer(Some("impact points"), LayerStyle::Points, impacts);
    let end = match a.passage.ending {
        Ending::Exit { point, .. }
        | Ending::Stall { point, .. }
        | Ending::LeftChute { point, .. } => point,
    };
    if let Ending::Stall { point, .. } = a.passage.ending {
        plot = plot.layer(
            Some("stall point"),
            LayerStyle::Points,
            vec![(point[0], point[1])],
        );
    }
    let (phi, beta) = (plan.value, slope_r.value);
    let receiving = if phi.cos().abs() >= 0.2 {
        // The belt's direction of travel projected on the elevation.
        let d = [phi.cos() * beta.cos(), beta.sin()];
        vec![
            (end[0] - 0.5 * d[0], end[1] - 0.5 * d[1]),
            (end[0] + 2.5 * d[0], end[1] + 2.5 * d[1]),
        ]
    } else {
        // The receiving belt runs across the view: show its width.
        let w = belt_width.value / 2.0;
        vec![(end[0] - w, end[1]), (end[0] + w, end[1])]
    };
    plot = plot.layer(Some("receiving belt"), LayerStyle::Surface, receiving);
    out.plots.push(plot);
    Ok(())
}

#[cfg(test)]
mod tests;
