//! Second reading stage: `RawLine → Line`.
//!
//! Checks every value and every reference, collecting *all* problems with
//! their YAML path (`rollers[2].diameter: expected a length such as "120 mm",
//! got "120"`) instead of stopping at the first. Suspicious but possible input
//! becomes a warning kept in `Line::warnings`. The `conductors:` list is
//! checked in `validate/conductors.rs`.

mod conductors;

use super::conductor::Conductor;
use super::geometry::{meter_geometry, point_problem_in};
use super::path::{self, Earthing, NodeKind, NodeSpec, ROLLER_LENGTH_MARGIN, Roller, Wrap};
use super::raw::{RawLine, RawReading, Scalar};
use super::*;
use crate::physics::isolated_sheet_limit;
use crate::units::{
    Dim, EPS0, ParseQuantityError, Tolerance, parse_quantity, parse_with_tolerance,
};

/// A length for a message (4 significant digits, SI prefix).
fn len_text(x: f64) -> String {
    crate::units::format_quantity(x, Dim::Length)
}

/// Densities above this [C/m²] are refused as a likely unit error: about 19
/// times what air can hold on an isolated sheet.
pub const ABSURD_SIGMA: f64 = 1e-3;

/// Largest length or coordinate accepted [m]: a web line, its building and
/// its surroundings fit within 10 km of the line's origin; larger values are
/// unit errors (and would make the field-map grid meaningless).
pub const MAX_LENGTH: f64 = 10e3;

/// Smallest non-zero length accepted [m]: 0.1 µm, below the thinnest webs
/// (films of about 1.5 µm) and any distance a meter or a model resolves.
pub const MIN_LENGTH: f64 = 1e-7;

/// Fastest web speed accepted [m/s]: 50 m/s (3000 m/min). The fastest paper
/// machines run near 2000 m/min (about 33 m/s; common practice, from
/// memory); a faster value is a unit error.
pub const MAX_SPEED: f64 = 50.0;

/// Why a parsed value lies outside what a plant can hold, or `None`.
fn out_of_plant(x: f64, dim: Dim) -> Option<String> {
    let q = |v: f64| crate::units::format_quantity(v, dim);
    match dim {
        Dim::Length if x.abs() > MAX_LENGTH => Some(format!(
            "{} is beyond 10 km: every length and coordinate of a line lies within 10 km of its origin (check the unit)",
            q(x)
        )),
        Dim::Length if x != 0.0 && x.abs() < MIN_LENGTH => Some(format!(
            "{} is below 0.1 µm: no length of a web line is that small except zero (check the unit)",
            q(x)
        )),
        Dim::Speed if x.abs() > MAX_SPEED => Some(format!(
            "{} is above 50 m/s (3000 m/min): no web line runs that fast (the fastest paper machines run near 2000 m/min); check the unit",
            q(x)
        )),
        _ => None,
    }
}

/// Longest lists a line description may hold, `(key, most entries)`: far
/// more than any line needs, and bounds on the work (every roller and
/// conductor adds panels to the conductors' solve, every point, reading and
/// eliminator adds field evaluations).
pub const MAX_ENTRIES: [(&str, usize); 9] = [
    ("rollers", 200),
    ("path", 400),
    ("charge", 400),
    ("points", 500),
    ("zones", 100),
    ("assess", 20),
    ("readings", 200),
    ("eliminators", 50),
    ("conductors", 100),
];

/// Lists longer than [`MAX_ENTRIES`] allows, each an issue at its key.
fn check_list_lengths(ctx: &mut Ctx, raw: &RawLine) {
    let lens = [
        raw.rollers.len(),
        raw.path.len(),
        raw.charge.len(),
        raw.points.len(),
        raw.zones.len(),
        raw.assess.len(),
        raw.readings.len(),
        raw.eliminators.len(),
        raw.conductors.len(),
    ];
    for ((key, most), n) in MAX_ENTRIES.iter().zip(lens) {
        if n > *most {
            ctx.err(
                *key,
                format!("{n} entries: at most {most} are accepted (far more than a line needs; each adds to the work of every run): split the line or remove entries"),
            );
        }
    }
}

struct Ctx {
    issues: Vec<Issue>,
    warnings: Vec<Issue>,
}

impl Ctx {
    fn err(&mut self, path: impl Into<String>, msg: impl Into<String>) {
        self.issues.push(Issue::at(path, msg));
    }
    fn warn(&mut self, path: impl Into<String>, msg: impl Into<String>) {
        self.warnings.push(Issue::at(path, msg));
    }
    /// A required value: reports it missing.
    fn need<'a>(&mut self, v: &'a Option<Scalar>, path: &str, what: &str) -> Option<&'a Scalar> {
        if v.is_none() {
            self.err(path, format!("missing: expected {what}"));
        }
        v.as_ref()
    }
    fn qty(&mut self, v: &Scalar, dim: Dim, path: &str) -> Option<f64> {
        match parse_quantity(v.as_str(), dim) {
            Ok(x) => match out_of_plant(x, dim) {
                None => Some(x),
                Some(why) => {
                    self.err(path, why);
                    None
                }
            },
            Err(e @ ParseQuantityError::ToleranceNotAccepted { .. })
                if path.starts_with("readings[") =>
            {
                self.err(
                    path,
                    format!("{e}; the readings' uncertainty is given once for the meter, by `meter.accuracy` and `meter.offset`"),
                );
                None
            }
            Err(e) => {
                self.err(path, e.to_string());
                None
            }
        }
    }
    /// A value that may carry a tolerance (`8 uC/m^2 ± 20 %`), see
    /// [`parse_with_tolerance`].
    fn qty_tol(&mut self, v: &Scalar, dim: Dim, path: &str) -> Option<(f64, Option<Tolerance>)> {
        match parse_with_tolerance(v.as_str(), dim) {
            Ok((x, t)) => match out_of_plant(x, dim) {
                None => Some((x, t)),
                Some(why) => {
                    self.err(path, why);
                    None
                }
            },
            Err(e) => {
                self.err(path, e.to_string());
                None
            }
        }
    }
    fn req_qty(&mut self, v: &Option<Scalar>, dim: Dim, path: &str) -> Option<f64> {
        let what = format!("{} such as \"{}\"", dim.name(), dim.example());
        let s = self.need(v, path, &what)?;
        self.qty(s, dim, path)
    }
    fn positive(&mut self, x: Option<f64>, dim: Dim, path: &str) -> Option<f64> {
        let x = x?;
        if x > 0.0 {
            Some(x)
        } else {
            self.err(
                path,
                format!(
                    "expected a positive {}, got {}",
                    dim.name()
                        .trim_start_matches("a ")
                        .trim_start_matches("an "),
                    crate::units::format_quantity(x, dim)
                ),
            );
            None
        }
    }
    fn id(&mut self, v: &Option<Scalar>, path: &str) -> Option<String> {
        let s = self.need(v, path, "an identifier such as \"R1\"")?;
        let t = s.as_str().trim();
        if t.is_empty() || t.contains(char::is_whitespace) || t.len() > 64 {
            self.err(
                path,
                format!("expected an identifier of up to 64 characters without spaces, such as \"R1\", got \"{t}\""),
            );
            return None;
        }
        if t.eq_ignore_ascii_case("start") {
            self.err(
                path,
                "\"start\" is reserved for the start of the path: choose another id",
            );
            return None;
        }
        Some(t.to_string())
    }
    fn lengths<const N: usize>(
        &mut self,
        v: &Option<Vec<Scalar>>,
        path: &str,
        form: &str,
    ) -> Option<[f64; N]> {
        let Some(list) = v else {
            self.err(path, format!("missing: expected {form}"));
            return None;
        };
        if list.len() != N {
            self.err(
                path,
                format!("expected {form} ({N} lengths), got {} value(s)", list.len()),
            );
            return None;
        }
        let mut out = [0.0; N];
        let mut ok = true;
        for (i, s) in list.iter().enumerate() {
            match self.qty(s, Dim::Length, &format!("{path}[{i}]")) {
                Some(x) => out[i] = x,
                None => ok = false,
            }
        }
        ok.then_some(out)
    }
}

