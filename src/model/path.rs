//! # Web path geometry over rollers
//!
//! Turns the ordered path nodes (free points and rollers with a wrap direction)
//! into the straight *spans* the field solver integrates over and the *wrap
//! arcs* where the web lies on a roller, with the arc length `s` running along
//! the whole path. Part of the model stage: `RawLine → Line`.
//!
//! ## Tangents
//! Every node is treated as a circle: a roller with centre **C** and radius r,
//! or a free point (r = 0). A roller wrapped counter-clockwise (`ccw`, as seen in
//! the side view, x right and z up) lies on the *left* of the direction of
//! travel, one wrapped clockwise (`cw`) on the right; write the side as
//! ς = +1 (left) or −1 (right). The span from node 1 to node 2 runs along a line
//! with unit direction **d** and left normal **n** = (−d_z, d_x) such that
//!
//! $$ \mathbf C_i - \mathbf T_i = ς_i r_i \mathbf n, \qquad i = 1, 2, $$
//!
//! where **T**ᵢ are the tangent points. With **D** = **C**₂ − **C**₁, L = |**D**|,
//! **e** = **D**/L, **e**⊥ its left normal and k = ς₂r₂ − ς₁r₁:
//!
//! $$ β = -k/L,\quad α = \sqrt{1-β^2},\quad \mathbf d = α\mathbf e + β\mathbf e_⊥ . $$
//!
//! Equal wrap directions give the outer common tangent, opposite ones the
//! crossed tangent, a point and a roller the tangent from the point. No tangent
//! exists when L ≤ |k| (a point inside the roller, or crossed rollers that
//! overlap).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | **C**, r | roller centre `[x, z]` and radius | m |
//! | **T** | tangent point | m |
//! | s | arc length along the path from its first node | m |
//! | φ | wrap angle of the web on a roller | rad |
//!
//! Wrap arcs: the web arrives at **T**_in, travels round the roller in its wrap
//! direction and leaves at **T**_out; the wrap angle φ ∈ [0, 2π) is the angle
//! swept in that direction, and the arc length is r·φ.
//!
//! Assumptions: the web is thin (its thickness is ignored in the geometry) and
//! flat across its width; rollers are straight cylinders, centred on the web's
//! centreline and at least as long as the web is wide.
//!
//! ## Reference
//! Elementary plane geometry of common tangents to two circles (e.g. any
//! analytic-geometry text; derived here from the condition above).

use crate::units::Meters;
use std::f64::consts::TAU;

/// A roller without `length:` is this much longer than the web is wide [m]
/// (0.1 m beyond each edge; an assumption, stated in the outputs).
pub const ROLLER_LENGTH_MARGIN: Meters = 0.2;

/// Wrap angle above which a wrap is warned about as a likely wrong `wrap:`
/// direction [rad] (270°): on web lines the web rarely goes more than about
/// half a turn round a roller, and a `cw`/`ccw` mix-up sends it the long
/// way round. Our own judgement (common practice), not a published
/// limit.
pub const MAX_LIKELY_WRAP: f64 = 1.5 * std::f64::consts::PI;

/// Shortest span accepted [m]; shorter spans are refused as "zero length".
pub const MIN_SPAN_LENGTH: Meters = 1e-6;

/// Wrap direction of the web on a roller, as seen in the side view.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Wrap {
    /// Clockwise: the roller lies on the right of the direction of travel.
    Cw,
    /// Counter-clockwise: the roller lies on the left of the direction of travel.
    Ccw,
}

impl Wrap {
    /// ς: +1 when the roller is on the left of the travel direction (ccw), −1 for cw.
    pub fn side(self) -> f64 {
        match self {
            Wrap::Cw => -1.0,
            Wrap::Ccw => 1.0,
        }
    }
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            Wrap::Cw => "cw",
            Wrap::Ccw => "ccw",
        }
    }
}

/// How a roller is connected to earth.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Earthing {
    /// A conductor bonded to earth.
    Grounded,
    /// A conductor not bonded to earth.
    Isolated,
    /// A roller of insulating material.
    Insulating,
}

impl Earthing {
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            Earthing::Grounded => "grounded",
            Earthing::Isolated => "isolated",
            Earthing::Insulating => "insulating",
        }
    }
}

