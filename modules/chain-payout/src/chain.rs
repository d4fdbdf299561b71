//! Chain strength by grade: the published breaking- and proof-load formulas
//! for stud-link anchor chain (IACS U1–U3) and offshore mooring chain (DNV
//! R3, R3S, R4), and the EN 818-2 grade 8 lifting-chain rating.
//!
//! Sizes are nominal (bar) diameters. Each function names its source and how
//! sure the values are, with the labels of the project's reference sheet.
//! Owns no state.

use packwright_api::prelude::*;

/// A chain grade the module knows a strength formula for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Grade {
    /// IACS stud-link anchor chain, grade U1 (mild steel).
    U1,
    /// IACS stud-link anchor chain, grade U2 (special quality).
    U2,
    /// IACS stud-link anchor chain, grade U3 (extra special quality).
    U3,
    /// Offshore mooring chain, grade R3.
    R3,
    /// Offshore mooring chain, grade R3S.
    R3S,
    /// Offshore mooring chain, grade R4.
    R4,
    /// EN 818-2 grade 8 short-link lifting chain (medium tolerance).
    G8,
}

impl Grade {
    /// The grade from its input word.
    pub fn from_word(word: &str) -> Option<Grade> {
        Some(match word {
            "U1" => Grade::U1,
            "U2" => Grade::U2,
            "U3" => Grade::U3,
            "R3" => Grade::R3,
            "R3S" => Grade::R3S,
            "R4" => Grade::R4,
            "G8" => Grade::G8,
            _ => return None,
        })
    }

