//! Short-link lifting chain as the hoisting medium: the load-bearing area of
//! a link, an axial modulus, and the breaking force of EN 818-2 grade 8.
//!
//! The same published formulas are written in the chain-payout module; they
//! are repeated here because modules depend on the plug-in contract only.
//! Owns no state.

use packwright_api::prelude::*;

/// Load-bearing cross-section of one chain link of nominal (wire) diameter
/// d: both legs of the link carry the load, A = 2 π d² / 4.
///
/// reference.md §3.5 (studless chain axial stiffness, DNV-OS-E301 post-2010
/// values as quoted in a secondary source, CONFIRMED): A = 2 · π d²/4.
pub fn link_area(diameter: Length) -> Area {
    diameter * diameter * (2.0 * std::f64::consts::PI / 4.0)
}

/// Axial modulus of a chain of nominal diameter d, taken as the DNV studless
/// R3 mooring-chain value E = (5.40 − 0.0040 d[mm]) · 10¹⁰ Pa on the area of
/// [`link_area`].
///
/// reference.md §3.5 gives this formula for R3 studless mooring chain
/// (CONFIRMED as quoted). For EN 818-2 grade 8 short-link lifting chain there
/// is no published value in the reference sheet: using the R3 formula for it
/// is an approximation from memory, to be verified with the chain maker.
pub fn studless_r3_modulus(diameter: Length) -> Pressure {
    let d_mm = diameter.to_si() * 1000.0;
    si((5.40 - 0.0040 * d_mm) * 1e10)
}

/// Axial stiffness at the hook of `falls` parallel legs of chain, each of
/// free length L: k = n E A / L with A = 2 π d²/4 and E from
/// [`studless_r3_modulus`] (approximation, see there).
pub fn chain_stiffness(falls: u64, diameter: Length, fall_length: Length) -> Stiffness {
    studless_r3_modulus(diameter) * link_area(diameter) / fall_length * falls as f64
}

/// Minimum breaking force of EN 818-2 grade 8 chain of nominal diameter d:
/// BF = 2 · (π/4) · d² · 800 N/mm² (a mean stress of 800 N/mm² on both legs).
///
/// reference.md §3.5 (EN 818 Annex A basis, CONSISTENT with the EN 818-2
/// working load limit table, which is from memory H).
pub fn g8_breaking_force(diameter: Length) -> Force {
    let stress: Pressure = si(800e6);
    stress * link_area(diameter)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs()
    }

    // reference.md §3.5, EN 818-2 grade 8 (CONSISTENT): d = 16 mm gives
    // A = 2 π (16 mm)²/4 = 4.0212e-4 m² and BF = 321.7 kN (800 N/mm² on
    // both legs; the table's WLL 8 t is a quarter of it rounded down).
    #[test]
    fn g8_16mm_area_and_breaking_force() {
        let d: Length = si(0.016);
        assert!(close(link_area(d).to_si(), 4.0212e-4, 1e-4));
        assert!(close(g8_breaking_force(d).to_si(), 321.7e3, 1e-4));
        // 8 mm and 13 mm check values of the same sheet: 80.4 kN, 212.4 kN.
        assert!(close(g8_breaking_force(si(0.008)).to_si(), 80.4e3, 1e-3));
        assert!(close(g8_breaking_force(si(0.013)).to_si(), 212.4e3, 1e-3));
    }

    // reference.md §3.5 studless R3 modulus (CONFIRMED as quoted):
    // E = (5.40 − 0.0040 · 16) · 10¹⁰ = 5.336e10 Pa at 16 mm; the sheet's own
    // check at 76 mm: E = 5.096e10 Pa, A = 9.0729e-3 m², EA = 462.36 MN.
    // For grade 8 the formula is an approximation from memory.
    #[test]
    fn studless_modulus_and_stiffness() {
        assert!(close(
            studless_r3_modulus(si(0.016)).to_si(),
            (5.40 - 0.0040 * 16.0) * 1e10,
            1e-12
        ));
        let d76: Length = si(0.076);
        assert!(close(studless_r3_modulus(d76).to_si(), 5.096e10, 1e-4));
        assert!(close(link_area(d76).to_si(), 9.0729e-3, 1e-4));
        let k1 = chain_stiffness(1, d76, si(1.0));
        assert!(close(k1.to_si(), 462.36e6, 1e-4));
        // Two legs of 4 m of 16 mm chain: k = 2 E A / L.
        let k = chain_stiffness(2, si(0.016), si(4.0));
        assert!(close(k.to_si(), 2.0 * 5.336e10 * 4.0212e-4 / 4.0, 1e-4));
    }
}
