//! The chute path: a connected chain of straight lines and circular arcs in
//! the side elevation, read from the item's `chute` structured input, with
//! the geometry the flow model needs (points, tangents, curvature) and the
//! first crossing of a free-flight parabola with the path.
//!
//! Geometry is in SI numbers (metres, radians) in the pulley-centre frame:
//! x in the direction of belt travel, y up. Owns no state.

use packwright_api::units::{parse_quantity, Dimension};
use packwright_api::{CalcError, Node, NodeValue, Span};

/// How far apart (m) one segment's end and the next one's start may be.
pub const JOIN_TOLERANCE: f64 = 0.010;

const INPUT: &str = "chute";
const EXAMPLE: &str = "a list such as `- line: { from: [1.10, 0.20], to: [1.30, -0.80] }` and `- arc: { centre: [0.30, -0.80], radius: 1.0 m, from_angle: 0 deg, to_angle: -70 deg }`";

/// One segment of the chute path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Segment {
    /// A straight plate from `from` to `to`.
    Line {
        /// Start point (m).
        from: [f64; 2],
        /// End point (m).
        to: [f64; 2],
    },
    /// A circular arc about `centre`, run from `from_angle` to `to_angle`
    /// (radians counter-clockwise from +x; decreasing means clockwise).
    Arc {
        /// Centre (m).
        centre: [f64; 2],
        /// Radius (m), positive.
        radius: f64,
        /// Start angle (rad).
        from_angle: f64,
        /// End angle (rad).
        to_angle: f64,
    },
}

impl Segment {
    /// Length along the segment (m).
    pub fn length(&self) -> f64 {
        match *self {
            Segment::Line { from, to } => (to[0] - from[0]).hypot(to[1] - from[1]),
            Segment::Arc {
                radius,
                from_angle,
                to_angle,
                ..
            } => radius * (to_angle - from_angle).abs(),
        }
    }

    fn arc_angle(&self, s: f64) -> f64 {
        match *self {
            Segment::Arc {
                radius,
                from_angle,
                to_angle,
                ..
            } => from_angle + (to_angle - from_angle).signum() * s / radius,
            Segment::Line { .. } => 0.0,
        }
    }

    /// The point at distance `s` from the segment's start.
    pub fn point(&self, s: f64) -> [f64; 2] {
        match *self {
            Segment::Line { from, to } => {
                let l = self.length();
                [
                    from[0] + (to[0] - from[0]) * s / l,
                    from[1] + (to[1] - from[1]) * s / l,
                ]
            }
            Segment::Arc { centre, radius, .. } => {
                let a = self.arc_angle(s);
                [centre[0] + radius * a.cos(), centre[1] + radius * a.sin()]
            }
        }
    }

    /// The unit tangent (direction of the path) at distance `s`.
    pub fn tangent(&self, s: f64) -> [f64; 2] {
        match *self {
            Segment::Line { from, to } => {
                let l = self.length();
                [(to[0] - from[0]) / l, (to[1] - from[1]) / l]
            }
            Segment::Arc {
                from_angle,
                to_angle,
                ..
            } => {
                let a = self.arc_angle(s);
                let sigma = (to_angle - from_angle).signum();
                [-sigma * a.sin(), sigma * a.cos()]
            }
        }
    }

    /// Curvature, positive when the centre of curvature lies to the left of
    /// the path's direction (1/m; zero for a line).
    pub fn curvature_left(&self) -> f64 {
        match *self {
            Segment::Line { .. } => 0.0,
            Segment::Arc {
                radius,
                from_angle,
                to_angle,
                ..
            } => (to_angle - from_angle).signum() / radius,
        }
    }