/// A validated roller.
#[derive(Debug, Clone, PartialEq)]
pub struct Roller {
    /// Identifier.
    pub id: String,
    /// Centre `[x, z]` in the side view [m].
    pub center: [Meters; 2],
    /// Radius [m].
    pub radius: Meters,
    /// Connection to earth.
    pub earthing: Earthing,
    /// Length along its axis (ŷ), centred on the web's centreline [m].
    pub length: Meters,
    /// Whether `length` is the default (web width + [`ROLLER_LENGTH_MARGIN`])
    /// rather than given, so that outputs can say so.
    pub length_defaulted: bool,
}

/// What a path node is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum NodeKind {
    /// A free point `[x, z]` [m].
    Point([Meters; 2]),
    /// A roller (index into the line's rollers) and the wrap direction on it.
    Roller {
        /// Index into `Line::rollers`.
        roller: usize,
        /// Wrap direction.
        wrap: Wrap,
    },
}

/// A node of the web path as the user listed it.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeSpec {
    /// The node's id: the roller id, or a point's optional id.
    pub id: Option<String>,
    /// Point or roller.
    pub kind: NodeKind,
}

/// A straight, free piece of web between two consecutive nodes.
#[derive(Debug, Clone, PartialEq)]
pub struct Span {
    /// `S1`, `S2`, … in path order.
    pub name: String,
    /// `FROM-TO` from the node ids, when both nodes have ids.
    pub alias: Option<String>,
    /// Index of the node the span leaves.
    pub from_node: usize,
    /// Index of the node the span arrives at.
    pub to_node: usize,
    /// Start `[x, z]` [m].
    pub start: [Meters; 2],
    /// End `[x, z]` [m].
    pub end: [Meters; 2],
    /// Length [m].
    pub length: Meters,
    /// Arc length at the start [m].
    pub s_start: Meters,
    /// Arc length at the end [m].
    pub s_end: Meters,
}

impl Span {
    /// Unit direction of travel `[dx, dz]`.
    pub fn direction(&self) -> [f64; 2] {
        [
            (self.end[0] - self.start[0]) / self.length,
            (self.end[1] - self.start[1]) / self.length,
        ]
    }
    /// Angle of the direction of travel above the +x axis [rad], in (−π, π].
    pub fn angle(&self) -> f64 {
        let d = self.direction();
        d[1].atan2(d[0])
    }
    /// A display label: `S3 (R2-R3)`.
    pub fn label(&self) -> String {
        match &self.alias {
            Some(a) => format!("{} ({a})", self.name),
            None => self.name.clone(),
        }
    }
}

/// Where the web lies on a roller.
#[derive(Debug, Clone, PartialEq)]
pub struct WrapArc {
    /// Index of the path node.
    pub node: usize,
    /// Index of the roller.
    pub roller: usize,
    /// Angle of the arrival point about the centre [rad].
    pub start_angle: f64,
    /// Signed swept angle: positive counter-clockwise [rad].
    pub sweep: f64,
    /// Arc length at arrival [m].
    pub s_start: Meters,
    /// Arc length at departure [m].
    pub s_end: Meters,
}

/// The validated web path: nodes, spans and wrap arcs with their arc lengths.
#[derive(Debug, Clone, PartialEq)]
pub struct WebPath {
    /// Nodes in travel order.
    pub nodes: Vec<NodeSpec>,
    /// Spans in travel order: span i joins node i and node i + 1.
    pub spans: Vec<Span>,
    /// Wrap arcs on rollers between an arriving and a leaving span.
    pub arcs: Vec<WrapArc>,
    /// Arc length at which the web leaves each node [m].
    pub departure_s: Vec<Meters>,
    /// Total arc length of the path [m].
    pub total_length: Meters,
}

impl WebPath {
    /// Finds a span by name (`S3`) or by `FROM-TO` node ids.
    pub fn span_index(&self, name: &str) -> Option<usize> {
        let name = name.trim();
        self.spans
            .iter()
            .position(|s| s.name.eq_ignore_ascii_case(name))
            .or_else(|| {
                self.spans
                    .iter()
                    .position(|s| s.alias.as_deref() == Some(name))
            })
    }

    /// Indices of the nodes that carry this id.
    pub fn nodes_with_id(&self, id: &str) -> Vec<usize> {
        self.nodes
            .iter()
            .enumerate()
            .filter(|(_, n)| n.id.as_deref() == Some(id))
            .map(|(i, _)| i)
            .collect()
    }
}

/// A geometry problem, with the index of the path node it concerns.
#[derive(Debug, Clone, PartialEq)]
pub struct PathProblem {
    /// Index into the YAML `path` list.
    pub node: usize,
    /// What is wrong and what would be accepted.
    pub message: String,
}

