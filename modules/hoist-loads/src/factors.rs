//! Dynamic factors on the hoist load by the published bases: EN 13001-2 /
//! ISO 8686-1 (φ2, φ3, φ6), FEM 1.001 (ψ), CMAA Specification 70 (hoist load
//! factor) and the marine lifting guidelines (dynamic amplification factor),
//! plus the ISO 4308-1 rope coefficient Z_p by mechanism group.
//!
//! Owns no state. Every value that could not be checked against the standard
//! itself is marked "from memory" beside it, with the confidence given in the
//! project's reference sheet (shared/reference.md §4, beside the repository).

use packwright_api::prelude::*;
use packwright_api::units::FOOT;

/// EN 13001-2 / ISO 8686-1 hoisting class: how stiff the crane and its hoist
/// are against a load lifted off the ground.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HoistingClass {
    /// HC1: very flexible (β2 0.17 s/m, φ2,min 1.05).
    Hc1,
    /// HC2 (β2 0.34 s/m, φ2,min 1.10).
    Hc2,
    /// HC3 (β2 0.51 s/m, φ2,min 1.15).
    Hc3,
    /// HC4: very stiff (β2 0.68 s/m, φ2,min 1.20).
    Hc4,
}

impl HoistingClass {
    /// Reads `HC1` … `HC4`.
    pub fn parse(word: &str) -> Option<HoistingClass> {
        match word {
            "HC1" => Some(HoistingClass::Hc1),
            "HC2" => Some(HoistingClass::Hc2),
            "HC3" => Some(HoistingClass::Hc3),
            "HC4" => Some(HoistingClass::Hc4),
            _ => None,
        }
    }

    /// (β2 in s/m, φ2,min).
    ///
    /// EN 13001-2:2014, φ2 table for hoisting an unrestrained grounded load
    /// (the same values in ISO 8686-1:2012). From memory (M–H), per
    /// reference.md §4.1.
    pub fn parameters(self) -> (f64, f64) {
        match self {
            HoistingClass::Hc1 => (0.17, 1.05),
            HoistingClass::Hc2 => (0.34, 1.10),
            HoistingClass::Hc3 => (0.51, 1.15),
            HoistingClass::Hc4 => (0.68, 1.20),
        }
    }
}

/// EN 13001-2 hoist drive class: how the drive starts a grounded load.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DriveClass {
    /// HD1: no creep speed, or a start without it.
    Hd1,
    /// HD2: creep speed the operator may select.
    Hd2,
    /// HD3: creep speed held automatically until the load is off the ground.
    Hd3,
    /// HD4: stepless, operator controlled.
    Hd4,
    /// HD5: automatic control limits the lift-off dynamics.
    Hd5,
}

impl DriveClass {
    /// Reads `HD1` … `HD5`.
    pub fn parse(word: &str) -> Option<DriveClass> {
        match word {
            "HD1" => Some(DriveClass::Hd1),
            "HD2" => Some(DriveClass::Hd2),
            "HD3" => Some(DriveClass::Hd3),
            "HD4" => Some(DriveClass::Hd4),
            "HD5" => Some(DriveClass::Hd5),
            _ => None,
        }
    }

    /// The class as the standard writes it (`HD2`).
    pub fn name(self) -> &'static str {
        match self {
            DriveClass::Hd1 => "HD1",
            DriveClass::Hd2 => "HD2",
            DriveClass::Hd3 => "HD3",
            DriveClass::Hd4 => "HD4",
            DriveClass::Hd5 => "HD5",
        }
    }

    /// Whether the drive class takes its characteristic speed from the creep
    /// speed in load combinations A1 and B1.
    pub fn uses_creep_speed(self) -> bool {
        matches!(self, DriveClass::Hd2 | DriveClass::Hd3)
    }
}

/// Characteristic hoisting speed v_h for load combinations A1 and B1.
///
/// EN 13001-2:2014, table of v_h by hoist drive class: HD1 v_h,max; HD2 and
/// HD3 the creep speed v_h,CS; HD4 0.5 v_h,max; HD5 zero. From memory (M–H),
/// per reference.md §4.1. Returns `None` when HD2 or HD3 is chosen without a
/// creep speed.
pub fn characteristic_speed_a1(
    drive: DriveClass,
    v_max: Velocity,
    v_creep: Option<Velocity>,
) -> Option<Velocity> {
    match drive {
        DriveClass::Hd1 => Some(v_max),
        DriveClass::Hd2 | DriveClass::Hd3 => v_creep,
        DriveClass::Hd4 => Some(v_max * 0.5),
        DriveClass::Hd5 => Some(v_max * 0.0),
    }
}