fn keyword<'a>(
    ctx: &mut Ctx,
    v: &Option<Scalar>,
    path: &str,
    allowed: &[&'a str],
) -> Option<&'a str> {
    let s = ctx.need(v, path, &format!("one of {}", allowed.join(" | ")))?;
    let t = s.as_str().trim();
    match allowed.iter().find(|a| a.eq_ignore_ascii_case(t)) {
        Some(a) => Some(a),
        None => {
            ctx.err(
                path,
                format!("expected one of {}, got \"{t}\"", allowed.join(" | ")),
            );
            None
        }
    }
}

/// Validates a raw line description into a [`Line`], collecting every problem.
pub fn validate(raw: &RawLine) -> Result<Line, ValidationError> {
    let mut ctx = Ctx {
        issues: Vec::new(),
        warnings: Vec::new(),
    };
    check_list_lengths(&mut ctx, raw);
    if !ctx.issues.is_empty() {
        return Err(ValidationError { issues: ctx.issues });
    }
    let title = raw
        .line
        .as_ref()
        .map(|s| s.as_str().trim().to_string())
        .filter(|s| !s.is_empty())
        .unwrap_or_else(|| "untitled line".to_string());

    let web = validate_web(&mut ctx, raw);
    let ground_plane = raw
        .ground_plane
        .as_ref()
        .and_then(|g| ctx.qty(g, Dim::Length, "ground_plane"));
    let rollers = validate_rollers(&mut ctx, raw, ground_plane, web.as_ref().map(|w| w.width));
    let nodes = validate_nodes(&mut ctx, raw, &rollers);
    let across = web
        .as_ref()
        .and_then(|w| validate_across(&mut ctx, raw, w.width));

    // Geometry needs valid rollers and nodes; stop here if they are not.
    let (Some(web), Some(rollers), Some(nodes), Some(across)) = (web, rollers, nodes, across)
    else {
        return Err(ValidationError { issues: ctx.issues });
    };
    let path = match path::build_path(nodes, &rollers) {
        Ok(p) => p,
        Err(problems) => {
            for p in problems {
                ctx.err(format!("path[{}]", p.node), p.message);
            }
            return Err(ValidationError { issues: ctx.issues });
        }
    };
    check_spans(&mut ctx, &path, &rollers, ground_plane);
    check_wraps(&mut ctx, &path, &rollers);
    let charge = validate_charge(&mut ctx, raw, &path, &web, &across);
    let conductors =
        conductors::validate_conductors(&mut ctx, raw, &path, &rollers, &web, ground_plane);
    let scene = Obstacles {
        path: &path,
        rollers: &rollers,
        conductors: &conductors,
        web: &web,
        ground: ground_plane,
    };
    let points = validate_points(&mut ctx, raw, &scene);
    let zones = validate_zones(&mut ctx, raw, &points, &rollers, &path);
    let assess = validate_assess(&mut ctx, raw);
    let meter = validate_meter(&mut ctx, raw);
    let readings = validate_readings(&mut ctx, raw, &scene);
    let eliminators = validate_eliminators(&mut ctx, raw, &scene);
    conductors::check_ids(
        &mut ctx,
        &conductors,
        &[
            ("roller", rollers.iter().map(|r| r.id.as_str()).collect()),
            (
                "path node",
                path.nodes.iter().filter_map(|n| n.id.as_deref()).collect(),
            ),
            ("point", points.iter().map(|x| x.id.as_str()).collect()),
            ("zone", zones.iter().map(|x| x.id.as_str()).collect()),
            ("reading", readings.iter().map(|x| x.id.as_str()).collect()),
            (
                "eliminator",
                eliminators.iter().map(|x| x.id.as_str()).collect(),
            ),
        ],
    );

    if !ctx.issues.is_empty() {
        return Err(ValidationError { issues: ctx.issues });
    }
    Ok(Line {
        title,
        web,
        ground_plane,
        rollers,
        path,
        across,
        charge,
        points,
        zones,
        assess,
        readings,
        meter,
        eliminators,
        conductors,
        warnings: ctx.warnings,
    })
}

/// What a place of interest must stay clear of: the web, the rollers, the
/// other conductors and the ground.
struct Obstacles<'a> {
    path: &'a WebPath,
    rollers: &'a [Roller],
    conductors: &'a [Conductor],
    web: &'a Web,
    ground: Option<f64>,
}

impl Obstacles<'_> {
    fn problem(&self, at: [f64; 3]) -> Option<super::geometry::PointProblem> {
        point_problem_in(
            self.path,
            self.rollers,
            self.conductors,
            self.web.width,
            self.ground,
            at,
        )
    }
}

fn validate_web(ctx: &mut Ctx, raw: &RawLine) -> Option<Web> {
    let Some(w) = &raw.web else {
        ctx.err("web", "missing: expected the web's width, thickness, relative_permittivity, volume_resistivity (or relaxation_time) and speed");
        return None;
    };
    let width = ctx.req_qty(&w.width, Dim::Length, "web.width");
    let width = ctx.positive(width, Dim::Length, "web.width");
    let thickness = ctx.req_qty(&w.thickness, Dim::Length, "web.thickness");
    let thickness = ctx.positive(thickness, Dim::Length, "web.thickness");
    if let (Some(wd), Some(t)) = (width, thickness) {
        if t >= wd {
            ctx.err(
                "web.thickness",
                "the web is thicker than it is wide: check the units of width and thickness",
            );
        }
        if t > 0.01 {
            ctx.warn(
                "web.thickness",
                format!(
                    "{} is unusually thick for a web; the model treats the web as a thin sheet",
                    crate::units::format_quantity(t, Dim::Length)
                ),
            );
        }
    }
    if let Some(wd) = width
        && wd > 20.0
    {
        ctx.warn(
            "web.width",
            format!(
                "{} is wider than any usual web line: check the unit",
                crate::units::format_quantity(wd, Dim::Length)
            ),
        );
    }
    let er = ctx.req_qty(
        &w.relative_permittivity,
        Dim::Number,
        "web.relative_permittivity",
    );
    let er = match er {
        Some(e) if e < 1.0 => {
            ctx.err(
                "web.relative_permittivity",
                format!("expected a relative permittivity of at least 1 (vacuum), got {e}"),
            );
            None
        }
        Some(e) if e > 100.0 => {
            ctx.warn(
                "web.relative_permittivity",
                format!("{e} is far above that of web materials (about 2 to 10)"),
            );
            Some(e)
        }
        other => other,
    };
    let speed = ctx.req_qty(&w.speed, Dim::Speed, "web.speed");
    let speed = ctx.positive(speed, Dim::Speed, "web.speed");
    let rho = w
        .volume_resistivity
        .as_ref()
        .and_then(|r| ctx.qty(r, Dim::Resistivity, "web.volume_resistivity"));
    let rho = ctx.positive_opt(rho, Dim::Resistivity, "web.volume_resistivity");
    let rs = w
        .surface_resistivity
        .as_ref()
        .and_then(|r| ctx.qty(r, Dim::SurfaceResistivity, "web.surface_resistivity"));
    let rs = ctx.positive_opt(rs, Dim::SurfaceResistivity, "web.surface_resistivity");
    // A surface resistivity of a web whose conduction is through its bulk:
    // ρ = R_s·t (IEC 61340-2-3's relation for a homogeneous sheet; stated
    // in the output).
    let rho = match (rho, rs, thickness) {
        (None, Some(r), Some(t)) => Some(r * t),
        (r, _, _) => r,
    };
    let tau_given = w
        .relaxation_time
        .as_ref()
        .and_then(|r| ctx.qty(r, Dim::Time, "web.relaxation_time"));
    let tau_given = ctx.positive_opt(tau_given, Dim::Time, "web.relaxation_time");
    let given = [
        w.volume_resistivity.is_some(),
        w.surface_resistivity.is_some(),
        w.relaxation_time.is_some(),
    ];
    let tau = match (
        w.volume_resistivity
            .as_ref()
            .or(w.surface_resistivity.as_ref()),
        &w.relaxation_time,
    ) {
        _ if given.iter().filter(|g| **g).count() > 1 => {
            ctx.err("web", "give one of volume_resistivity, surface_resistivity or relaxation_time, not several (τ = ε0·εr·ρ and ρ = R_s·t link them)");
            None
        }
        (None, None) => {
            ctx.err("web", "missing: expected volume_resistivity such as \"1e15 ohm m\", surface_resistivity such as \"1e12 ohm/sq\" or relaxation_time such as \"400 s\"");
            None
        }
        (Some(_), None) => match (rho, er) {
            (Some(r), Some(e)) => Some(EPS0 * e * r),
            _ => None,
        },
        (None, Some(_)) => tau_given,
        (Some(_), Some(_)) => None,
    };
    let breakdown = w
        .breakdown_strength
        .as_ref()
        .and_then(|b| ctx.qty(b, Dim::Field, "web.breakdown_strength"));
    let breakdown = ctx.positive_opt(breakdown, Dim::Field, "web.breakdown_strength");
    let material = w.material.as_ref().map(|m| m.as_str().trim().to_string());
    Some(Web {
        material,
        width: width?,
        thickness: thickness?,
        relative_permittivity: er?,
        volume_resistivity: rho,
        surface_resistivity: rs,
        relaxation_time: tau?,
        speed: speed?,
        breakdown_strength: breakdown,
    })
}