    /// Where the chord `p -> q` first crosses this segment, as the fraction
    /// along the chord (0..1) and the distance along the segment.
    fn chord_crossing(&self, p: [f64; 2], q: [f64; 2]) -> Option<(f64, f64)> {
        let d = [q[0] - p[0], q[1] - p[1]];
        match *self {
            Segment::Line { from, to } => {
                let e = [to[0] - from[0], to[1] - from[1]];
                let den = cross(d, e);
                if den.abs() < 1e-15 {
                    return None;
                }
                let w = [from[0] - p[0], from[1] - p[1]];
                let u = cross(w, e) / den;
                let f = cross(w, d) / den;
                ((0.0..=1.0).contains(&u) && (0.0..=1.0).contains(&f))
                    .then(|| (u, f * self.length()))
            }
            Segment::Arc { centre, radius, .. } => {
                let w = [p[0] - centre[0], p[1] - centre[1]];
                let a = dot(d, d);
                if a < 1e-30 {
                    return None;
                }
                let b = 2.0 * dot(w, d);
                let c = dot(w, w) - radius * radius;
                let disc = b * b - 4.0 * a * c;
                if disc < 0.0 {
                    return None;
                }
                let root = disc.sqrt();
                let mut best: Option<(f64, f64)> = None;
                for u in [(-b - root) / (2.0 * a), (-b + root) / (2.0 * a)] {
                    if !(0.0..=1.0).contains(&u) {
                        continue;
                    }
                    let x = [p[0] + u * d[0], p[1] + u * d[1]];
                    if let Some(s) = self.arc_distance_of(x) {
                        if best.is_none_or(|(bu, _)| u < bu) {
                            best = Some((u, s));
                        }
                    }
                }
                best
            }
        }
    }

    /// Distance along an arc of the point `x` (on its circle), if the point
    /// lies within the arc's sweep.
    fn arc_distance_of(&self, x: [f64; 2]) -> Option<f64> {
        let Segment::Arc {
            centre,
            radius,
            from_angle,
            to_angle,
        } = *self
        else {
            return None;
        };
        let sweep = to_angle - from_angle;
        let a = (x[1] - centre[1]).atan2(x[0] - centre[0]);
        let tau = std::f64::consts::TAU;
        let d = ((a - from_angle) * sweep.signum()).rem_euclid(tau);
        let d = if d > tau - 1e-12 { 0.0 } else { d };
        (d <= sweep.abs() + 1e-12).then_some(d * radius)
    }

    /// Signed distance of `x` from the segment's line or circle (for the
    /// refinement of a crossing; zero on the surface).
    fn offset(&self, x: [f64; 2]) -> f64 {
        match *self {
            Segment::Line { from, .. } => {
                cross(self.tangent(0.0), [x[0] - from[0], x[1] - from[1]])
            }
            Segment::Arc { centre, radius, .. } => {
                (x[0] - centre[0]).hypot(x[1] - centre[1]) - radius
            }
        }
    }

    /// Distance along the segment of a point on (or very near) it.
    fn distance_of(&self, x: [f64; 2]) -> f64 {
        match *self {
            Segment::Line { from, .. } => {
                let t = self.tangent(0.0);
                dot(t, [x[0] - from[0], x[1] - from[1]]).clamp(0.0, self.length())
            }
            Segment::Arc { .. } => self.arc_distance_of(x).unwrap_or(0.0).min(self.length()),
        }
    }
}

fn cross(a: [f64; 2], b: [f64; 2]) -> f64 {
    a[0] * b[1] - a[1] * b[0]
}

fn dot(a: [f64; 2], b: [f64; 2]) -> f64 {
    a[0] * b[0] + a[1] * b[1]
}

/// A validated chute path.
#[derive(Debug, Clone, PartialEq)]
pub struct ChutePath {
    /// The segments in order of flow.
    pub segments: Vec<Segment>,
    /// Where each segment was written, for messages.
    pub spans: Vec<Span>,
    /// Where the whole `chute` input was written.
    pub span: Span,
}

/// A position on the path: segment index and distance along that segment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PathPosition {
    /// Index of the segment.
    pub segment: usize,
    /// Distance from the segment's start (m).
    pub along: f64,
}

/// The first crossing of a flight with the path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Time of flight to the crossing (s).
    pub time: f64,
    /// The point (m).
    pub point: [f64; 2],
    /// The velocity there (m/s).
    pub velocity: [f64; 2],
    /// Where on the path.
    pub at: PathPosition,
}

impl ChutePath {
    /// Distance along the whole path from its start to `at` (m).
    pub fn distance(&self, at: PathPosition) -> f64 {
        self.segments[..at.segment]
            .iter()
            .map(Segment::length)
            .sum::<f64>()
            + at.along
    }

    /// Lowest y of the path (m), for the end of a search.
    pub fn lowest(&self) -> f64 {
        self.polyline(2.0f64.to_radians())
            .iter()
            .map(|p| p[1])
            .fold(f64::INFINITY, f64::min)
    }