/// Characteristic hoisting speed v_h for load combination C1 (φ2C).
///
/// EN 13001-2:2014, same table, row C1: v_h,max for HD1 to HD4 and
/// 0.5 v_h,max for HD5. From memory (M–H), per reference.md §4.1.
pub fn characteristic_speed_c1(drive: DriveClass, v_max: Velocity) -> Velocity {
    match drive {
        DriveClass::Hd5 => v_max * 0.5,
        _ => v_max,
    }
}

/// φ2 = φ2,min + β2 v_h, the factor on the hoist load when an unrestrained
/// grounded load is hoisted.
///
/// EN 13001-2:2014 (hoisting an unrestrained grounded load) and ISO
/// 8686-1:2012; also EN 1991-3:2006 §2. Formula from memory (M–H), per
/// reference.md §4.1.
pub fn phi2(class: HoistingClass, v_h: Velocity) -> f64 {
    let (beta2, phi2_min) = class.parameters();
    phi2_min + beta2 * v_h.to_si()
}

/// How quickly part of the load is let go.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReleaseRate {
    /// Grab or magnet opening: β3 = 0.5.
    Slow,
    /// Load breaking free, sling failure, quick release: β3 = 1.0.
    Rapid,
}

impl ReleaseRate {
    /// Reads `slow` or `rapid`.
    pub fn parse(word: &str) -> Option<ReleaseRate> {
        match word {
            "slow" => Some(ReleaseRate::Slow),
            "rapid" => Some(ReleaseRate::Rapid),
            _ => None,
        }
    }

    /// β3 of EN 13001-2:2014 (sudden release of a part of the payload):
    /// 0.5 slow, 1.0 rapid. From memory (M–H), per reference.md §4.1.
    pub fn beta3(self) -> f64 {
        match self {
            ReleaseRate::Slow => 0.5,
            ReleaseRate::Rapid => 1.0,
        }
    }
}

/// φ3 = 1 − (Δm/m)(1 + β3), the factor on the load left hanging when part
/// Δm of the hoisted mass m is suddenly released. A negative φ3 means the
/// remaining load action points upward: the rope and crane rebound.
///
/// EN 13001-2:2014 (sudden release of a part of the payload) and ISO
/// 8686-1:2012. From memory (M–H), per reference.md §4.1.
pub fn phi3(released: Mass, hoisted: Mass, rate: ReleaseRate) -> f64 {
    1.0 - (released / hoisted).value * (1.0 + rate.beta3())
}

/// φ6 = ½(1 + φ2), the factor on the dynamic test load (at least 110 % of
/// the rated load).
///
/// EN 13001-2:2014 (test loads); CONFIRMED in outline by EN 1991-3:2006
/// §2.10(4), per reference.md §4.1.
pub fn phi6_dynamic(phi2: f64) -> f64 {
    0.5 * (1.0 + phi2)
}

/// The crane families FEM 1.001 distinguishes for ψ.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FemCraneFamily {
    /// Overhead travelling and bridge (gantry) cranes: ξ = 0.6.
    Bridge,
    /// Jib cranes: ξ = 0.3.
    Jib,
}

/// FEM 1.001 dynamic coefficient ψ = 1 + ξ V_L, V_L capped at 1 m/s, ψ at
/// least 1.15.
///
/// FEM 1.001, 3rd edition revised 1998, Booklet 2 (the dynamic coefficient
/// ψ). From memory (M), per reference.md §4.2.
pub fn fem_psi(family: FemCraneFamily, hoisting_speed: Velocity) -> f64 {
    let xi = match family {
        FemCraneFamily::Bridge => 0.6,
        FemCraneFamily::Jib => 0.3,
    };
    let v_l = hoisting_speed.to_si().min(1.0);
    (1.0 + xi * v_l).max(1.15)
}

/// CMAA hoist load factor HLF = 0.005 × hoist speed in ft/min, within
/// 0.15 … 0.50; 0.50 for bucket and magnet cranes. The load is multiplied by
/// 1 + HLF.
///
/// CMAA Specification No. 70 (also No. 74), load case 1 and the hoist load
/// factor. From memory (H), per reference.md §4.3.
pub fn cmaa_hlf(hoisting_speed: Velocity, bucket_or_magnet: bool) -> f64 {
    if bucket_or_magnet {
        return 0.5;
    }
    let fpm = hoisting_speed.to_si() / (FOOT / 60.0);
    (0.005 * fpm).clamp(0.15, 0.5)
}

/// Where a marine lift takes place.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LiftLocation {
    /// On land, crane on firm ground.
    Onshore,
    /// In sheltered water.
    Inshore,
    /// In open water.
    Offshore,
}