impl Ctx {
    fn positive_opt(&mut self, x: Option<f64>, dim: Dim, path: &str) -> Option<f64> {
        x.and_then(|v| self.positive(Some(v), dim, path))
    }
}

/// Why a roller's earthing has no default, for the message when it is missing.
pub const ROLLER_EARTHING_MISSING: &str = "missing: expected grounded | isolated | insulating (there is no safe default: taking the roller as grounded would hide the spark hazard of an isolated one and invent screening by an insulating one; taking it as insulating would drop the screening of a grounded one)";

fn validate_rollers(
    ctx: &mut Ctx,
    raw: &RawLine,
    ground: Option<f64>,
    web_width: Option<f64>,
) -> Option<Vec<Roller>> {
    let before = ctx.issues.len();
    let mut out: Vec<Roller> = Vec::new();
    for (i, r) in raw.rollers.iter().enumerate() {
        let p = format!("rollers[{i}]");
        let id = ctx.id(&r.id, &format!("{p}.id"));
        let center = ctx.lengths::<2>(
            &r.center,
            &format!("{p}.center"),
            "[x, z] such as [0.40 m, 1.20 m]",
        );
        let d = ctx.req_qty(&r.diameter, Dim::Length, &format!("{p}.diameter"));
        let d = ctx.positive(d, Dim::Length, &format!("{p}.diameter"));
        let earthing = if r.earthing.is_none() {
            ctx.err(format!("{p}.earthing"), ROLLER_EARTHING_MISSING);
            None
        } else {
            keyword(
                ctx,
                &r.earthing,
                &format!("{p}.earthing"),
                &["grounded", "isolated", "insulating"],
            )
        };
        // Without a valid web the line is refused anyway (reported at `web`);
        // the margin alone stands in for the default so that the other
        // checks still run.
        let default_length = web_width.unwrap_or(0.0) + ROLLER_LENGTH_MARGIN;
        let length = match &r.length {
            None => Some((default_length, true)),
            Some(v) => {
                let path = format!("{p}.length");
                let l = ctx.qty(v, Dim::Length, &path);
                let l = ctx.positive(l, Dim::Length, &path);
                match (l, web_width) {
                    (Some(l), Some(w)) if l < w => {
                        ctx.err(
                            path,
                            format!(
                                "{} is shorter than the web is wide ({}): a roller carries the whole width of the web (the wrap arcs assume it); expected at least {}",
                                crate::units::format_quantity(l, Dim::Length),
                                crate::units::format_quantity(w, Dim::Length),
                                crate::units::format_quantity(w, Dim::Length)
                            ),
                        );
                        None
                    }
                    (l, _) => l.map(|l| (l, false)),
                }
            }
        };
        if let Some(id) = &id
            && out.iter().any(|o| &o.id == id)
        {
            ctx.err(
                format!("{p}.id"),
                format!("duplicate roller id \"{id}\": every roller needs its own id"),
            );
        }
        if let (Some(id), Some(center), Some(d), Some(e), Some((length, length_defaulted))) =
            (id, center, d, earthing, length)
        {
            let earthing = match e {
                "isolated" => Earthing::Isolated,
                "insulating" => Earthing::Insulating,
                _ => Earthing::Grounded,
            };
            let radius = d / 2.0;
            for o in &out {
                let dist = (center[0] - o.center[0]).hypot(center[1] - o.center[1]);
                if dist < radius + o.radius - 1e-9 {
                    ctx.err(
                        format!("{p}.center"),
                        format!(
                            "roller {id} overlaps roller {} (centres {} apart, radii add up to {}): move it or check the diameter",
                            o.id,
                            len_text(dist),
                            len_text(radius + o.radius)
                        ),
                    );
                }
            }
            if let Some(g) = ground
                && center[1] - radius < g
            {
                ctx.err(
                        format!("{p}.center"),
                        format!("roller {id} reaches below the ground plane at z = {}: raise it or lower ground_plane", crate::units::format_quantity(g, Dim::Length)),
                    );
            }
            let roller = Roller {
                id,
                center,
                radius,
                earthing,
                length,
                length_defaulted,
            };
            if let Some((what, v)) = roller.cylinder().size_out_of_range() {
                let key = if what == "radius" {
                    "diameter"
                } else {
                    "length"
                };
                let msg = conductors::size_message(what, v);
                if key == "length" && length_defaulted {
                    ctx.err(
                        format!("{p}.length"),
                        format!("{msg}; the length is the web width + 0.2 m when not given"),
                    );
                } else {
                    ctx.err(format!("{p}.{key}"), msg);
                }
                continue;
            }
            out.push(roller);
        }
    }
    (ctx.issues.len() == before).then_some(out)
}