    /// Points along the path, arcs drawn with steps of at most `step` radians.
    pub fn polyline(&self, step: f64) -> Vec<[f64; 2]> {
        let mut pts = Vec::new();
        for seg in &self.segments {
            let n = match seg {
                Segment::Line { .. } => 1,
                Segment::Arc {
                    from_angle,
                    to_angle,
                    ..
                } => (((to_angle - from_angle).abs() / step).ceil() as usize).max(1),
            };
            let l = seg.length();
            for i in 0..=n {
                pts.push(seg.point(l * i as f64 / n as f64));
            }
        }
        pts
    }

    /// The first crossing of the free parabola starting at `start` with
    /// velocity `velocity` (gravity `g` downwards) with the path, ignoring
    /// the path up to and including `after` (the point a stream has just
    /// left). Marches along the flight with chords of at most 5 mm and
    /// refines the crossing by bisection on the exact parabola.
    pub fn first_crossing(
        &self,
        start: [f64; 2],
        velocity: [f64; 2],
        g: f64,
        after: Option<PathPosition>,
    ) -> Option<Crossing> {
        let at = |t: f64| {
            [
                start[0] + velocity[0] * t,
                start[1] + velocity[1] * t - 0.5 * g * t * t,
            ]
        };
        let floor = self.lowest() - 1.0;
        let allowed = |k: usize, s: f64| match after {
            None => true,
            Some(p) => k > p.segment || (k == p.segment && s > p.along + 1e-6),
        };
        let mut t0 = 0.0;
        let mut p0 = start;
        while t0 < 30.0 {
            let vy = velocity[1] - g * t0;
            let speed = velocity[0].hypot(vy).max(0.05);
            let t1 = t0 + 0.005 / speed;
            let p1 = at(t1);
            let mut best: Option<(f64, usize)> = None;
            for (k, seg) in self.segments.iter().enumerate() {
                if let Some((u, s)) = seg.chord_crossing(p0, p1) {
                    let t = t0 + u * (t1 - t0);
                    if t > 1e-7 && allowed(k, s) && best.is_none_or(|(bu, _)| u < bu) {
                        best = Some((u, k));
                    }
                }
            }
            if let Some((u, k)) = best {
                let seg = &self.segments[k];
                // Refine on the parabola between the chord's ends; the chord
                // and the parabola differ by well under a millimetre here.
                let (mut lo, mut hi) = (t0, t1);
                let side0 = seg.offset(at(lo));
                if side0 * seg.offset(at(hi)) <= 0.0 {
                    for _ in 0..80 {
                        let mid = 0.5 * (lo + hi);
                        if seg.offset(at(mid)) * side0 > 0.0 {
                            lo = mid;
                        } else {
                            hi = mid;
                        }
                    }
                } else {
                    lo = t0 + u * (t1 - t0);
                    hi = lo;
                }
                let t = 0.5 * (lo + hi);
                let point = at(t);
                return Some(Crossing {
                    time: t,
                    point,
                    velocity: [velocity[0], velocity[1] - g * t],
                    at: PathPosition {
                        segment: k,
                        along: seg.distance_of(point),
                    },
                });
            }
            if p1[1] < floor && velocity[1] - g * t1 < 0.0 {
                return None;
            }
            t0 = t1;
            p0 = p1;
        }
        None
    }
}

fn err(span: &Span, message: String, expected: &str) -> CalcError {
    CalcError::input(INPUT, Some(span.clone()), &message, expected)
}

/// A length: a bare number is metres, text may carry a length unit.
fn length(node: &Node, what: &str) -> Result<f64, CalcError> {
    let expected = "a length in metres (`1.10`) or with a unit (`\"1100 mm\"`)";
    match &node.value {
        NodeValue::Number(x) if x.is_finite() => Ok(*x),
        NodeValue::Text(text) => match parse_quantity(text) {
            Ok(q)
                if q.dimension == Dimension::Length || q.dimension == Dimension::Dimensionless =>
            {
                Ok(q.value_si)
            }
            Ok(q) => Err(err(
                &node.span,
                format!(
                    "{what} `{text}` is {}, not a length",
                    q.dimension.describe()
                ),
                expected,
            )),
            Err(e) => Err(err(&node.span, format!("{what} `{text}`: {e}"), expected)),
        },
        _ => Err(err(
            &node.span,
            format!("{what} is {}, not a length", node.kind_name()),
            expected,
        )),
    }
}

