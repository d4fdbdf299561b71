//! The burden cross-section on a three-roll troughed belt (ISO 5048:1989
//! clause 6 geometry; CEMA uses an equivalent geometry with its own edge
//! distance): area, depth at the belt centre and centroid height, for the
//! full section and for a section partly filled to a given area or depth.
//!
//! Owns no state.

use packwright_api::prelude::*;

/// Usable (loaded) belt width by ISO 5048:1989 clause 6:
/// `b = 0.9 B - 0.05 m` for `B <= 2 m`, `b = B - 0.25 m` above.
/// FROM MEMORY (M), reference sheet section 2.1.
pub fn usable_width(belt_width: Length) -> Length {
    let b = belt_width.value;
    si(if b <= 2.0 { 0.9 * b - 0.05 } else { b - 0.25 })
}

/// A burden cross-section on the troughed belt.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Section {
    /// Cross-section area of the burden.
    pub area: Area,
    /// Depth of the burden at the belt centre line, belt surface to top.
    pub depth: Length,
    /// Height of the area centroid above the belt surface (`a_1`).
    pub centroid_height: Length,
    /// Width over which the material lies on the belt (measured along the rolls).
    pub spread: Length,
}

/// The section of material spread over the width `spread` (along the rolls)
/// with a surcharge cap at `surcharge` angle:
/// `A_1 = [l_3 + (b - l_3) cos(lambda)]^2 tan(theta) / 6`,
/// `A_2 = [l_3 + (b - l_3)/2 cos(lambda)] [(b - l_3)/2 sin(lambda)]`,
/// with `b` replaced by `spread` (ISO 5048:1989 clause 6, FROM MEMORY (M);
/// flat belt or spread within the centre roll: `A = b^2 tan(theta) / 6`).
///
/// The cap is taken as the parabola of that area meeting the edges at the
/// surcharge angle (height `w tan(theta) / 4` over top width `w`, centroid
/// at 2/5 of its height), which is how the depth and the centroid follow
/// from the standard's area (DERIVED).
pub fn spread_section(
    spread: Length,
    centre_roll: Length,
    trough: Angle,
    surcharge: Angle,
) -> Section {
    let (b, l3, lam, tan_t) = (
        spread.value,
        centre_roll.value,
        trough.value,
        surcharge.value.tan(),
    );
    let (w, d2, a2, y2) = if b <= l3 || lam == 0.0 {
        (b, 0.0, 0.0, 0.0)
    } else {
        let wing = (b - l3) / 2.0;
        let w = l3 + 2.0 * wing * lam.cos();
        let d2 = wing * lam.sin();
        let a2 = (l3 + wing * lam.cos()) * d2;
        let y2 = d2 * (l3 + 2.0 * w) / (3.0 * (l3 + w));
        (w, d2, a2, y2)
    };
    let a1 = w * w * tan_t / 6.0;
    let hc = w * tan_t / 4.0;
    cap_on_trapezoid(a1, hc, d2, a2, y2, b)
}

fn cap_on_trapezoid(a1: f64, hc: f64, d2: f64, a2: f64, y2: f64, spread: f64) -> Section {
    let area = a1 + a2;
    let centroid = if area > 0.0 {
        (a2 * y2 + a1 * (d2 + 0.4 * hc)) / area
    } else {
        0.0
    };
    Section {
        area: si(area),
        depth: si(d2 + hc),
        centroid_height: si(centroid),
        spread: si(spread),
    }
}

/// The full ISO 5048 section at the usable width ([`usable_width`]).
pub fn full_section(
    belt_width: Length,
    centre_roll: Length,
    trough: Angle,
    surcharge: Angle,
) -> Section {
    spread_section(usable_width(belt_width), centre_roll, trough, surcharge)
}