fn validate_nodes(
    ctx: &mut Ctx,
    raw: &RawLine,
    rollers: &Option<Vec<Roller>>,
) -> Option<Vec<NodeSpec>> {
    let before = ctx.issues.len();
    if raw.path.is_empty() {
        ctx.err("path", "missing: expected a list of at least two nodes, each `- point: [x, z]` or `- roller: ID` with `wrap: cw|ccw`");
        return None;
    }
    let mut out = Vec::new();
    let mut point_ids: Vec<String> = Vec::new();
    for (i, n) in raw.path.iter().enumerate() {
        let p = format!("path[{i}]");
        match (&n.point, &n.roller) {
            (Some(_), Some(_)) => ctx.err(&p, "a node is either `point:` or `roller:`, not both"),
            (None, None) => ctx.err(
                &p,
                "expected `point: [x, z]` or `roller: ID` with `wrap: cw|ccw`",
            ),
            (Some(_), None) => {
                if n.wrap.is_some() {
                    ctx.err(format!("{p}.wrap"), "a free point has no wrap direction: remove `wrap:` (it belongs to roller nodes)");
                }
                let at = ctx.lengths::<2>(
                    &n.point,
                    &format!("{p}.point"),
                    "[x, z] such as [0 m, 1.26 m]",
                );
                let id = match &n.id {
                    Some(_) => {
                        let id = ctx.id(&n.id, &format!("{p}.id"));
                        if let Some(id) = &id {
                            let clash_roller = rollers
                                .as_ref()
                                .is_some_and(|rs| rs.iter().any(|r| &r.id == id))
                                || raw.rollers.iter().any(|r| {
                                    r.id.as_ref().map(|s| s.as_str().trim()) == Some(id.as_str())
                                });
                            if clash_roller || point_ids.contains(id) {
                                ctx.err(format!("{p}.id"), format!("duplicate id \"{id}\": path points and rollers need distinct ids"));
                            }
                            point_ids.push(id.clone());
                        }
                        id
                    }
                    None => None,
                };
                if let Some(at) = at {
                    out.push(NodeSpec {
                        id,
                        kind: NodeKind::Point(at),
                    });
                }
            }
            (None, Some(rid)) => {
                if n.id.is_some() {
                    ctx.err(
                        format!("{p}.id"),
                        "a roller node is named by its roller id: remove `id:`",
                    );
                }
                let wrap = keyword(ctx, &n.wrap, &format!("{p}.wrap"), &["cw", "ccw"]);
                let rid = rid.as_str().trim();
                let found = rollers
                    .as_ref()
                    .and_then(|rs| rs.iter().position(|r| r.id == rid));
                if found.is_none() {
                    let known: Vec<String> = raw
                        .rollers
                        .iter()
                        .filter_map(|r| r.id.as_ref().map(|s| s.as_str().trim().to_string()))
                        .collect();
                    if known.iter().any(|k| k == rid) {
                        // The roller exists but is itself invalid: reported there.
                    } else {
                        ctx.err(
                            format!("{p}.roller"),
                            format!(
                                "unknown roller \"{rid}\": expected one of the ids under `rollers:` ({})",
                                if known.is_empty() { "none defined".to_string() } else { known.join(", ") }
                            ),
                        );
                    }
                }
                if let (Some(roller), Some(w)) = (found, wrap) {
                    let wrap = if w == "cw" { Wrap::Cw } else { Wrap::Ccw };
                    out.push(NodeSpec {
                        id: Some(rid.to_string()),
                        kind: NodeKind::Roller { roller, wrap },
                    });
                }
            }
        }
    }
    (ctx.issues.len() == before).then_some(out)
}

fn validate_across(ctx: &mut Ctx, raw: &RawLine, width: f64) -> Option<AcrossProfile> {
    let Some(a) = &raw.across_profile else {
        return Some(AcrossProfile {
            shape: AcrossShape::Uniform,
            width,
        });
    };
    let shape = keyword(
        ctx,
        &a.shape,
        "across_profile.shape",
        &["uniform", "edges", "tilt", "table"],
    )?;
    let k = |ctx: &mut Ctx| ctx.req_qty(&a.k, Dim::Number, "across_profile.k");
    let shape = match shape {
        "uniform" => {
            if a.k.is_some() || a.table.is_some() {
                ctx.err(
                    "across_profile",
                    "a uniform profile takes no `k:` or `table:`",
                );
            }
            AcrossShape::Uniform
        }
        "edges" | "tilt" => {
            if a.table.is_some() {
                ctx.err(
                    "across_profile.table",
                    format!("`table:` belongs to shape: table, not {shape}"),
                );
            }
            let k = k(ctx)?;
            if shape == "edges" {
                if 1.0 + k < 0.0 {
                    ctx.warn(
                        "across_profile.k",
                        format!(
                            "k = {k}: the density changes sign between the centreline and the edges"
                        ),
                    );
                }
                AcrossShape::Edges(k)
            } else {
                if k.abs() > 1.0 {
                    ctx.warn(
                        "across_profile.k",
                        format!("k = {k}: the density changes sign across the web"),
                    );
                }
                AcrossShape::Tilt(k)
            }
        }
        _ => {
            if a.k.is_some() {
                ctx.err(
                    "across_profile.k",
                    "`k:` belongs to shapes edges and tilt, not table",
                );
            }
            let Some(rows) = &a.table else {
                ctx.err("across_profile.table", "missing: expected a list of [y, f] pairs such as [[-0.6 m, 1.5], [0 m, 1], [0.6 m, 1.5]] covering the web width");
                return None;
            };
            let mut t: Vec<(f64, f64)> = Vec::new();
            let mut ok = true;
            for (i, row) in rows.iter().enumerate() {
                let p = format!("across_profile.table[{i}]");
                if row.len() != 2 {
                    ctx.err(
                        &p,
                        format!(
                            "expected a pair [y, f] such as [0.3 m, 1.2], got {} value(s)",
                            row.len()
                        ),
                    );
                    ok = false;
                    continue;
                }
                let y = ctx.qty(&row[0], Dim::Length, &format!("{p}[0]"));
                let f = ctx.qty(&row[1], Dim::Number, &format!("{p}[1]"));
                match (y, f) {
                    (Some(y), Some(f)) => {
                        if let Some(&(py, _)) = t.last()
                            && y <= py
                        {
                            ctx.err(&p, "the y values must increase strictly from row to row");
                            ok = false;
                        }
                        t.push((y, f));
                    }
                    _ => ok = false,
                }
            }
            if !ok {
                return None;
            }
            if t.len() < 2 {
                ctx.err("across_profile.table", "expected at least two [y, f] pairs");
                return None;
            }
            let h = width / 2.0;
            if t[0].0 > -h + 1e-12 || t[t.len() - 1].0 < h - 1e-12 {
                ctx.err(
                    "across_profile.table",
                    format!(
                        "the table must cover the whole web, y from {} to {}; it covers {} to {}",
                        len_text(-h),
                        len_text(h),
                        len_text(t[0].0),
                        len_text(t[t.len() - 1].0)
                    ),
                );
                return None;
            }
            let prof = AcrossProfile {
                shape: AcrossShape::Table(t),
                width,
            };
            let f0 = prof.f(0.0);
            if (f0 - 1.0).abs() > 1e-9 {
                ctx.err(
                    "across_profile.table",
                    format!("f must be 1 on the centreline (the centreline density is what `charge:` sets), but the table gives f(0) = {f0}: divide every f by {f0}"),
                );
                return None;
            }
            return Some(prof);
        }
    };
    Some(AcrossProfile { shape, width })
}

fn check_spans(ctx: &mut Ctx, path: &WebPath, rollers: &[Roller], ground: Option<f64>) {
    for span in &path.spans {
        if let Some(g) = ground
            && (span.start[1] < g || span.end[1] < g)
        {
            ctx.err(
                    "ground_plane",
                    format!("span {} runs below the ground plane at z = {}: raise the path or lower ground_plane", span.label(), crate::units::format_quantity(g, Dim::Length)),
                );
        }
        // A span that cuts through a roller it does not wrap.
        for (ri, r) in rollers.iter().enumerate() {
            let touches = |node: usize| matches!(path.nodes[node].kind, NodeKind::Roller { roller, .. } if roller == ri);
            if touches(span.from_node) || touches(span.to_node) {
                continue;
            }
            let d = span.direction();
            let rel = [r.center[0] - span.start[0], r.center[1] - span.start[1]];
            let t = (rel[0] * d[0] + rel[1] * d[1]).clamp(0.0, span.length);
            let closest = [span.start[0] + t * d[0], span.start[1] + t * d[1]];
            let dist = (r.center[0] - closest[0]).hypot(r.center[1] - closest[1]);
            if dist < r.radius {
                ctx.warn(
                    "path",
                    format!("span {} passes through roller {} ({:.1} mm inside its surface): check the path order and wrap directions", span.label(), r.id, (r.radius - dist) * 1e3),
                );
            }
        }
    }
}