/// An angle: must carry a unit (`0 deg`), because degrees and radians are
/// both in use and a bare number would be ambiguous.
fn angle(node: &Node, what: &str) -> Result<f64, CalcError> {
    let expected = "an angle with its unit, for example `-70 deg`";
    match &node.value {
        NodeValue::Text(text) => match parse_quantity(text) {
            Ok(q) if q.dimension == Dimension::Angle => Ok(q.value_si),
            Ok(q) if q.dimension == Dimension::Dimensionless => Err(err(
                &node.span,
                format!("{what} `{text}` has no unit"),
                expected,
            )),
            Ok(q) => Err(err(
                &node.span,
                format!(
                    "{what} `{text}` is {}, not an angle",
                    q.dimension.describe()
                ),
                expected,
            )),
            Err(e) => Err(err(&node.span, format!("{what} `{text}`: {e}"), expected)),
        },
        NodeValue::Number(_) => Err(err(&node.span, format!("{what} has no unit"), expected)),
        _ => Err(err(
            &node.span,
            format!("{what} is {}, not an angle", node.kind_name()),
            expected,
        )),
    }
}

fn point(node: &Node, what: &str) -> Result<[f64; 2], CalcError> {
    match node.as_list() {
        Some([x, y]) => Ok([length(x, what)?, length(y, what)?]),
        _ => Err(err(
            &node.span,
            format!("{what} is {}, not a point [x, y]", describe_len(node)),
            "a point `[x, y]` in metres, for example `[1.10, 0.20]`",
        )),
    }
}

fn describe_len(node: &Node) -> String {
    match node.as_list() {
        Some(items) => format!("a list of {} values", items.len()),
        None => node.kind_name().to_string(),
    }
}

/// Reads `keys` (each required) from a mapping, refusing unknown keys.
fn fields<'a>(
    node: &'a Node,
    what: &str,
    keys: &[&str],
    example: &str,
) -> Result<Vec<&'a Node>, CalcError> {
    let Some(entries) = node.as_map() else {
        return Err(err(
            &node.span,
            format!("the {what} is {}, not a mapping", node.kind_name()),
            example,
        ));
    };
    for (k, _) in entries {
        let name = k.as_text().unwrap_or("");
        let known = keys.contains(&name) || (name == "center" && keys.contains(&"centre"));
        if !known {
            return Err(err(
                &k.span,
                format!("unknown key `{name}` in a {what}"),
                &format!("only {}", keys.join(", ")),
            ));
        }
    }
    keys.iter()
        .map(|key| {
            node.get(key)
                .or_else(|| (*key == "centre").then(|| node.get("center")).flatten())
                .ok_or_else(|| err(&node.span, format!("the {what} has no `{key}`"), example))
        })
        .collect()
}

fn segment(node: &Node, index: usize) -> Result<Segment, CalcError> {
    let n = index + 1;
    let entries = match node.as_map() {
        Some(e) if e.len() == 1 => e,
        _ => {
            return Err(err(
                &node.span,
                format!(
                    "segment {n} is {}; each segment is one `line:` or `arc:`",
                    node.kind_name()
                ),
                EXAMPLE,
            ))
        }
    };
    let (key, body) = (&entries[0].0, &entries[0].1);
    match key.as_text() {
        Some("line") => {
            let f = fields(
                body,
                "line",
                &["from", "to"],
                "`line: { from: [1.10, 0.20], to: [1.30, -0.80] }`",
            )?;
            let from = point(f[0], &format!("the start of segment {n}"))?;
            let to = point(f[1], &format!("the end of segment {n}"))?;
            if (to[0] - from[0]).hypot(to[1] - from[1]) < 1e-3 {
                return Err(err(
                    &body.span,
                    format!("segment {n} is a line of no length"),
                    "two distinct points",
                ));
            }
            Ok(Segment::Line { from, to })
        }
        Some("arc") => {
            let f = fields(
                body,
                "arc",
                &["centre", "radius", "from_angle", "to_angle"],
                "`arc: { centre: [0.30, -0.80], radius: 1.0 m, from_angle: 0 deg, to_angle: -70 deg }`",
            )?;
            let centre = point(f[0], &format!("the centre of segment {n}"))?;
            let radius = length(f[1], &format!("the radius of segment {n}"))?;
            if radius <= 0.0 {
                return Err(err(
                    &f[1].span,
                    format!(
                        "the radius of segment {n} is {radius} m; a radius must be positive (the direction of the arc is set by from_angle and to_angle)"
                    ),
                    "a positive radius, for example `radius: 1.0 m`",
                ));
            }
            let from_angle = angle(f[2], &format!("from_angle of segment {n}"))?;
            let to_angle = angle(f[3], &format!("to_angle of segment {n}"))?;
            let sweep = (to_angle - from_angle).abs();
            if !(1e-6..=std::f64::consts::TAU + 1e-9).contains(&sweep) {
                return Err(err(
                    &f[3].span,
                    format!(
                        "segment {n} sweeps {:.3} deg; an arc sweeps more than 0 and at most 360 deg",
                        sweep.to_degrees()
                    ),
                    "for example `from_angle: 0 deg, to_angle: -70 deg`",
                ));
            }
            Ok(Segment::Arc {
                centre,
                radius,
                from_angle,
                to_angle,
            })
        }
        _ => Err(err(
            &key.span,
            format!(
                "segment {n} is `{}`; a segment is `line` or `arc`",
                key.as_text().unwrap_or("?")
            ),
            EXAMPLE,
        )),
    }
}

