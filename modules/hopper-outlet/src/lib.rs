//! The `hopper-outlet` calculation module: the mass discharge rate of a
//! coarse, free-flowing bulk solid from a bin or hopper outlet, by the
//! Beverloo correlation (circular and slot outlets) or by Johanson's
//! mass-flow hopper rate (conical and plane-flow hoppers).
//!
//! The crate owns the physics (plain functions of `uom` quantities, each with
//! its source) and the mapping from an item's inputs to outputs and checks.
//! It depends on the plug-in contract (`packwright-api`) only.

use packwright_api::prelude::*;
use packwright_api::Dimension as D;

/// The hopper-outlet module (registered by the binary under `hopper-outlet`).
pub struct HopperOutlet;

/// Beverloo et al. (1961) discharge rate through a circular orifice:
/// `W = C rho_b sqrt(g) (D_o - k d_p)^2.5`.
///
/// Source: W.A. Beverloo, H.A. Leniger, J. van de Velde, Chem. Eng. Sci. 15
/// (1961) 260-269; form CONFIRMED in Mankoc et al., Granular Matter 9 (2007).
/// `C` and `k` are empirical (C about 0.58, k about 1.5: from memory, M).
/// Returns `None` when `D_o <= k d_p` (no free flow by this correlation).
pub fn beverloo_circular(
    c: f64,
    k: f64,
    bulk_density: MassDensity,
    outlet_diameter: Length,
    particle_size: Length,
    g: Acceleration,
) -> Option<MassRate> {
    let effective: Length = outlet_diameter - particle_size * k;
    if effective.value <= 0.0 {
        return None;
    }
    let root: Velocity = (g * effective).sqrt();
    Some(bulk_density * effective * effective * root * c)
}

/// Beverloo slot form for a rectangular outlet `L x b` (b the short side):
/// `W = C_s rho_b sqrt(g) (L - k d_p) (b - k d_p)^1.5`, with `C_s` about
/// 1.03.
///
/// Source: the slot form as quoted with the Beverloo correlation (reference
/// sheet section 2.5): FROM MEMORY (L). Returns `None` when either side is
/// not larger than `k d_p`.
pub fn beverloo_slot(
    c_slot: f64,
    k: f64,
    bulk_density: MassDensity,
    outlet_length: Length,
    outlet_width: Length,
    particle_size: Length,
    g: Acceleration,
) -> Option<MassRate> {
    let l_eff: Length = outlet_length - particle_size * k;
    let b_eff: Length = outlet_width - particle_size * k;
    if l_eff.value <= 0.0 || b_eff.value <= 0.0 {
        return None;
    }
    let root: Velocity = (g * b_eff).sqrt();
    Some(bulk_density * l_eff * b_eff * root * c_slot)
}

/// Johanson (1965) mean outlet velocity of a coarse, free-flowing solid in a
/// mass-flow hopper: `v_o = sqrt(B g / (2 (1 + m) tan theta'))`, with m = 1
/// for a conical hopper (B the outlet diameter) and m = 0 for plane flow
/// (B the slot width); theta' is the hopper half-angle from the vertical.
///
/// Source: J.R. Johanson, "Method of calculating rate of discharge from
/// hoppers and bins", Trans. SME 232 (1965) 69-80; FROM MEMORY (M).
pub fn johanson_outlet_velocity(
    outlet_size: Length,
    half_angle: Angle,
    conical: bool,
    g: Acceleration,
) -> Velocity {
    let m = if conical { 1.0 } else { 0.0 };
    let tan = half_angle.value.tan();
    (outlet_size * g / (2.0 * (1.0 + m) * tan)).sqrt()
}

/// Johanson (1965) mass-flow rate `Q = rho_b A_o v_o` (see
/// [`johanson_outlet_velocity`]); FROM MEMORY (M).
pub fn johanson_mass_flow(
    bulk_density: MassDensity,
    outlet_area: Area,
    outlet_size: Length,
    half_angle: Angle,
    conical: bool,
    g: Acceleration,
) -> MassRate {
    bulk_density * outlet_area * johanson_outlet_velocity(outlet_size, half_angle, conical, g)
}