/// A wrap arc above [`path::MAX_LIKELY_WRAP`] is warned about at the
/// node's `wrap:` key, naming the other direction and the wrap it would give
/// (the path rebuilt with that one node flipped), since such a wrap almost
/// always comes from a `cw`/`ccw` mix-up rather than from the line.
fn check_wraps(ctx: &mut Ctx, path: &WebPath, rollers: &[Roller]) {
    for arc in &path.arcs {
        let phi = arc.sweep.abs();
        if phi <= path::MAX_LIKELY_WRAP {
            continue;
        }
        let NodeKind::Roller { roller, wrap } = path.nodes[arc.node].kind else {
            continue;
        };
        let other = match wrap {
            Wrap::Cw => Wrap::Ccw,
            Wrap::Ccw => Wrap::Cw,
        };
        let mut flipped = path.nodes.clone();
        flipped[arc.node].kind = NodeKind::Roller {
            roller,
            wrap: other,
        };
        let alternative = match path::build_path(flipped, rollers) {
            Ok(p) => p
                .arcs
                .iter()
                .find(|a| a.node == arc.node)
                .map(|a| {
                    format!(
                        "`wrap: {}` would give {:.0}°",
                        other.text(),
                        a.sweep.abs().to_degrees()
                    )
                })
                .unwrap_or_else(|| format!("check whether `wrap: {}` was meant", other.text())),
            Err(_) => format!(
                "`wrap: {}` gives no path here, so check the neighbouring nodes' wrap directions too",
                other.text()
            ),
        };
        ctx.warn(
            format!("path[{}].wrap", arc.node),
            format!(
                "the web wraps {:.0}° round roller {} (`wrap: {}`), more than {:.0}°: the wrap direction is likely wrong — {alternative}; correct it or confirm that the web really goes this far round",
                phi.to_degrees(),
                rollers[roller].id,
                wrap.text(),
                path::MAX_LIKELY_WRAP.to_degrees()
            ),
        );
    }
}

fn validate_charge(
    ctx: &mut Ctx,
    raw: &RawLine,
    path: &WebPath,
    web: &Web,
    across: &AcrossProfile,
) -> Vec<ChargeEntry> {
    let mut out = Vec::new();
    for (i, c) in raw.charge.iter().enumerate() {
        let p = format!("charge[{i}]");
        let Some(at) = ctx.need(
            &c.at,
            &format!("{p}.at"),
            "`start` or the id of a path node such as \"R1\"",
        ) else {
            continue;
        };
        let at = at.as_str().trim().to_string();
        let s = if at.eq_ignore_ascii_case("start") {
            Some(0.0)
        } else {
            let nodes = path.nodes_with_id(&at);
            match nodes.len() {
                0 => {
                    let ids: Vec<&str> =
                        path.nodes.iter().filter_map(|n| n.id.as_deref()).collect();
                    ctx.err(format!("{p}.at"), format!("unknown node \"{at}\": expected `start` or one of the path's node ids ({})", ids.join(", ")));
                    None
                }
                1 => Some(path.departure_s[nodes[0]]),
                _ => {
                    ctx.err(format!("{p}.at"), format!("node \"{at}\" appears {} times in the path, so the place is ambiguous: add a free point with its own id where the charge applies", nodes.len()));
                    None
                }
            }
        };
        let (mode, value, key) = match (&c.sigma, &c.adds) {
            (Some(v), None) => (ChargeMode::Set, v, "sigma"),
            (None, Some(v)) => (ChargeMode::Add, v, "adds"),
            (Some(_), Some(_)) => {
                ctx.err(
                    &p,
                    "give either `sigma:` (sets the density) or `adds:` (adds to it), not both",
                );
                continue;
            }
            (None, None) => {
                ctx.err(&p, "missing: expected `sigma:` or `adds:` with a surface charge density such as \"8 uC/m^2\"");
                continue;
            }
        };
        let Some((sigma, tol)) =
            ctx.qty_tol(value, Dim::SurfaceChargeDensity, &format!("{p}.{key}"))
        else {
            continue;
        };
        let tolerance = tol.map_or(0.0, |t| t.half_width(sigma));
        if tolerance > ABSURD_SIGMA {
            ctx.err(
                format!("{p}.{key}"),
                format!(
                    "the tolerance ± {} is about {} times what air can hold on a sheet (2·ε0·Eb ≈ 53 µC/m²): likely a unit error — write it in the density's unit, such as \"8 uC/m^2 ± 1.6 uC/m^2\", or as a percentage, such as \"8 uC/m^2 ± 20 %\"",
                    crate::units::format_quantity(tolerance, Dim::SurfaceChargeDensity),
                    crate::units::format_quantity(tolerance / isolated_sheet_limit(), Dim::Number)
                ),
            );
            continue;
        }
        if sigma.abs() > ABSURD_SIGMA {
            ctx.err(
                format!("{p}.{key}"),
                format!(
                    "{} is about {} times what air can hold on a sheet (2·ε0·Eb ≈ 53 µC/m²): likely a unit error — densities on webs are a few µC/m²",
                    crate::units::format_quantity(sigma, Dim::SurfaceChargeDensity),
                    crate::units::format_quantity(sigma.abs() / isolated_sheet_limit(), Dim::Number)
                ),
            );
            continue;
        }
        if let Some(s) = s {
            if mode == ChargeMode::Set
                && let Some(first) = out
                    .iter()
                    .find(|o: &&ChargeEntry| o.mode == ChargeMode::Set && o.s == s)
            {
                ctx.err(
                    format!("{p}.sigma"),
                    format!(
                        "{} already sets the density leaving \"{at}\": a second `sigma:` at the same place would silently replace it; keep one (or write `adds:` to add to it)",
                        first.yaml_path.trim_end_matches(".sigma")
                    ),
                );
                continue;
            }
            if (s - path.total_length).abs() < 1e-12 && !path.spans.is_empty() {
                ctx.warn(format!("{p}.at"), format!("charge leaving the last node \"{at}\" is outside the modelled path and has no effect"));
            }
            out.push(ChargeEntry {
                at,
                s,
                mode,
                sigma,
                tolerance,
                yaml_path: format!("{p}.{key}"),
            });
        }
    }
    // Entries apply in path order; entries at the same place keep file order.
    out.sort_by(|a, b| a.s.total_cmp(&b.s));
    // Propagate along the path to check the densities that result.
    let steps = super::charge::segment_amplitudes(&out, web.decay_length());
    let fmax = across.max_abs();
    let limit = isolated_sheet_limit();
    for (entry, a) in out.iter().zip(steps) {
        let peak = a.abs() * fmax;
        if peak > ABSURD_SIGMA {
            ctx.err(&entry.yaml_path, format!("the density leaving {} reaches {} (with the across-web profile): likely a unit error", entry.at, crate::units::format_quantity(peak, Dim::SurfaceChargeDensity)));
        } else if peak > limit {
            ctx.warn(
                &entry.yaml_path,
                format!(
                    "the net density leaving {} reaches {} (with the across-web profile), above 2·ε0·Eb = {} that air can hold on an isolated sheet (Eb = 3 MV/m): the air would break down before such a charge is reached",
                    entry.at,
                    crate::units::format_quantity(peak, Dim::SurfaceChargeDensity),
                    crate::units::format_quantity(limit, Dim::SurfaceChargeDensity)
                ),
            );
        }
    }
    out
}