/// Reads and validates the chute path. Every problem found is returned,
/// each pointing at the part of the file it concerns: wrong shapes, units,
/// non-positive radii, zero-length segments, and segments that do not join
/// within [`JOIN_TOLERANCE`].
pub fn parse_chute(node: &Node) -> Result<ChutePath, Vec<CalcError>> {
    let Some(items) = node.as_list() else {
        return Err(vec![err(
            &node.span,
            format!("the chute is {}, not a list of segments", node.kind_name()),
            EXAMPLE,
        )]);
    };
    if items.is_empty() {
        return Err(vec![err(
            &node.span,
            "the chute has no segments".into(),
            EXAMPLE,
        )]);
    }
    let mut errors = Vec::new();
    let mut segments = Vec::new();
    for (i, item) in items.iter().enumerate() {
        match segment(item, i) {
            Ok(s) => segments.push(Some(s)),
            Err(e) => {
                errors.push(e);
                segments.push(None);
            }
        }
    }
    for i in 1..segments.len() {
        if let (Some(a), Some(b)) = (segments[i - 1], segments[i]) {
            let end = a.point(a.length());
            let start = b.point(0.0);
            let gap = (end[0] - start[0]).hypot(end[1] - start[1]);
            if gap > JOIN_TOLERANCE {
                errors.push(err(
                    &items[i].span,
                    format!(
                        "segment {} starts at ({:.3}, {:.3}) m but segment {} ends at ({:.3}, {:.3}) m, {:.0} mm away; the chute must be one connected path",
                        i + 1,
                        start[0],
                        start[1],
                        i,
                        end[0],
                        end[1],
                        gap * 1000.0
                    ),
                    &format!(
                        "each segment to start within {:.0} mm of where the one before ends",
                        JOIN_TOLERANCE * 1000.0
                    ),
                ));
            }
        }
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    Ok(ChutePath {
        segments: segments.into_iter().flatten().collect(),
        spans: items.iter().map(|n| n.span.clone()).collect(),
        span: node.span.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn arc_geometry_runs_both_ways() {
        let cw = Segment::Arc {
            centre: [0.0, 0.0],
            radius: 2.0,
            from_angle: 0.0,
            to_angle: -std::f64::consts::FRAC_PI_2,
        };
        let t = cw.tangent(0.0);
        assert!((t[0]).abs() < 1e-12 && (t[1] + 1.0).abs() < 1e-12);
        assert!(cw.curvature_left() < 0.0);
        let end = cw.point(cw.length());
        assert!(end[0].abs() < 1e-12 && (end[1] + 2.0).abs() < 1e-12);
        assert!(
            (cw.arc_distance_of([2f64.sqrt(), -(2f64.sqrt())]).unwrap() - cw.length() / 2.0).abs()
                < 1e-9
        );
        assert!(cw.arc_distance_of([0.0, 2.0]).is_none());
    }

    #[test]
    fn vertical_drop_meets_a_floor() {
        let path = ChutePath {
            segments: vec![Segment::Line {
                from: [-1.0, -2.0],
                to: [1.0, -2.0],
            }],
            spans: vec![Span::new("t.yaml", 1, 1)],
            span: Span::new("t.yaml", 1, 1),
        };
        let c = path
            .first_crossing([0.0, 0.0], [0.0, 0.0], 9.81, None)
            .unwrap();
        assert!((c.point[1] + 2.0).abs() < 1e-9);
        assert!((c.time - (4.0 / 9.81f64).sqrt()).abs() < 1e-9);
        assert!((c.at.along - 1.0).abs() < 1e-9);
        assert!(path
            .first_crossing([5.0, 0.0], [1.0, 0.0], 9.81, None)
            .is_none());
    }
}