fn sub(a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    [a[0] - b[0], a[1] - b[1]]
}

fn norm(a: [f64; 2]) -> f64 {
    a[0].hypot(a[1])
}

/// Centre, signed radius ς·r and radius of a node seen as a circle.
fn circle(node: &NodeSpec, rollers: &[Roller]) -> ([f64; 2], f64, f64) {
    match node.kind {
        NodeKind::Point(p) => (p, 0.0, 0.0),
        NodeKind::Roller { roller, wrap } => {
            let r = &rollers[roller];
            (r.center, wrap.side() * r.radius, r.radius)
        }
    }
}

/// The common tangent leaving circle 1 and arriving at circle 2 (see the module
/// header): returns the tangent points `(T1, T2)`, or `None` when no tangent
/// exists. `sr` is the signed radius ς·r.
pub fn tangent(c1: [f64; 2], sr1: f64, c2: [f64; 2], sr2: f64) -> Option<([f64; 2], [f64; 2])> {
    let dv = sub(c2, c1);
    let l = norm(dv);
    let k = sr2 - sr1;
    if l.is_nan() || l <= 0.0 || l * l - k * k <= (1e-12 * l).powi(2) {
        return None;
    }
    let e = [dv[0] / l, dv[1] / l];
    let ep = [-e[1], e[0]];
    let beta = -k / l;
    let alpha = (1.0 - beta * beta).sqrt();
    let d = [alpha * e[0] + beta * ep[0], alpha * e[1] + beta * ep[1]];
    let n = [-d[1], d[0]];
    let t1 = [c1[0] - sr1 * n[0], c1[1] - sr1 * n[1]];
    let t2 = [c2[0] - sr2 * n[0], c2[1] - sr2 * n[1]];
    Some((t1, t2))
}

fn node_name(node: &NodeSpec, index: usize) -> String {
    match (&node.id, node.kind) {
        (Some(id), NodeKind::Roller { .. }) => format!("roller {id}"),
        (Some(id), NodeKind::Point(_)) => format!("point {id}"),
        (None, _) => format!("path[{index}]"),
    }
}