    /// The input words, in the order the declaration lists them.
    pub const WORDS: [&'static str; 7] = ["U1", "U2", "U3", "R3", "R3S", "R4", "G8"];
}

/// The size function of the IACS and DNV chain formulas,
/// `f(d) = d² (44 − 0.08 d)` with `d` in mm, returned as the plain number
/// the grade coefficients multiply to give kN.
///
/// Source: IACS UR W18 (anchor chain) and DNV-OS-E302 / IACS UR W22
/// (mooring chain). CONSISTENT: the form reproduces published stud-link and
/// mooring-chain tables exactly (reference sheet §3.4, §3.5); the clause
/// text itself was not seen.
pub fn size_function(d: Length) -> f64 {
    let d_mm = d.to_si() * 1e3;
    d_mm * d_mm * (44.0 - 0.08 * d_mm)
}

/// Minimum breaking load `c_b · f(d)` kN of an IACS or DNV grade; `None`
/// for grade 8 lifting chain, which is rated by [`g8_breaking_force`].
///
/// Coefficients (kN per unit of f(d)): U1 0.00981, U2 0.01373, U3 0.01961
/// (IACS UR W18, CONSISTENT with the published stud-link table); R3 0.0223,
/// R3S 0.0249, R4 0.0274 (DNV-OS-E302, CONSISTENT with a manufacturer's
/// table 34–70 mm).
pub fn formula_breaking_load(grade: Grade, d: Length) -> Option<Force> {
    let c = match grade {
        Grade::U1 => 0.00981,
        Grade::U2 => 0.01373,
        Grade::U3 => 0.01961,
        Grade::R3 => 0.0223,
        Grade::R3S => 0.0249,
        Grade::R4 => 0.0274,
        Grade::G8 => return None,
    };
    Some(si(c * size_function(d) * 1e3))
}

/// Proof load `c_p · f(d)` kN of an IACS or DNV grade; `None` for grade 8.
///
/// Coefficients: U1 0.00686, U2 0.00981, U3 0.01373 (IACS UR W18,
/// CONSISTENT); R3 0.0156 (stud and studless), R3S 0.0180 stud / 0.0174
/// studless, R4 0.0216 stud / 0.0192 studless (DNV-OS-E302, CONSISTENT).
pub fn formula_proof_load(grade: Grade, d: Length, studless: bool) -> Option<Force> {
    let c = match (grade, studless) {
        (Grade::U1, _) => 0.00686,
        (Grade::U2, _) => 0.00981,
        (Grade::U3, _) => 0.01373,
        (Grade::R3, _) => 0.0156,
        (Grade::R3S, false) => 0.0180,
        (Grade::R3S, true) => 0.0174,
        (Grade::R4, false) => 0.0216,
        (Grade::R4, true) => 0.0192,
        (Grade::G8, _) => return None,
    };
    Some(si(c * size_function(d) * 1e3))
}

/// Cross-section of both legs of a link, `2 π d² / 4`.
fn two_legs(d: Length) -> Area {
    2.0 * std::f64::consts::FRAC_PI_4 * d * d
}

/// EN 818-2 grade 8 minimum breaking force: 800 N/mm² mean stress on both
/// legs, `BF = 2 (π/4) d² · 800 N/mm²`.
///
/// Source: EN 818-2 (grade 8 lifting chain) with the stress basis of EN 818
/// Annex A. CONSISTENT, FROM MEMORY (H): the basis reproduces the grade 4
/// sibling table of EN 818-3, which was seen (reference sheet §3.5).
pub fn g8_breaking_force(d: Length) -> Force {
    two_legs(d) * si::<Pressure>(800e6)
}

/// EN 818-2 grade 8 manufacturing proof force: 500 N/mm² on both legs.
/// Same source and label as [`g8_breaking_force`].
pub fn g8_proof_force(d: Length) -> Force {
    two_legs(d) * si::<Pressure>(500e6)
}

/// EN 818-2 grade 8 working load limits by nominal size: (d mm, WLL t).
///
/// Source: EN 818-2 table of mechanical properties. CONSISTENT, FROM MEMORY
/// (H): every entry is the 200 N/mm² two-leg rating rounded down to the R40
/// preferred-number series (reference sheet §3.5).
pub const G8_WLL_TABLE: [(f64, f64); 20] = [
    (4.0, 0.5),
    (5.0, 0.8),
    (6.0, 1.12),
    (7.0, 1.5),
    (8.0, 2.0),
    (10.0, 3.15),
    (13.0, 5.3),
    (16.0, 8.0),
    (18.0, 10.0),
    (19.0, 11.2),
    (20.0, 12.5),
    (22.0, 15.0),
    (23.0, 16.0),
    (25.0, 20.0),
    (26.0, 21.2),
    (28.0, 25.0),
    (32.0, 31.5),
    (36.0, 40.0),
    (40.0, 50.0),
    (45.0, 63.0),
];

/// The EN 818-2 working load limit of a grade 8 chain of nominal size `d`,
/// as a mass (the standard rates chain in tonnes); `None` when `d` is not a
/// size of the table (to 0.05 mm).
pub fn g8_working_load_limit(d: Length) -> Option<Mass> {
    let d_mm = d.to_si() * 1e3;
    G8_WLL_TABLE
        .iter()
        .find(|(size, _)| (size - d_mm).abs() < 0.05)
        .map(|(_, t)| si::<Mass>(t * 1e3))
}

/// The unrounded EN 818 rating `2 (π/4) d² · 200 N/mm² / g_n`, as a mass;
/// the table value is this rounded down to the R40 series.
pub fn g8_unrounded_rating(d: Length) -> Mass {
    two_legs(d) * si::<Pressure>(200e6) / standard_gravity()
}

/// The brake holding requirement of IACS UR A3 (Rev.1 2019): the brake must
/// hold 80 % of the chain's specified minimum breaking strength without a
/// chain stopper, 45 % where a chain stopper is fitted. CONFIRMED
/// (reference sheet §3.4).
pub fn ur_a3_brake_holding(minimum_breaking_load: Force, chain_stopper: bool) -> Force {
    minimum_breaking_load * if chain_stopper { 0.45 } else { 0.80 }
}

/// The continuous duty pull of IACS UR A3, `Z_cont1 = k d²` N with `d` in
/// mm and `k` = 37.5 (U1), 42.5 (U2), 47.5 (U3); `None` for other grades.
/// FROM MEMORY (M–H), reference sheet §3.4. Reported for information.
pub fn ur_a3_continuous_pull(grade: Grade, d: Length) -> Option<Force> {
    let k = match grade {
        Grade::U1 => 37.5,
        Grade::U2 => 42.5,
        Grade::U3 => 47.5,
        _ => return None,
    };
    let d_mm = d.to_si() * 1e3;
    Some(si(k * d_mm * d_mm))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mm(x: f64) -> Length {
        si(x * 1e-3)
    }
    fn kn(f: Force) -> f64 {
        f.to_si() / 1e3
    }
    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }
    const LBF: f64 = 4.448_221_615_260_5;