fn validate_points(ctx: &mut Ctx, raw: &RawLine, scene: &Obstacles) -> Vec<Point> {
    let mut out: Vec<Point> = Vec::new();
    for (i, q) in raw.points.iter().enumerate() {
        let p = format!("points[{i}]");
        let id = ctx.id(&q.id, &format!("{p}.id"));
        let kind = keyword(
            ctx,
            &q.kind,
            &format!("{p}.kind"),
            &["meter", "operator", "electronics", "probe"],
        );
        let at = ctx.lengths::<3>(
            &q.at,
            &format!("{p}.at"),
            "[x, y, z] such as [2.0 m, 0.8 m, 1.1 m]",
        );
        if let Some(id) = &id
            && out.iter().any(|o| &o.id == id)
        {
            ctx.err(format!("{p}.id"), format!("duplicate point id \"{id}\""));
        }
        let (Some(id), Some(kind), Some(at)) = (id, kind, at) else {
            continue;
        };
        if let Some(msg) = scene.problem(at) {
            ctx.err(format!("{p}.at"), msg.to_string());
            continue;
        }
        let kind = match kind {
            "meter" => PointKind::Meter,
            "operator" => PointKind::Operator,
            "electronics" => PointKind::Electronics,
            _ => PointKind::Probe,
        };
        let capacitance = match &q.capacitance {
            None => None,
            Some(c) if kind == PointKind::Operator => {
                let c = ctx.qty(c, Dim::Capacitance, &format!("{p}.capacitance"));
                let c = ctx.positive(c, Dim::Capacitance, &format!("{p}.capacitance"));
                if let Some(v) = c
                    && !(10e-12..=1e-9).contains(&v)
                {
                    ctx.warn(
                        format!("{p}.capacitance"),
                        format!(
                            "{} is outside the 100–300 pF usual for a person (NFPA 77)",
                            crate::units::format_quantity(v, Dim::Capacitance)
                        ),
                    );
                }
                c
            }
            Some(_) => {
                ctx.err(
                    format!("{p}.capacitance"),
                    "a capacitance belongs to operators (kind: operator) only",
                );
                None
            }
        };
        out.push(Point {
            id,
            kind,
            at,
            capacitance,
        });
    }
    out
}

fn validate_zones(
    ctx: &mut Ctx,
    raw: &RawLine,
    points: &[Point],
    rollers: &[Roller],
    path: &WebPath,
) -> Vec<Zone> {
    let mut out: Vec<Zone> = Vec::new();
    for (i, z) in raw.zones.iter().enumerate() {
        let p = format!("zones[{i}]");
        let id = ctx.id(&z.id, &format!("{p}.id"));
        if let Some(id) = &id {
            let clash = out.iter().any(|o| &o.id == id)
                || points.iter().any(|o| &o.id == id)
                || rollers.iter().any(|o| &o.id == id)
                || !path.nodes_with_id(id).is_empty();
            if clash {
                ctx.err(
                    format!("{p}.id"),
                    format!("duplicate id \"{id}\": zones need ids distinct from rollers, nodes and points"),
                );
            }
        }
        let class = keyword(ctx, &z.zone, &format!("{p}.zone"), &["0", "1", "2"]);
        let group = keyword(
            ctx,
            &z.gas_group,
            &format!("{p}.gas_group"),
            &["IIA", "IIB", "IIC"],
        );
        let mie = ctx.req_qty(&z.mie, Dim::Energy, &format!("{p}.mie"));
        let mie = ctx.positive(mie, Dim::Energy, &format!("{p}.mie"));
        if let Some(m) = mie
            && !(1e-6..=1e-1).contains(&m)
        {
            ctx.warn(
                format!("{p}.mie"),
                format!(
                    "{} is outside the range of gases and vapours (about 0.009 mJ for carbon disulfide to a few mJ): check the unit",
                    crate::units::format_quantity(m, Dim::Energy)
                ),
            );
        }
        let (from, to) = match &z.bounds {
            None => {
                ctx.err(
                    format!("{p}.box"),
                    "missing: expected {from: [x, y, z], to: [x, y, z]} giving two opposite corners",
                );
                (None, None)
            }
            Some(b) => (
                ctx.lengths::<3>(
                    &b.from,
                    &format!("{p}.box.from"),
                    "[x, y, z] such as [1.5 m, -1 m, 0.8 m]",
                ),
                ctx.lengths::<3>(
                    &b.to,
                    &format!("{p}.box.to"),
                    "[x, y, z] such as [3 m, 1 m, 1.6 m]",
                ),
            ),
        };
        let (Some(id), Some(class), Some(group), Some(mie), Some(from), Some(to)) =
            (id, class, group, mie, from, to)
        else {
            continue;
        };
        let min = [from[0].min(to[0]), from[1].min(to[1]), from[2].min(to[2])];
        let max = [from[0].max(to[0]), from[1].max(to[1]), from[2].max(to[2])];
        if (0..3).any(|k| max[k] - min[k] <= 0.0) {
            ctx.err(
                format!("{p}.box"),
                "the box has no volume: `from` and `to` must differ in x, y and z",
            );
            continue;
        }
        let gas_group = match group {
            "IIA" => GasGroup::IIA,
            "IIB" => GasGroup::IIB,
            _ => GasGroup::IIC,
        };
        out.push(Zone {
            id,
            name: z.name.as_ref().map(|n| n.as_str().trim().to_string()),
            zone: class.parse().unwrap_or(2),
            gas_group,
            mie,
            min,
            max,
        });
    }
    out
}

fn validate_assess(ctx: &mut Ctx, raw: &RawLine) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for (i, a) in raw.assess.iter().enumerate() {
        let name = a.as_str().trim().to_string();
        if name.is_empty() {
            ctx.err(format!("assess[{i}]"), "expected the name of a threshold profile such as \"ex-zone-1\" (see `websigma profiles`)");
        } else if !out.contains(&name) {
            out.push(name);
        }
    }
    out
}

fn validate_meter(ctx: &mut Ctx, raw: &RawLine) -> MeterSpec {
    let mut m = MeterSpec::default();
    let Some(r) = &raw.meter else {
        return m;
    };
    let mut checked =
        |v: &Option<Scalar>, dim: Dim, path: &str, ok: fn(f64) -> bool, accepted: &str| {
            let x = v.as_ref().and_then(|v| ctx.qty(v, dim, path))?;
            if ok(x) {
                Some(x)
            } else {
                ctx.err(path, format!("expected {accepted}"));
                None
            }
        };
    if let Some(v) = checked(
        &r.accuracy,
        Dim::Percent,
        "meter.accuracy",
        |x| (0.0..1.0).contains(&x),
        "a percentage from 0 % to below 100 %, such as \"5 %\"",
    ) {
        m.accuracy = v;
    }
    if let Some(v) = checked(
        &r.offset,
        Dim::Field,
        "meter.offset",
        |x| x >= 0.0,
        "a field of zero or more, such as \"1 kV/m\"",
    ) {
        m.offset = v;
    }
    if let Some(v) = checked(
        &r.distance_tolerance,
        Dim::Length,
        "meter.distance_tolerance",
        |x| x >= 0.0,
        "a length of zero or more, such as \"2 mm\"",
    ) {
        m.distance_tolerance = v;
    }
    m
}