impl LiftLocation {
    /// The word an item writes (`inshore`).
    pub fn name(self) -> &'static str {
        match self {
            LiftLocation::Onshore => "onshore",
            LiftLocation::Inshore => "inshore",
            LiftLocation::Offshore => "offshore",
        }
    }

    /// Reads `onshore`, `inshore` or `offshore`.
    pub fn parse(word: &str) -> Option<LiftLocation> {
        match word {
            "onshore" => Some(LiftLocation::Onshore),
            "inshore" => Some(LiftLocation::Inshore),
            "offshore" => Some(LiftLocation::Offshore),
            _ => None,
        }
    }
}

/// Dynamic amplification factor for a single-crane lift in air, by static
/// hook load SHL (in tonnes; loads under 3 t are taken as 3 t).
///
/// GL Noble Denton, Guidelines for Marine Lifting & Lowering Operations,
/// 0027/ND Rev 11, §5.5 Table 5-1. Table CONFIRMED, per reference.md §4.4;
/// DNV-ST-N001 uses essentially the same table (from memory, M).
pub fn offshore_daf(static_hook_load: Mass, location: LiftLocation) -> f64 {
    let w = static_hook_load.to_si() / 1000.0;
    let shl = w.max(3.0);
    let root = (100.0 / shl).sqrt();
    let band = |on: f64, ins: f64, off: f64| match location {
        LiftLocation::Onshore => on,
        LiftLocation::Inshore => ins,
        LiftLocation::Offshore => off,
    };
    if w <= 100.0 {
        band(1.10, 1.07 + 0.05 * root, 1.0 + 0.25 * root)
    } else if w <= 300.0 {
        band(1.05, 1.12, 1.25)
    } else if w <= 1000.0 {
        band(1.05, 1.10, 1.20)
    } else if w <= 2500.0 {
        band(1.03, 1.08, 1.15)
    } else {
        band(1.03, 1.05, 1.10)
    }
}