/// Builds spans and wrap arcs. `rollers` must already be valid (positive
/// radii, no overlaps); every geometry problem found is returned.
pub fn build_path(nodes: Vec<NodeSpec>, rollers: &[Roller]) -> Result<WebPath, Vec<PathProblem>> {
    let mut problems = Vec::new();
    if nodes.len() < 2 {
        problems.push(PathProblem {
            node: 0,
            message: format!(
                "the path has {} node(s): expected at least two (a start and an end, each a `point:` or a `roller:`)",
                nodes.len()
            ),
        });
        return Err(problems);
    }
    // A free point inside a roller.
    for (i, node) in nodes.iter().enumerate() {
        if let NodeKind::Point(p) = node.kind {
            for r in rollers {
                if norm(sub(p, r.center)) < r.radius {
                    problems.push(PathProblem {
                        node: i,
                        message: format!(
                            "the point {} lies inside roller {} (centre {}, radius {}): move the point outside the roller",
                            crate::units::format_point(&p),
                            r.id,
                            crate::units::format_point(&r.center),
                            crate::units::format_quantity(r.radius, crate::units::Dim::Length)
                        ),
                    });
                }
            }
        }
    }
    // Tangent points: departure from node i and arrival at node i + 1.
    let mut pieces = Vec::with_capacity(nodes.len() - 1);
    for i in 0..nodes.len() - 1 {
        let (c1, sr1, _) = circle(&nodes[i], rollers);
        let (c2, sr2, _) = circle(&nodes[i + 1], rollers);
        match tangent(c1, sr1, c2, sr2) {
            Some((t1, t2)) => {
                let len = norm(sub(t2, t1));
                if len < MIN_SPAN_LENGTH {
                    problems.push(PathProblem {
                        node: i + 1,
                        message: format!(
                            "the span from {} to {} has zero length ({len:.3e} m): move the nodes apart (a nip needs a gap of at least the web thickness)",
                            node_name(&nodes[i], i),
                            node_name(&nodes[i + 1], i + 1)
                        ),
                    });
                }
                pieces.push((t1, t2, len));
            }
            None => {
                let what = match (nodes[i].kind, nodes[i + 1].kind) {
                    (NodeKind::Point(_), NodeKind::Point(_)) => {
                        "two consecutive points coincide".to_string()
                    }
                    (NodeKind::Point(_), NodeKind::Roller { .. })
                    | (NodeKind::Roller { .. }, NodeKind::Point(_)) => {
                        "the point lies on or inside the roller, so no tangent from it exists".to_string()
                    }
                    _ => "the rollers overlap or touch for the crossed tangent that opposite wrap directions need".to_string(),
                };
                problems.push(PathProblem {
                    node: i + 1,
                    message: format!(
                        "no web span from {} to {}: {what}; move the nodes apart or change a wrap direction",
                        node_name(&nodes[i], i),
                        node_name(&nodes[i + 1], i + 1)
                    ),
                });
                pieces.push(([0.0; 2], [0.0; 2], 0.0));
            }
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }

    let mut spans = Vec::with_capacity(pieces.len());
    let mut arcs = Vec::new();
    let mut departure_s = vec![0.0; nodes.len()];
    let mut s = 0.0;
    for (i, &(t1, t2, len)) in pieces.iter().enumerate() {
        // The wrap arc on node i, between the arriving span i − 1 and this span.
        if i > 0
            && let NodeKind::Roller { roller, wrap } = nodes[i].kind
        {
            let r = &rollers[roller];
            let arrive = pieces[i - 1].1;
            let a_in = (arrive[1] - r.center[1]).atan2(arrive[0] - r.center[0]);
            let a_out = (t1[1] - r.center[1]).atan2(t1[0] - r.center[0]);
            let mut sweep = match wrap {
                Wrap::Ccw => (a_out - a_in).rem_euclid(TAU),
                Wrap::Cw => (a_in - a_out).rem_euclid(TAU),
            };
            if sweep > TAU - 1e-12 {
                sweep = 0.0;
            }
            let signed = if wrap == Wrap::Ccw { sweep } else { -sweep };
            let arc_len = r.radius * sweep;
            arcs.push(WrapArc {
                node: i,
                roller,
                start_angle: a_in,
                sweep: signed,
                s_start: s,
                s_end: s + arc_len,
            });
            s += arc_len;
        }
        departure_s[i] = s;
        let from = &nodes[i];
        let to = &nodes[i + 1];
        let alias = match (&from.id, &to.id) {
            (Some(a), Some(b)) => Some(format!("{a}-{b}")),
            _ => None,
        };
        spans.push(Span {
            name: format!("S{}", i + 1),
            alias,
            from_node: i,
            to_node: i + 1,
            start: t1,
            end: t2,
            length: len,
            s_start: s,
            s_end: s + len,
        });
        s += len;
    }
    let last = nodes.len() - 1;
    departure_s[last] = s;
    Ok(WebPath {
        nodes,
        spans,
        arcs,
        departure_s,
        total_length: s,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn roller(id: &str, x: f64, z: f64, r: f64) -> Roller {
        Roller {
            id: id.into(),
            center: [x, z],
            radius: r,
            earthing: Earthing::Grounded,
            length: 1.0,
            length_defaulted: false,
        }
    }

    fn rnode(i: usize, id: &str, wrap: Wrap) -> NodeSpec {
        NodeSpec {
            id: Some(id.into()),
            kind: NodeKind::Roller { roller: i, wrap },
        }
    }

    /// Tangency: |T − C| = r and (T2 − T1) ⟂ (T − C), for all four wrap pairs.
    #[test]
    fn tangent_points_touch_and_are_perpendicular_for_all_wrap_pairs() {
        let c1 = [0.0, 0.0];
        let c2 = [1.0, 0.3];
        let (r1, r2) = (0.1, 0.15);
        for (w1, w2) in [
            (Wrap::Cw, Wrap::Cw),
            (Wrap::Ccw, Wrap::Ccw),
            (Wrap::Cw, Wrap::Ccw),
            (Wrap::Ccw, Wrap::Cw),
        ] {
            let (t1, t2) = tangent(c1, w1.side() * r1, c2, w2.side() * r2).unwrap();
            let d = sub(t2, t1);
            let r1v = sub(t1, c1);
            let r2v = sub(t2, c2);
            assert!((norm(r1v) - r1).abs() < 1e-14);
            assert!((norm(r2v) - r2).abs() < 1e-14);
            assert!((d[0] * r1v[0] + d[1] * r1v[1]).abs() < 1e-14);
            assert!((d[0] * r2v[0] + d[1] * r2v[1]).abs() < 1e-14);
            // Side: cross(d, C − T) > 0 means the centre is on the left (ccw).
            let cross1 = d[0] * (-r1v[1]) - d[1] * (-r1v[0]);
            let cross2 = d[0] * (-r2v[1]) - d[1] * (-r2v[0]);
            assert_eq!(cross1 > 0.0, w1 == Wrap::Ccw);
            assert_eq!(cross2 > 0.0, w2 == Wrap::Ccw);
        }
    }

    /// Outer tangent of equal circles is as long as the centre distance; the
    /// crossed tangent is sqrt(L² − (r1 + r2)²) (plane geometry).
    #[test]
    fn tangent_lengths_match_plane_geometry() {
        let (t1, t2) = tangent([0.0, 0.0], -0.1, [2.0, 0.0], -0.1).unwrap();
        assert!((norm(sub(t2, t1)) - 2.0).abs() < 1e-14);
        assert!((t1[1] - 0.1).abs() < 1e-14, "cw over the top: {t1:?}");
        let (t1, t2) = tangent([0.0, 0.0], -0.1, [2.0, 0.0], 0.2).unwrap();
        let expect = (4.0f64 - 0.09).sqrt();
        assert!((norm(sub(t2, t1)) - expect).abs() < 1e-14);
        // Point to roller: sqrt(L² − r²).
        let (t1, t2) = tangent([0.0, 0.0], 0.0, [1.0, 0.0], 0.6).unwrap();
        assert_eq!(t1, [0.0, 0.0]);
        assert!((norm(sub(t2, t1)) - 0.8).abs() < 1e-14);
    }

    #[test]
    fn no_tangent_from_inside_or_for_overlapping_crossed_rollers() {
        assert!(tangent([0.0, 0.0], 0.0, [0.05, 0.0], 0.1).is_none());
        assert!(tangent([0.0, 0.0], 0.1, [0.15, 0.0], -0.1).is_none());
        assert!(tangent([0.0, 0.0], 0.0, [0.0, 0.0], 0.0).is_none());
    }

    /// A web over the top of two cw rollers 1 m apart with a point before and
    /// after: wrap angles of a quarter turn each give arc lengths π r / 2.
    #[test]
    fn arc_lengths_of_quarter_wraps() {
        let rollers = vec![roller("A", 0.0, 0.0, 0.1), roller("B", 1.0, 0.0, 0.1)];
        let nodes = vec![
            NodeSpec {
                id: Some("IN".into()),
                kind: NodeKind::Point([-0.1, -1.0]),
            },
            rnode(0, "A", Wrap::Cw),
            rnode(1, "B", Wrap::Cw),
            NodeSpec {
                id: None,
                kind: NodeKind::Point([1.1, -1.0]),
            },
        ];
        let p = build_path(nodes, &rollers).unwrap();
        assert_eq!(p.spans.len(), 3);
        assert_eq!(p.arcs.len(), 2);
        let q = std::f64::consts::FRAC_PI_2 * 0.1;
        assert!((p.arcs[0].sweep + std::f64::consts::FRAC_PI_2).abs() < 1e-12);
        assert!((p.arcs[0].s_end - p.arcs[0].s_start - q).abs() < 1e-12);
        assert!((p.arcs[1].s_end - p.arcs[1].s_start - q).abs() < 1e-12);
        assert!((p.spans[0].length - 1.0).abs() < 1e-12);
        assert!((p.spans[1].length - 1.0).abs() < 1e-12);
        assert!((p.total_length - (3.0 + 2.0 * q)).abs() < 1e-12);
        assert_eq!(p.spans[1].alias.as_deref(), Some("A-B"));
        assert_eq!(p.spans[2].alias, None);
        assert_eq!(p.span_index("A-B"), Some(1));
        assert_eq!(p.span_index("s3"), Some(2));
        // Arc length is continuous: span i starts where arc i − 1 ends.
        assert!((p.spans[1].s_start - p.arcs[0].s_end).abs() < 1e-15);
    }

    #[test]
    fn refuses_short_paths_and_points_inside_rollers() {
        let rollers = vec![roller("A", 0.0, 0.0, 0.1)];
        let one = vec![rnode(0, "A", Wrap::Cw)];
        assert!(build_path(one, &rollers).is_err());
        let nodes = vec![
            NodeSpec {
                id: None,
                kind: NodeKind::Point([0.05, 0.0]),
            },
            rnode(0, "A", Wrap::Cw),
        ];
        let err = build_path(nodes, &rollers).unwrap_err();
        assert!(err.iter().any(|p| p.message.contains("inside roller A")));
    }
}