fn validate_readings(ctx: &mut Ctx, raw: &RawLine, scene: &Obstacles) -> Vec<Reading> {
    let (path, web) = (scene.path, scene.web);
    let mut out: Vec<Reading> = Vec::new();
    for (i, r) in raw.readings.iter().enumerate() {
        let p = format!("readings[{i}]");
        let id = match &r.id {
            Some(_) => ctx.id(&r.id, &format!("{p}.id")),
            None => Some(format!("reading[{i}]")),
        };
        if let Some(id) = &id
            && out.iter().any(|o| &o.id == id)
        {
            ctx.err(format!("{p}.id"), format!("duplicate reading id \"{id}\""));
        }
        let place = span_position(ctx, path, &r.span, &r.position, &p);
        let across = match &r.across {
            None => Some(0.0),
            Some(a) => ctx.qty(a, Dim::Length, &format!("{p}.across")),
        };
        if let Some(a) = across
            && a.abs() > web.width / 2.0
        {
            ctx.err(
                format!("{p}.across"),
                format!(
                    "{} is off the web (half width {}): a reading is taken over the web",
                    crate::units::format_quantity(a, Dim::Length),
                    crate::units::format_quantity(web.width / 2.0, Dim::Length)
                ),
            );
        }
        let distance = ctx.req_qty(&r.distance, Dim::Length, &format!("{p}.distance"));
        let distance = ctx.positive(distance, Dim::Length, &format!("{p}.distance"));
        let side = keyword(ctx, &r.side, &format!("{p}.side"), &["above", "below"]).map(|s| {
            if s == "above" {
                Side::Above
            } else {
                Side::Below
            }
        });
        let value = match (&r.reading, &r.voltage, &r.sigma) {
            (Some(v), None, None) => {
                if r.calibrated_at.is_some() {
                    ctx.err(
                        format!("{p}.calibrated_at"),
                        "`calibrated_at:` belongs to a `voltage:` reading",
                    );
                }
                ctx.qty(v, Dim::Field, &format!("{p}.reading"))
                    .map(ReadingValue::Field)
            }
            (None, Some(v), None) => {
                let volts = ctx.qty(v, Dim::Voltage, &format!("{p}.voltage"));
                let cal = match &r.calibrated_at {
                    None => Some(None),
                    Some(c) => {
                        let path = format!("{p}.calibrated_at");
                        let c = ctx.qty(c, Dim::Length, &path);
                        ctx.positive(c, Dim::Length, &path).map(Some)
                    }
                };
                match (volts, cal) {
                    (Some(v), Some(c)) => Some(ReadingValue::Voltage(v, c)),
                    _ => None,
                }
            }
            (None, None, Some(v)) => ctx
                .qty(v, Dim::SurfaceChargeDensity, &format!("{p}.sigma"))
                .map(ReadingValue::Sigma),
            (None, None, None) => {
                ctx.err(&p, "missing: expected `reading:` (a field such as \"48 kV/m\"), `voltage:` with `calibrated_at:`, or `sigma:`");
                None
            }
            _ => {
                ctx.err(
                    &p,
                    "give one of `reading:`, `voltage:` or `sigma:`, not several",
                );
                None
            }
        };
        if let Some((e, key)) = match value {
            Some(ReadingValue::Field(e)) => Some((e, "reading")),
            Some(ReadingValue::Voltage(v, c)) => {
                Some((v / c.unwrap_or(super::DEFAULT_CALIBRATION), "voltage"))
            }
            _ => None,
        } && e.abs() > 10.0 * crate::physics::AIR_BREAKDOWN_FIELD
        {
            ctx.err(
                format!("{p}.{key}"),
                format!(
                    "the reading implies {}, more than 10 times the 3 MV/m air can hold: no meter reads that over a web (check the unit)",
                    crate::units::format_quantity(e, Dim::Field)
                ),
            );
        }
        let record = reading_record(ctx, r, web, &p);
        let (
            Some(id),
            Some((span, along)),
            Some(across),
            Some(distance),
            Some(side),
            Some(value),
            Some(record),
        ) = (id, place, across, distance, side, value, record)
        else {
            continue;
        };
        let (at, _) = meter_geometry(&path.spans[span], along, across, distance, side);
        if let Some(msg) = scene.problem(at) {
            ctx.err(
                format!("{p}.distance"),
                format!(
                    "the meter would stand at {}: {msg}",
                    crate::units::format_point(&at)
                ),
            );
            continue;
        }
        out.push(Reading {
            id,
            span,
            along,
            across,
            distance,
            side,
            value,
            record,
        });
    }
    out
}

/// A reading speed this far from `web.speed` (relative) is warned about.
const READING_SPEED_MISMATCH: f64 = 0.1;

/// What was recorded with reading `r` at YAML path `p`: the texts as typed
/// and the optional `meter`, `calibrated_on`, `relative_humidity` and
/// `speed`, each checked; `None` when one of these is invalid.
fn reading_record(ctx: &mut Ctx, r: &RawReading, web: &Web, p: &str) -> Option<ReadingRecord> {
    let text = |v: &Option<Scalar>| v.as_ref().map(|s| s.as_str().trim().to_string());
    let mut ok = true;
    let meter = match text(&r.meter) {
        Some(m) if m.is_empty() || m.chars().count() > 64 => {
            ctx.err(
                format!("{p}.meter"),
                format!("expected the instrument's identifier, up to 64 characters, such as \"FM-2 s/n 4411\", got \"{m}\""),
            );
            ok = false;
            None
        }
        m => m,
    };
    let calibrated_on = match text(&r.calibrated_on) {
        None => None,
        Some(d) => match parse_date(&d) {
            Some(date) => Some(date),
            None => {
                ctx.err(
                    format!("{p}.calibrated_on"),
                    format!("expected a calendar date written YYYY-MM-DD, such as \"2024-03-18\", got \"{d}\""),
                );
                ok = false;
                None
            }
        },
    };
    let relative_humidity = match &r.relative_humidity {
        None => None,
        Some(v) => {
            let path = format!("{p}.relative_humidity");
            match ctx.qty(v, Dim::Percent, &path) {
                Some(h) if (0.0..=1.0).contains(&h) => Some(h),
                Some(h) => {
                    ctx.err(
                        path,
                        format!(
                            "expected a relative humidity from 0 % to 100 %, got {}",
                            crate::units::format_quantity(h, Dim::Percent)
                        ),
                    );
                    ok = false;
                    None
                }
                None => {
                    ok = false;
                    None
                }
            }
        }
    };
    let speed = match &r.speed {
        None => None,
        Some(v) => {
            let path = format!("{p}.speed");
            match ctx.qty(v, Dim::Speed, &path) {
                Some(x) if x >= 0.0 => {
                    if (x - web.speed).abs() > READING_SPEED_MISMATCH * web.speed {
                        ctx.warn(
                            &path,
                            format!(
                                "the reading was taken at {} but the line is modelled at {} (web.speed): a web's charge changes with speed, so this reading may not describe the modelled run",
                                crate::units::format_quantity(x, Dim::Speed),
                                crate::units::format_quantity(web.speed, Dim::Speed)
                            ),
                        );
                    }
                    Some(x)
                }
                Some(x) => {
                    ctx.err(
                        path,
                        format!(
                            "expected a web speed of zero or more, such as \"250 m/min\", got {}",
                            crate::units::format_quantity(x, Dim::Speed)
                        ),
                    );
                    ok = false;
                    None
                }
                None => {
                    ok = false;
                    None
                }
            }
        }
    };
    ok.then(|| ReadingRecord {
        value_text: text(&r.reading)
            .or_else(|| text(&r.voltage))
            .or_else(|| text(&r.sigma))
            .unwrap_or_default(),
        calibrated_at_text: text(&r.calibrated_at),
        distance_text: text(&r.distance).unwrap_or_default(),
        meter,
        calibrated_on,
        relative_humidity,
        speed,
    })
}

/// A date written `YYYY-MM-DD` (four, two and two digits) that exists in
/// the calendar.
fn parse_date(text: &str) -> Option<chrono::NaiveDate> {
    let b = text.as_bytes();
    let shape = b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && b.iter()
            .enumerate()
            .all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit());
    if !shape {
        return None;
    }
    chrono::NaiveDate::parse_from_str(text, "%Y-%m-%d").ok()
}