/// The outlet as the item describes it, after validation.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Outlet {
    Circular { diameter: Length },
    Slot { width: Length, length: Length },
}

impl Outlet {
    fn area(self) -> Area {
        match self {
            Outlet::Circular { diameter } => diameter * diameter * (std::f64::consts::PI / 4.0),
            Outlet::Slot { width, length } => width * length,
        }
    }

    /// The controlling (smallest) outlet dimension.
    fn size(self) -> Length {
        match self {
            Outlet::Circular { diameter } => diameter,
            Outlet::Slot { width, .. } => width,
        }
    }
}

/// Reads and validates the outlet shape and the inputs each method needs.
fn read_outlet(inputs: &Inputs) -> Result<Outlet, Vec<CalcError>> {
    let mut errors = Vec::new();
    let shape = inputs.choice("outlet_shape").map_err(|e| vec![e])?;
    let need = |name: &str, why: &str, example: &str, errors: &mut Vec<CalcError>| {
        if !inputs.given(name) {
            errors.push(CalcError::input(
                name,
                inputs
                    .span_of("outlet_shape")
                    .or_else(|| inputs.span_of("method")),
                &format!("`{name}` is needed {why}"),
                example,
            ));
        }
    };
    match shape {
        "circular" => need(
            "outlet_diameter",
            "for a circular outlet",
            "`outlet_diameter: 400 mm`",
            &mut errors,
        ),
        _ => {
            need(
                "outlet_width",
                "for a slot outlet (the short side)",
                "`outlet_width: 300 mm`",
                &mut errors,
            );
            need(
                "outlet_length",
                "for a slot outlet (the long side)",
                "`outlet_length: 1200 mm`",
                &mut errors,
            );
        }
    }
    let method = inputs.choice("method").map_err(|e| vec![e])?;
    match method {
        "beverloo" => need(
            "particle_size",
            "for the Beverloo correlation",
            "`particle_size: 8 mm` (or from the material)",
            &mut errors,
        ),
        _ => need(
            "hopper_half_angle",
            "for the Johanson mass-flow rate",
            "`hopper_half_angle: 20 deg` (from the vertical)",
            &mut errors,
        ),
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    let outlet = if shape == "circular" {
        Outlet::Circular {
            diameter: inputs.quantity("outlet_diameter").map_err(|e| vec![e])?,
        }
    } else {
        let width: Length = inputs.quantity("outlet_width").map_err(|e| vec![e])?;
        let length: Length = inputs.quantity("outlet_length").map_err(|e| vec![e])?;
        if length < width {
            return Err(vec![CalcError::input(
                "outlet_length",
                inputs.span_of("outlet_length"),
                "the slot length is shorter than its width",
                "`outlet_width` the short side and `outlet_length` the long side, for example 300 mm and 1200 mm",
            )]);
        }
        Outlet::Slot { width, length }
    };
    if method == "beverloo" {
        let d: Length = inputs.quantity("particle_size").map_err(|e| vec![e])?;
        let k = inputs.number("shape_factor").map_err(|e| vec![e])?;
        let (name, side) = match outlet {
            Outlet::Circular { diameter } => ("outlet_diameter", diameter),
            Outlet::Slot { width, .. } => ("outlet_width", width),
        };
        if side <= d * k {
            return Err(vec![CalcError::input(
                name,
                inputs.span_of(name),
                &format!(
                    "the outlet ({:.4} m) is not larger than k d_p = {:.4} m, so the Beverloo correlation gives no flow; such an outlet arches by particle interlocking",
                    side.value,
                    (d * k).value
                ),
                "an outlet at least 6 particle sizes across, for example `outlet_diameter: 300 mm` for 25 mm lumps",
            )]);
        }
    }
    Ok(outlet)
}

impl Module for HopperOutlet {
    fn declaration(&self) -> ModuleDeclaration {
        ModuleDeclaration {
            name: "hopper-outlet".into(),
            version: "1.0.0".into(),
            purpose: "Mass discharge rate of a coarse, free-flowing bulk solid from a bin or hopper outlet (Beverloo; Johanson mass-flow rate).".into(),
            inputs: vec![
                InputSpec::choice("method", &["beverloo", "johanson"], "Rate method: Beverloo orifice correlation, or Johanson mass-flow hopper rate.").default("beverloo"),
                InputSpec::choice("outlet_shape", &["circular", "slot"], "Outlet shape: circular (conical hopper) or slot (plane-flow hopper).").default("circular"),
                InputSpec::quantity("outlet_diameter", D::Length, "Outlet diameter D_o (circular outlet).").above(0.0).optional(),
                InputSpec::quantity("outlet_width", D::Length, "Slot width b, the short side (slot outlet).").above(0.0).optional(),
                InputSpec::quantity("outlet_length", D::Length, "Slot length L, the long side (slot outlet).").above(0.0).optional(),
                InputSpec::material("material", "bulk", "Named bulk material; fills bulk_density and particle_size.").optional(),
                InputSpec::quantity("bulk_density", D::Density, "Loose-poured bulk density rho_b of the flowing solid.").above(0.0),
                InputSpec::quantity("particle_size", D::Length, "Characteristic (mean) particle size d_p (Beverloo).").above(0.0).optional(),
                InputSpec::quantity("hopper_half_angle", D::Angle, "Hopper half-angle theta' from the vertical (Johanson).").above(0.0).below(std::f64::consts::FRAC_PI_2).optional(),
                InputSpec::number("discharge_coefficient", "Beverloo discharge coefficient C, circular outlet (0.55 to 0.65; 0.58 from memory).").above(0.0).default("0.58"),
                InputSpec::number("slot_coefficient", "Beverloo slot coefficient C_s (about 1.03, from memory, low confidence).").above(0.0).default("1.03"),
                InputSpec::number("shape_factor", "Beverloo particle shape factor k (1.3 to 2.9; 1.5 as Nedderman recommends, from memory).").at_least(0.0).default("1.5"),
                InputSpec::quantity("bin_diameter", D::Length, "Diameter (or least width) of the bin above the outlet, for the Beverloo validity check.").above(0.0).optional(),
                InputSpec::quantity("required_mass_flow", D::MassRate, "Mass flow the outlet must deliver (feeder or conveyor demand).").above(0.0).optional(),
            ],
            outputs: vec![
                OutputSpec::new("outlet_mass_flow", D::MassRate, "t/h", "stph", "Discharge rate W by the chosen method.").key(),
                OutputSpec::new("outlet_area", D::Area, "m2", "ft2", "Outlet area A_o."),
                OutputSpec::new("outlet_velocity", D::Velocity, "m/s", "ft/s", "Mean velocity of the solid through the outlet, W / (rho_b A_o)."),
                OutputSpec::new("outlet_volume_flow", D::VolumeRate, "m3/h", "ft3/h", "Volume discharge rate at bulk density."),
                OutputSpec::new("beverloo_mass_flow", D::MassRate, "t/h", "stph", "Beverloo rate, for comparison when particle_size is known.").optional(),
                OutputSpec::new("johanson_mass_flow", D::MassRate, "t/h", "stph", "Johanson mass-flow rate, for comparison when hopper_half_angle is known.").optional(),
                OutputSpec::number("outlet_to_particle_ratio", "Outlet size over particle size, D_o / d_p (slot: b / d_p).").optional(),
            ],
            criteria: vec![
                CriterionSpec::new("min_outlet_to_particle_ratio", D::Dimensionless, Some("6"), "Least outlet size over particle size for the correlation to hold.", "Beverloo correlation validity D_o > 6 d_p (reference sheet section 2.5; from memory, M)"),
                CriterionSpec::new("min_particle_size", D::Length, Some("0.4 mm"), "Least particle size for which air counter-flow is negligible.", "Beverloo correlation validity d_p > 0.4 mm (reference sheet section 2.5; from memory, M)"),
                CriterionSpec::new("min_slot_aspect_ratio", D::Dimensionless, Some("3"), "Least slot length over width for plane flow.", "common practice, no source"),
            ],
            checks: vec![
                CheckSpec::new("meets_required_mass_flow", "The outlet discharges at least the required mass flow."),
                CheckSpec::new("outlet_to_particle_ratio", "The outlet is large enough against the particle size for the correlation to hold."),
                CheckSpec::new("particle_size_coarse", "The particles are coarse enough that air counter-flow does not reduce the rate."),
                CheckSpec::new("bin_large_enough", "The bin is wide enough that its walls do not change the orifice rate (Beverloo)."),
                CheckSpec::new("slot_aspect_ratio", "The slot is long enough against its width to flow as a plane-flow outlet."),
            ],
            method: vec![
                MethodStep::equation("Beverloo, circular outlet (Beverloo, Leniger and van de Velde 1961):", "W = C rho_b sqrt(g) (D_o - k d_p)^(5/2)"),
                MethodStep::equation("Beverloo, slot outlet of length L and width b (slot form, from memory):", "W = C_s rho_b sqrt(g) (L - k d_p) (b - k d_p)^(3/2)"),
                MethodStep::equation("Johanson (1965) mean outlet velocity in a mass-flow hopper; m = 1 conical (B = D_o), m = 0 plane flow (B = b):", "v_o = sqrt(frac(B g, 2 (1 + m) tan theta'))"),
                MethodStep::equation("Johanson mass-flow rate:", "W = rho_b A_o v_o"),
                MethodStep::text("The rate is compared with the required mass flow and the correlation's validity limits are checked (outlet against particle size, particle size against air counter-flow, bin width)."),
            ],
            assumptions: vec![
                "The solid is coarse, dry, free flowing and cohesionless; the rate does not depend on the head of material above the outlet.".into(),
                "The outlet is fully open and discharges freely to atmosphere, with no feeder restricting it (a feeder sets its own rate, which must be below this one).".into(),
                "Johanson's rate assumes the hopper is in mass flow; Beverloo's applies to a flat-bottomed or funnel-flow bin and is commonly used for any coarse solid.".into(),
                "Interstitial air pressure gradients are neglected.".into(),
            ],
            cautions: vec![
                "Fine powders (below about 0.4 mm) discharge far slower than these rates because air must flow in against the solid; they can also flood uncontrollably when aerated. Use a method that accounts for the air pressure gradient.".into(),
                "Cohesive or moist materials can arch (bridge) or rathole over the outlet: the outlet must first be sized to ensure flow (Jenike's flow-function method from shear tests), and only then does a discharge rate mean anything. Clearing a hang-up by entering or rodding from above the bin has killed people: never enter a bin that is not isolated and emptied.".into(),
                "In funnel flow the rate can surge and material can stagnate; Johanson's rate holds only if the hopper walls are steep and smooth enough for mass flow (check the half-angle against wall-friction tests).".into(),
                "An outlet that discharges faster than the downstream conveyor or feeder can take floods the belt: provide a feeder or gate that controls the rate.".into(),
            ],
            references: vec![
                "W.A. Beverloo, H.A. Leniger, J. van de Velde, The flow of granular solids through orifices, Chem. Eng. Sci. 15 (1961) 260-269.".into(),
                "C. Mankoc et al., The flow rate of granular materials through an orifice, Granular Matter 9 (2007) 407-414 (validity limits).".into(),
                "J.R. Johanson, Method of calculating rate of discharge from hoppers and bins, Trans. SME 232 (1965) 69-80.".into(),
                "R.M. Nedderman, Statics and Kinematics of Granular Materials, Cambridge University Press (1992), chapter 10 (value k = 1.5).".into(),
            ],
        }
    }

    fn check_inputs(&self, inputs: &Inputs) -> Vec<CalcError> {
        match read_outlet(inputs) {
            Ok(_) => Vec::new(),
            Err(errors) => errors,
        }
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        let outlet = read_outlet(inputs).map_err(|mut e| e.remove(0))?;
        let g = standard_gravity();
        let method = inputs.choice("method")?;
        let rho: MassDensity = inputs.quantity("bulk_density")?;
        let c = inputs.number("discharge_coefficient")?;
        let c_slot = inputs.number("slot_coefficient")?;
        let k = inputs.number("shape_factor")?;
        let d_p: Option<Length> = inputs.opt_quantity("particle_size")?;
        let half_angle: Option<Angle> = inputs.opt_quantity("hopper_half_angle")?;
        let mut out = Outcome::new();

        let beverloo = d_p.and_then(|d| match outlet {
            Outlet::Circular { diameter } => beverloo_circular(c, k, rho, diameter, d, g),
            Outlet::Slot { width, length } => beverloo_slot(c_slot, k, rho, length, width, d, g),
        });
        let area = outlet.area();
        let conical = matches!(outlet, Outlet::Circular { .. });
        let johanson =
            half_angle.map(|a| johanson_mass_flow(rho, area, outlet.size(), a, conical, g));
        let w =
            match method {
                "beverloo" => {
                    beverloo.ok_or_else(|| {
                        CalcError::numerical(
                    "outlet_mass_flow",
                    "the Beverloo correlation gives no flow for this outlet and particle size",
                    &["outlet_diameter", "outlet_width", "particle_size", "shape_factor"],
                )
                    })?
                }
                _ => johanson.ok_or_else(|| CalcError::missing("hopper_half_angle"))?,
            };
        out.set("outlet_mass_flow", w);
        out.set("outlet_area", area);
        let v_o: Velocity = w / (rho * area);
        out.set("outlet_velocity", v_o);
        let q: VolumeRate = w / rho;
        out.set("outlet_volume_flow", q);
        if let Some(b) = beverloo {
            out.set("beverloo_mass_flow", b);
        }
        if let Some(j) = johanson {
            out.set("johanson_mass_flow", j);
        }
        match (method, outlet) {
            ("beverloo", Outlet::Circular { .. }) => out.note("Beverloo correlation, circular outlet: coefficients C and k are empirical (from memory, medium confidence)."),
            ("beverloo", Outlet::Slot { .. }) => out.note("Beverloo slot form: the slot coefficient is from memory with low confidence; confirm it against tests or the original paper before relying on the rate."),
            (_, Outlet::Circular { .. }) => out.note("Johanson mass-flow rate for a conical hopper (m = 1, B = outlet diameter)."),
            (_, Outlet::Slot { .. }) => out.note("Johanson mass-flow rate for a plane-flow hopper (m = 0, B = slot width)."),
        }
        if let (Some(b), Some(j)) = (beverloo, johanson) {
            out.note(format!(
                "Both methods could be evaluated: Beverloo {:.1} t/h, Johanson {:.1} t/h; their difference is a measure of the uncertainty of either.",
                b.value * 3.6,
                j.value * 3.6
            ));
        }

        if let Some(required) = inputs.opt_quantity::<MassRate>("required_mass_flow")? {
            out.check(Check::at_least(
                "meets_required_mass_flow",
                w,
                required,
                "The free discharge rate of the outlet must be at least the rate the downstream equipment demands, otherwise the bin cannot supply it.",
            ));
        }
        if let Some(d) = d_p {
            let ratio = (outlet.size() / d).value;
            out.set_number("outlet_to_particle_ratio", ratio);
            if let Some(limit) = inputs.criterion_number("min_outlet_to_particle_ratio")? {
                out.check(Check::at_least(
                    "outlet_to_particle_ratio",
                    Ratio::from_si(ratio),
                    Ratio::from_si(limit),
                    "The outlet must be several particle sizes across: smaller outlets arch by interlocking and the correlation does not hold.",
                ));
            }
            if let Some(limit) = inputs.criterion::<Length>("min_particle_size")? {
                out.check(Check::at_least(
                    "particle_size_coarse",
                    d,
                    limit,
                    "Below this particle size the air drawn in against the solid slows the discharge and the rate is overestimated.",
                ));
            }
            if let Some(bin) = inputs.opt_quantity::<Length>("bin_diameter")? {
                let size = outlet.size();
                let needed = if size * 2.5 > size + d * 30.0 {
                    size * 2.5
                } else {
                    size + d * 30.0
                };
                out.check(Check::at_least(
                    "bin_large_enough",
                    bin,
                    needed,
                    "The bin must be wider than 2.5 outlet sizes and than the outlet plus 30 particle sizes (Mankoc et al. 2007), or its walls change the rate.",
                ));
            }
        }
        if let Outlet::Slot { width, length } = outlet {
            if let Some(limit) = inputs.criterion_number("min_slot_aspect_ratio")? {
                out.check(Check::at_least(
                    "slot_aspect_ratio",
                    Ratio::from_si((length / width).value),
                    Ratio::from_si(limit),
                    "A short slot flows as a three-dimensional outlet, not in plane flow, and the slot forms do not apply.",
                ));
            }
        }
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const G_REF: f64 = 9.81; // reference sheet: all check values use g = 9.81 m/s²

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    fn g() -> Acceleration {
        si(G_REF)
    }

    #[test]
    fn declaration_is_valid() {
        assert_eq!(HopperOutlet.declaration().validate(), Ok(()));
    }

    // Beverloo et al. (1961), form CONFIRMED (Mankoc et al. 2007); C = 0.58,
    // k = 1.5 from memory (M). Check values: reference sheet section 2.5.
    #[test]
    fn beverloo_circular_check_values() {
        let w = beverloo_circular(0.58, 1.5, si(1600.0), si(0.10), si(0.002), g()).unwrap();
        assert!(rel(w.value, 8.5175) < 1e-4, "{}", w.value);
        assert!(rel(w.value * 3.6, 30.66) < 2e-4);
        let w = beverloo_circular(0.58, 1.5, si(1600.0), si(0.30), si(0.005), g()).unwrap();
        assert!(rel(w.value, 134.49) < 1e-4, "{}", w.value);
        assert!(beverloo_circular(0.58, 1.5, si(1600.0), si(0.01), si(0.01), g()).is_none());
    }

    // Beverloo slot form, FROM MEMORY (L): reference sheet section 2.5.
    #[test]
    fn beverloo_slot_check_value() {
        let w = beverloo_slot(1.03, 1.5, si(1600.0), si(0.5), si(0.1), si(0.002), g()).unwrap();
        assert!(rel(w.value, 77.50) < 1e-4, "{}", w.value);
    }

    // Johanson (1965), FROM MEMORY (M): reference sheet section 2.6.
    #[test]
    fn johanson_check_values() {
        let half: Angle = si(20f64.to_radians());
        let v = johanson_outlet_velocity(si(0.3), half, true, g());
        assert!(rel(v.value, 1.42178) < 1e-4, "{}", v.value);
        let area: Area = si(std::f64::consts::PI * 0.09 / 4.0);
        let q = johanson_mass_flow(si(1600.0), area, si(0.3), half, true, g());
        assert!(rel(q.value, 160.80) < 1e-4, "{}", q.value);
        let half: Angle = si(25f64.to_radians());
        let v = johanson_outlet_velocity(si(0.2), half, false, g());
        assert!(rel(v.value, 1.45043) < 1e-4, "{}", v.value);
        let q = johanson_mass_flow(si(1600.0), si(0.2), si(0.2), half, false, g());
        assert!(rel(q.value, 464.14) < 1e-4, "{}", q.value);
    }

    fn inputs(pairs: &[(&str, &str)]) -> Inputs {
        Inputs::from_text(&HopperOutlet.declaration(), pairs).unwrap()
    }

    #[test]
    fn module_beverloo_uses_standard_gravity_and_checks() {
        let i = inputs(&[
            ("outlet_diameter", "300 mm"),
            ("bulk_density", "1600 kg/m3"),
            ("particle_size", "5 mm"),
            ("required_mass_flow", "450 t/h"),
            ("bin_diameter", "3 m"),
        ]);
        assert!(HopperOutlet.check_inputs(&i).is_empty());
        let out = HopperOutlet.compute(&i).unwrap();
        let w = out.outputs["outlet_mass_flow"].value;
        // The same check value, scaled from g = 9.81 to standard gravity.
        let expected = 134.49 * (9.80665f64 / G_REF).sqrt();
        assert!(rel(w, expected) < 1e-4, "{w}");
        let required = out
            .checks
            .iter()
            .find(|c| c.name == "meets_required_mass_flow")
            .unwrap();
        assert_eq!(required.status, Status::Pass); // 484 t/h >= 450 t/h
        for name in [
            "outlet_to_particle_ratio",
            "particle_size_coarse",
            "bin_large_enough",
        ] {
            let c = out.checks.iter().find(|c| c.name == name).unwrap();
            assert_eq!(c.status, Status::Pass, "{name}");
        }
        assert!(!out.outputs.contains_key("johanson_mass_flow"));
    }

    #[test]
    fn module_johanson_slot_and_failed_demand() {
        let i = inputs(&[
            ("method", "johanson"),
            ("outlet_shape", "slot"),
            ("outlet_width", "0.2 m"),
            ("outlet_length", "1.0 m"),
            ("bulk_density", "1600 kg/m3"),
            ("hopper_half_angle", "25 deg"),
            ("required_mass_flow", "2000 t/h"),
        ]);
        let out = HopperOutlet.compute(&i).unwrap();
        let w = out.outputs["outlet_mass_flow"].value;
        let expected = 464.14 * (9.80665f64 / G_REF).sqrt();
        assert!(rel(w, expected) < 1e-4, "{w}");
        let c = out
            .checks
            .iter()
            .find(|c| c.name == "meets_required_mass_flow")
            .unwrap();
        assert_eq!(c.status, Status::Fail); // 1671 t/h < 2000 t/h
        let slot = out
            .checks
            .iter()
            .find(|c| c.name == "slot_aspect_ratio")
            .unwrap();
        assert_eq!(slot.status, Status::Pass);
    }

    #[test]
    fn missing_inputs_are_reported() {
        let i = inputs(&[("bulk_density", "1600 kg/m3"), ("outlet_diameter", "0.3 m")]);
        let errors = HopperOutlet.check_inputs(&i);
        assert_eq!(errors.len(), 1);
        assert!(matches!(&errors[0], CalcError::Input { input, .. } if input == "particle_size"));
        assert!(HopperOutlet.compute(&i).is_err());
        let i = inputs(&[
            ("bulk_density", "1600 kg/m3"),
            ("outlet_shape", "slot"),
            ("particle_size", "5 mm"),
        ]);
        assert_eq!(HopperOutlet.check_inputs(&i).len(), 2);
    }

    #[test]
    fn outlet_smaller_than_particles_is_an_input_error() {
        let i = inputs(&[
            ("bulk_density", "1600 kg/m3"),
            ("outlet_diameter", "30 mm"),
            ("particle_size", "25 mm"),
        ]);
        let errors = HopperOutlet.check_inputs(&i);
        assert!(
            matches!(&errors[..], [CalcError::Input { input, message, .. }] if input == "outlet_diameter" && message.contains("arches"))
        );
        assert_eq!(HopperOutlet.compute(&i).unwrap_err(), errors[0]);
    }
}