    #[test]
    fn iacs_anchor_chain_at_50_mm() {
        // Reference sheet §3.4 checks, IACS UR W18 formula, CONSISTENT:
        // U1 981, U2 1373, U3 1961 kN break; U1 proof 686 kN.
        let d = mm(50.0);
        assert!(rel(kn(formula_breaking_load(Grade::U1, d).unwrap()), 981.0) < 1e-4);
        assert!(rel(kn(formula_breaking_load(Grade::U2, d).unwrap()), 1373.0) < 1e-4);
        assert!(rel(kn(formula_breaking_load(Grade::U3, d).unwrap()), 1961.0) < 1e-4);
        assert!(rel(kn(formula_proof_load(Grade::U1, d, false).unwrap()), 686.0) < 1e-4);
    }

    #[test]
    fn iacs_formula_reproduces_the_stud_link_table_in_lbf() {
        // Published stud-link table quoted on the reference sheet §3.4
        // (CONSISTENT): 25.4 mm grades 1/2/3 break 59 700 / 83 600 /
        // 119 500 lbf; 49.2 mm grade 1 break 214 000 lbf, proof 149 500 lbf.
        // The table's own entries show its rounding: to 100 lbf below
        // 100 000 lbf, to 500 lbf above.
        let within_rounding = |lbf: f64, table: f64| {
            let step = if table < 100_000.0 { 100.0 } else { 500.0 };
            (lbf - table).abs() <= step / 2.0
        };
        let d = mm(25.4);
        for (grade, table) in [
            (Grade::U1, 59_700.0),
            (Grade::U2, 83_600.0),
            (Grade::U3, 119_500.0),
        ] {
            let lbf = formula_breaking_load(grade, d).unwrap().to_si() / LBF;
            assert!(within_rounding(lbf, table), "{grade:?}: {lbf}");
        }
        let d = mm(49.2);
        let lbf = formula_breaking_load(Grade::U1, d).unwrap().to_si() / LBF;
        assert!(within_rounding(lbf, 214_000.0), "{lbf}");
        let lbf = formula_proof_load(Grade::U1, d, false).unwrap().to_si() / LBF;
        assert!(within_rounding(lbf, 149_500.0), "{lbf}");
    }

    #[test]
    fn mooring_chain_breaking_loads() {
        // DNV-OS-E302 formula, reference sheet §3.5 (CONSISTENT with a
        // manufacturer's table, which rounds to 1 kN): 50 mm R3 2230,
        // R3S 2490, R4 2740 kN; 60 mm 3147 / 3514 / 3867 kN;
        // 76 mm 4884.3 / 5453.7 / 6001.3 kN (0.1 kN).
        for (d, expect) in [
            (50.0, [2230.0, 2490.0, 2740.0]),
            (60.0, [3147.0, 3514.0, 3867.0]),
        ] {
            for (grade, e) in [Grade::R3, Grade::R3S, Grade::R4].into_iter().zip(expect) {
                let got = kn(formula_breaking_load(grade, mm(d)).unwrap());
                assert!((got - e).abs() <= 0.5, "{grade:?} {d} mm: {got}");
            }
        }
        for (grade, e) in [
            (Grade::R3, 4884.3),
            (Grade::R3S, 5453.7),
            (Grade::R4, 6001.3),
        ] {
            let got = kn(formula_breaking_load(grade, mm(76.0)).unwrap());
            assert!((got - e).abs() <= 0.05, "{grade:?} 76 mm: {got}");
        }
    }

    #[test]
    fn mooring_proof_loads_distinguish_stud_and_studless() {
        // DNV-OS-E302 proof coefficients, reference sheet §3.5 (CONSISTENT):
        // R3S 0.0180 stud / 0.0174 studless; at 50 mm f(d) = 100 000.
        let d = mm(50.0);
        assert!(
            rel(
                kn(formula_proof_load(Grade::R3S, d, false).unwrap()),
                1800.0
            ) < 1e-9
        );
        assert!(rel(kn(formula_proof_load(Grade::R3S, d, true).unwrap()), 1740.0) < 1e-9);
        assert!(rel(kn(formula_proof_load(Grade::R3, d, true).unwrap()), 1560.0) < 1e-9);
        assert!(formula_breaking_load(Grade::G8, d).is_none());
    }