/// A span and a position along it (`50 %` or a length), checked.
fn span_position(
    ctx: &mut Ctx,
    path: &WebPath,
    span: &Option<Scalar>,
    position: &Option<Scalar>,
    p: &str,
) -> Option<(usize, f64)> {
    let k = match ctx.need(
        span,
        &format!("{p}.span"),
        "a span name such as \"S3\" or \"R2-R3\"",
    ) {
        None => None,
        Some(s) => match path.span_index(s.as_str()) {
            Some(k) => Some(k),
            None => {
                let names: Vec<String> = path.spans.iter().map(|s| s.label()).collect();
                ctx.err(
                    format!("{p}.span"),
                    format!(
                        "unknown span \"{}\": expected one of {}",
                        s.as_str().trim(),
                        names.join(", ")
                    ),
                );
                None
            }
        },
    };
    let Some(pos) = position else {
        ctx.err(
            format!("{p}.position"),
            "missing: expected a percentage of the span such as \"50 %\" or a length from its start such as \"400 mm\"",
        );
        return None;
    };
    let k = k?;
    let len = path.spans[k].length;
    let v = if pos.as_str().trim().ends_with('%') {
        ctx.qty(pos, Dim::Percent, &format!("{p}.position"))
            .map(|f| f * len)
    } else {
        ctx.qty(pos, Dim::Length, &format!("{p}.position"))
    }?;
    if !(0.0..=len).contains(&v) {
        ctx.err(
            format!("{p}.position"),
            format!(
                "{} is outside span {} ({} long): expected 0 % to 100 % or a length up to the span's length",
                crate::units::format_quantity(v, Dim::Length),
                path.spans[k].label(),
                crate::units::format_quantity(len, Dim::Length)
            ),
        );
        return None;
    }
    Some((k, v))
}

/// Checks a list of eliminator entries against a validated line (the
/// planner's `--candidates` file); entries without an id get `C1`, `C2`, ….
pub fn validate_eliminator_list(
    list: &[super::raw::RawEliminator],
    line: &Line,
) -> Result<Vec<Eliminator>, ValidationError> {
    let mut ctx = Ctx {
        issues: Vec::new(),
        warnings: Vec::new(),
    };
    let raw = RawLine {
        eliminators: list
            .iter()
            .enumerate()
            .map(|(i, e)| {
                let mut e = e.clone();
                if e.id.is_none() {
                    e.id = Some(Scalar(format!("C{}", i + 1)));
                }
                e
            })
            .collect(),
        ..RawLine::default()
    };
    let scene = Obstacles {
        path: &line.path,
        rollers: &line.rollers,
        conductors: &line.conductors,
        web: &line.web,
        ground: line.ground_plane,
    };
    let out = validate_eliminators(&mut ctx, &raw, &scene);
    if ctx.issues.is_empty() {
        Ok(out)
    } else {
        Err(ValidationError { issues: ctx.issues })
    }
}

fn validate_eliminators(ctx: &mut Ctx, raw: &RawLine, scene: &Obstacles) -> Vec<Eliminator> {
    let path = scene.path;
    let mut out: Vec<Eliminator> = Vec::new();
    for (i, e) in raw.eliminators.iter().enumerate() {
        let p = format!("eliminators[{i}]");
        let id = ctx.id(&e.id, &format!("{p}.id"));
        if let Some(id) = &id
            && out.iter().any(|o| &o.id == id)
        {
            ctx.err(
                format!("{p}.id"),
                format!("duplicate eliminator id \"{id}\""),
            );
        }
        let kind = keyword(ctx, &e.kind, &format!("{p}.kind"), &["powered", "passive"]).map(|k| {
            if k == "powered" {
                EliminatorKind::Powered
            } else {
                EliminatorKind::Passive
            }
        });
        let place = span_position(ctx, path, &e.span, &e.position, &p);
        let distance = ctx.req_qty(&e.distance, Dim::Length, &format!("{p}.distance"));
        let distance = ctx.positive(distance, Dim::Length, &format!("{p}.distance"));
        let side = keyword(ctx, &e.side, &format!("{p}.side"), &["above", "below"]).map(|s| {
            if s == "above" {
                Side::Above
            } else {
                Side::Below
            }
        });
        let efficiency = match &e.efficiency {
            None => None,
            Some(v) => match ctx.qty(v, Dim::Percent, &format!("{p}.efficiency")) {
                Some(x) if (0.0..=1.0).contains(&x) => Some(x),
                Some(_) => {
                    ctx.err(
                        format!("{p}.efficiency"),
                        "expected a percentage from 0 % to 100 %, such as \"95 %\"",
                    );
                    None
                }
                None => None,
            },
        };
        let residual = e
            .residual
            .as_ref()
            .and_then(|v| ctx.qty(v, Dim::SurfaceChargeDensity, &format!("{p}.residual")));
        let onset = e
            .onset
            .as_ref()
            .and_then(|v| ctx.qty(v, Dim::Field, &format!("{p}.onset")));
        let onset = onset.and_then(|v| ctx.positive(Some(v), Dim::Field, &format!("{p}.onset")));
        let ion_output = match &e.ion_output {
            None => Some(POWERED_ION_OUTPUT),
            Some(v) => {
                let t = v.as_str().trim();
                let num = t
                    .strip_suffix("uA/m")
                    .or_else(|| t.strip_suffix("µA/m"))
                    .or_else(|| t.strip_suffix("μA/m"))
                    .and_then(|n| n.trim().parse::<f64>().ok())
                    .filter(|x| x.is_finite() && *x > 0.0);
                if num.is_none() {
                    ctx.err(
                        format!("{p}.ion_output"),
                        format!("expected a positive ion output per metre of bar such as \"1000 uA/m\", got \"{t}\""),
                    );
                }
                num.map(|x| x * 1e-6)
            }
        };
        let (
            Some(id),
            Some(kind),
            Some((span, along)),
            Some(distance),
            Some(side),
            Some(ion_output),
        ) = (id, kind, place, distance, side, ion_output)
        else {
            continue;
        };
        if kind == EliminatorKind::Powered && e.onset.is_some() {
            ctx.err(
                format!("{p}.onset"),
                "an onset belongs to passive devices (kind: passive)",
            );
            continue;
        }
        let (at, _) = meter_geometry(&path.spans[span], along, 0.0, distance, side);
        if let Some(msg) = scene.problem(at) {
            ctx.err(
                format!("{p}.distance"),
                format!(
                    "the bar would stand at {}: {msg}",
                    crate::units::format_point(&[at[0], at[2]])
                ),
            );
            continue;
        }
        let (default_eff, default_res) = match kind {
            EliminatorKind::Powered => (POWERED_EFFICIENCY, 0.0),
            EliminatorKind::Passive => (PASSIVE_EFFICIENCY, PASSIVE_RESIDUAL),
        };
        let residual = residual.unwrap_or(default_res);
        if kind == EliminatorKind::Passive && residual < 0.0 {
            ctx.err(
                format!("{p}.residual"),
                "a passive device's residual is a magnitude: expected zero or more",
            );
            continue;
        }
        out.push(Eliminator {
            id,
            kind,
            span,
            along,
            s: path.spans[span].s_start + along,
            distance,
            side,
            efficiency: efficiency.unwrap_or(default_eff),
            residual,
            onset: match kind {
                EliminatorKind::Passive => Some(onset.unwrap_or(PASSIVE_ONSET_VOLTAGE / distance)),
                EliminatorKind::Powered => None,
            },
            ion_output,
        });
    }
    out.sort_by(|a, b| a.s.total_cmp(&b.s));
    out
}