/// Minimum practical design factor Z_p of a running rope by mechanism group
/// M1 … M8: M1 3.15, M2 3.35, M3 3.55, M4 4.0, M5 4.5, M6 5.6, M7 7.1, M8 9.0.
///
/// ISO 4308-1:2003, Cranes and lifting appliances — Selection of wire ropes —
/// Part 1: General, Z_p for running ropes. From memory (M): the values
/// commonly quoted; not in reference.md and not verified against the
/// standard. Returns `None` for a word other than M1 … M8.
pub fn iso4308_zp(mechanism_group: &str) -> Option<f64> {
    match mechanism_group {
        "M1" => Some(3.15),
        "M2" => Some(3.35),
        "M3" => Some(3.55),
        "M4" => Some(4.0),
        "M5" => Some(4.5),
        "M6" => Some(5.6),
        "M7" => Some(7.1),
        "M8" => Some(9.0),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs()
    }

    fn mps(v: f64) -> Velocity {
        si(v)
    }

    fn fpm(v: f64) -> Velocity {
        si(v * FOOT / 60.0)
    }

    // EN 13001-2:2014 φ2 table (β2, φ2,min by HC) and φ2 = φ2,min + β2 v_h;
    // check values of reference.md §4.1, from memory (M–H).
    #[test]
    fn en13001_phi2_check_values() {
        assert!(close(phi2(HoistingClass::Hc2, mps(0.2)), 1.168, 1e-9));
        assert!(close(phi2(HoistingClass::Hc3, mps(0.5)), 1.405, 1e-9));
        assert!(close(phi2(HoistingClass::Hc4, mps(1.0)), 1.88, 1e-9));
        assert!(close(phi2(HoistingClass::Hc1, mps(0.0)), 1.05, 1e-9));
    }

    // EN 13001-2:2014 v_h by hoist drive class, rows A1/B1 and C1
    // (reference.md §4.1, from memory M–H).
    #[test]
    fn en13001_characteristic_speed_by_drive_class() {
        let (v, cs) = (mps(0.4), Some(mps(0.05)));
        let a1 = |d| characteristic_speed_a1(d, v, cs).unwrap().to_si();
        assert_eq!(a1(DriveClass::Hd1), 0.4);
        assert_eq!(a1(DriveClass::Hd2), 0.05);
        assert_eq!(a1(DriveClass::Hd3), 0.05);
        assert_eq!(a1(DriveClass::Hd4), 0.2);
        assert_eq!(a1(DriveClass::Hd5), 0.0);
        assert!(characteristic_speed_a1(DriveClass::Hd2, v, None).is_none());
        assert_eq!(characteristic_speed_c1(DriveClass::Hd3, v).to_si(), 0.4);
        assert_eq!(characteristic_speed_c1(DriveClass::Hd5, v).to_si(), 0.2);
        // HD4 at 0.4 m/s, HC2: v_h = 0.2 m/s gives the §4.1 check value 1.168.
        let vh = characteristic_speed_a1(DriveClass::Hd4, v, None).unwrap();
        assert!(close(phi2(HoistingClass::Hc2, vh), 1.168, 1e-9));
    }

    // EN 13001-2:2014 φ3 = 1 − (Δm/m)(1 + β3); reference.md §4.1 check
    // values with Δm/m = 0.3, from memory (M–H).
    #[test]
    fn en13001_phi3_check_values() {
        let (dm, m): (Mass, Mass) = (si(300.0), si(1000.0));
        assert!(close(phi3(dm, m, ReleaseRate::Slow), 0.55, 1e-9));
        assert!(close(phi3(dm, m, ReleaseRate::Rapid), 0.40, 1e-9));
        // Releasing more than half the load rapidly reverses the load action.
        assert!(phi3(si(600.0), m, ReleaseRate::Rapid) < 0.0);
    }

    // EN 13001-2:2014 test loads, φ6 = ½(1 + φ2): reference.md §4.1 check
    // value 1.084 for φ2 = 1.168 (outline CONFIRMED via EN 1991-3 §2.10(4)).
    #[test]
    fn en13001_phi6_check_value() {
        assert!(close(phi6_dynamic(1.168), 1.084, 1e-9));
    }

    // FEM 1.001 (1998) Booklet 2 ψ; reference.md §4.2 check values, from
    // memory (M).
    #[test]
    fn fem_psi_check_values() {
        assert!(close(fem_psi(FemCraneFamily::Bridge, mps(0.2)), 1.15, 1e-9));
        assert!(close(fem_psi(FemCraneFamily::Bridge, mps(0.5)), 1.30, 1e-9));
        assert!(close(fem_psi(FemCraneFamily::Bridge, mps(1.5)), 1.60, 1e-9));
        assert!(close(fem_psi(FemCraneFamily::Jib, mps(0.2)), 1.15, 1e-9));
        assert!(close(fem_psi(FemCraneFamily::Jib, mps(1.0)), 1.30, 1e-9));
    }

    // CMAA Specification 70 hoist load factor; reference.md §4.3 check
    // values, from memory (H).
    #[test]
    fn cmaa_hlf_check_values() {
        assert!(close(cmaa_hlf(fpm(20.0), false), 0.15, 1e-9));
        assert!(close(cmaa_hlf(fpm(30.0), false), 0.15, 1e-9));
        assert!(close(cmaa_hlf(fpm(60.0), false), 0.30, 1e-9));
        assert!(close(cmaa_hlf(fpm(120.0), false), 0.50, 1e-9));
        assert!(close(cmaa_hlf(fpm(20.0), true), 0.50, 1e-9));
    }

    // GL Noble Denton 0027/ND Rev 11 §5.5 Table 5-1 (CONFIRMED);
    // reference.md §4.4 check values, rounded there to 6 decimals.
    #[test]
    fn offshore_daf_check_values() {
        let t = |x: f64| -> Mass { si(x * 1000.0) };
        let off = LiftLocation::Offshore;
        let ins = LiftLocation::Inshore;
        assert!((offshore_daf(t(50.0), off) - 1.353553).abs() < 1e-6);
        assert!((offshore_daf(t(3.0), off) - 2.443376).abs() < 1e-6);
        assert!((offshore_daf(t(1.0), off) - 2.443376).abs() < 1e-6);
        assert!((offshore_daf(t(100.0), off) - 1.25).abs() < 1e-12);
        assert!((offshore_daf(t(100.001), off) - 1.25).abs() < 1e-12);
        assert!((offshore_daf(t(50.0), ins) - 1.140711).abs() < 1e-6);
        assert!((offshore_daf(t(100.0), ins) - 1.12).abs() < 1e-12);
        assert!((offshore_daf(t(150.0), ins) - 1.12).abs() < 1e-12);
        assert_eq!(offshore_daf(t(50.0), LiftLocation::Onshore), 1.10);
        assert_eq!(offshore_daf(t(500.0), off), 1.20);
        assert_eq!(offshore_daf(t(2000.0), ins), 1.08);
        assert_eq!(offshore_daf(t(3000.0), LiftLocation::Onshore), 1.03);
    }

    // ISO 4308-1:2003 Z_p for running ropes, from memory (M); not in
    // reference.md. The values must rise with the mechanism group.
    #[test]
    fn iso4308_zp_values_from_memory() {
        let groups = ["M1", "M2", "M3", "M4", "M5", "M6", "M7", "M8"];
        let expected = [3.15, 3.35, 3.55, 4.0, 4.5, 5.6, 7.1, 9.0];
        for (g, z) in groups.iter().zip(expected) {
            assert_eq!(iso4308_zp(g), Some(z));
        }
        assert_eq!(iso4308_zp("M9"), None);
    }
}