    #[test]
    fn en_818_2_grade_8_checks() {
        // Reference sheet §3.5, EN 818-2 (CONSISTENT, FROM MEMORY (H)):
        // 8 mm: unrounded 2050 kg -> WLL 2 t, BF 80.4 kN, MPF 50.3 kN;
        // 13 mm: unrounded 5414 kg -> 5.3 t, BF 212.4 kN (table rounding).
        let d = mm(8.0);
        assert!((g8_unrounded_rating(d).to_si() - 2050.0).abs() < 0.5);
        assert_eq!(g8_working_load_limit(d).unwrap().to_si(), 2000.0);
        assert!((kn(g8_breaking_force(d)) - 80.4).abs() < 0.05);
        assert!((kn(g8_proof_force(d)) - 50.3).abs() < 0.05);
        let d = mm(13.0);
        assert!((g8_unrounded_rating(d).to_si() - 5414.0).abs() < 0.5);
        assert_eq!(g8_working_load_limit(d).unwrap().to_si(), 5300.0);
        assert!((kn(g8_breaking_force(d)) - 212.4).abs() < 0.05);
        assert!(g8_working_load_limit(mm(9.0)).is_none());
    }

    #[test]
    fn every_g8_table_entry_is_the_rating_rounded_down_to_r40() {
        // EN 818 Annex A basis (reference sheet §3.5): the table value is the
        // largest R40 preferred number (ISO 3, 10^(k/40) as rounded in the
        // standard series; the series values are from memory) not above the
        // unrounded rating.
        const R40: [f64; 40] = [
            1.00, 1.06, 1.12, 1.18, 1.25, 1.32, 1.40, 1.50, 1.60, 1.70, 1.80, 1.90, 2.00, 2.12,
            2.24, 2.36, 2.50, 2.65, 2.80, 3.00, 3.15, 3.35, 3.55, 3.75, 4.00, 4.25, 4.50, 4.75,
            5.00, 5.30, 5.60, 6.00, 6.30, 6.70, 7.10, 7.50, 8.00, 8.50, 9.00, 9.50,
        ];
        let series: Vec<f64> = [0.1, 1.0, 10.0]
            .iter()
            .flat_map(|decade| R40.iter().map(move |r| r * decade))
            .collect();
        for (d, wll) in G8_WLL_TABLE {
            let rating_t = g8_unrounded_rating(mm(d)).to_si() / 1e3;
            let rounded = series
                .iter()
                .copied()
                .filter(|r| *r <= rating_t + 1e-9)
                .fold(0.0, f64::max);
            assert!(
                (rounded - wll).abs() < 1e-9,
                "{d} mm: rating {rating_t} t, R40 {rounded}, table {wll}"
            );
        }
    }

    #[test]
    fn ur_a3_brake_holding_and_continuous_pull() {
        // IACS UR A3 (Rev.1 2019), reference sheet §3.4: U2 at 50 mm,
        // 80 % -> 1098.4 kN, 45 % -> 617.85 kN (CONFIRMED rule);
        // Z_cont1 93.75 / 106.25 / 118.75 kN (FROM MEMORY (M-H)).
        let d = mm(50.0);
        let mbl = formula_breaking_load(Grade::U2, d).unwrap();
        assert!(rel(kn(ur_a3_brake_holding(mbl, false)), 1098.4) < 1e-4);
        assert!(rel(kn(ur_a3_brake_holding(mbl, true)), 617.85) < 1e-4);
        assert!(rel(kn(ur_a3_continuous_pull(Grade::U1, d).unwrap()), 93.75) < 1e-9);
        assert!(rel(kn(ur_a3_continuous_pull(Grade::U2, d).unwrap()), 106.25) < 1e-9);
        assert!(rel(kn(ur_a3_continuous_pull(Grade::U3, d).unwrap()), 118.75) < 1e-9);
        assert!(ur_a3_continuous_pull(Grade::R3, d).is_none());
    }
}