/// The section holding `area`: the material spreads less far up the wing
/// rolls than the full section (solved by bisection on the spread). When
/// `area` exceeds the full section, the spread is the usable width and the
/// surcharge cap is raised to hold the excess (the belt is overfilled).
/// Returns the section and whether it is overfilled.
pub fn section_for_area(
    area: Area,
    belt_width: Length,
    centre_roll: Length,
    trough: Angle,
    surcharge: Angle,
) -> (Section, bool) {
    let full = full_section(belt_width, centre_roll, trough, surcharge);
    if area > full.area {
        let b = usable_width(belt_width).value;
        let (l3, lam) = (centre_roll.value, trough.value);
        let (w, d2, a2, y2) = if b <= l3 || lam == 0.0 {
            (b, 0.0, 0.0, 0.0)
        } else {
            let wing = (b - l3) / 2.0;
            let w = l3 + 2.0 * wing * lam.cos();
            let d2 = wing * lam.sin();
            (
                w,
                d2,
                (l3 + wing * lam.cos()) * d2,
                d2 * (l3 + 2.0 * w) / (3.0 * (l3 + w)),
            )
        };
        let a1 = area.value - a2;
        let hc = 1.5 * a1 / w;
        return (cap_on_trapezoid(a1, hc, d2, a2, y2, b), true);
    }
    let spread = bisect(usable_width(belt_width).value, |b| {
        spread_section(si(b), centre_roll, trough, surcharge)
            .area
            .value
            - area.value
    });
    (
        spread_section(si(spread), centre_roll, trough, surcharge),
        false,
    )
}

/// The section whose depth at the belt centre is `depth` (bisection on the
/// spread). A depth beyond the full section's keeps the full section's
/// centroid-to-depth proportion. Returns the section and whether the depth
/// exceeds the full section's.
pub fn section_for_depth(
    depth: Length,
    belt_width: Length,
    centre_roll: Length,
    trough: Angle,
    surcharge: Angle,
) -> (Section, bool) {
    let full = full_section(belt_width, centre_roll, trough, surcharge);
    if depth > full.depth {
        let scale = (depth / full.depth).value;
        return (
            Section {
                area: full.area * scale,
                depth,
                centroid_height: full.centroid_height * scale,
                spread: full.spread,
            },
            true,
        );
    }
    let spread = bisect(usable_width(belt_width).value, |b| {
        spread_section(si(b), centre_roll, trough, surcharge)
            .depth
            .value
            - depth.value
    });
    (
        spread_section(si(spread), centre_roll, trough, surcharge),
        false,
    )
}

/// Root of an increasing `f` on `[0, hi]` (f(0) <= 0 <= f(hi)) by bisection.
fn bisect(hi: f64, f: impl Fn(f64) -> f64) -> f64 {
    let (mut lo, mut hi) = (0.0, hi);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn deg(x: f64) -> Angle {
        si(x.to_radians())
    }

    // ISO 5048:1989 clause 6 geometry, FROM MEMORY (M); check values from the
    // reference sheet section 2.1 (B = 1.2 m, l3 = 0.465 m, 35 deg, 20 deg).
    #[test]
    fn iso_5048_troughed_section_check_values() {
        assert!((usable_width(si(1.2)).value - 1.03).abs() < 1e-12);
        let s = full_section(si(1.2), si(0.465), deg(35.0), deg(20.0));
        assert!(
            (s.area.value - 0.165064).abs() / 0.165064 < 1e-4,
            "{}",
            s.area.value
        );
        // 3600 A v rho / 1000 at 4 m/s and 1000 kg/m3 gives 2376.9 t/h.
        let tph = 3600.0 * s.area.value * 4.0;
        assert!((tph - 2376.9).abs() / 2376.9 < 1e-4);
        // Flat belt, same usable width: A = b^2 tan(theta)/6 = 0.064356 m2.
        let flat = full_section(si(1.2), si(0.465), deg(0.0), deg(20.0));
        assert!((flat.area.value - 0.064356).abs() / 0.064356 < 1e-4);
        // Usable width above 2 m: b = B - 0.25 (ISO 5048, from memory).
        assert!((usable_width(si(2.4)).value - 2.15).abs() < 1e-12);
    }

    #[test]
    fn partial_sections_invert_area_and_depth() {
        let (b, l3, lam, th) = (si(1.2), si(0.465), deg(35.0), deg(20.0));
        for a in [0.005, 0.03, 0.08, 0.15] {
            let (s, over) = section_for_area(si(a), b, l3, lam, th);
            assert!(!over);
            assert!((s.area.value - a).abs() < 1e-9);
            assert!(s.centroid_height < s.depth && s.centroid_height.value > 0.0);
            let (back, _) = section_for_depth(s.depth, b, l3, lam, th);
            assert!((back.area.value - a).abs() < 1e-8);
        }
        let full = full_section(b, l3, lam, th);
        let (s, over) = section_for_area(full.area * 1.2, b, l3, lam, th);
        assert!(over && s.depth > full.depth);
        assert!((s.area.value - 1.2 * full.area.value).abs() < 1e-12);
    }
}
