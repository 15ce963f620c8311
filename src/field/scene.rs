//! # The scene: the charge-independent field model of a line
//!
//! Built once per line, before any charge is known: the frame of every
//! straight span, the ground plane whose images every span gets, and the
//! solver settings (and, with conductors, their factorised matrix). Every
//! stage that needs a field — readings, passive-bar onset, assessment,
//! planner influences, the field map — borrows one scene and charges it with
//! [`Scene::web`]; nothing else builds field models.
//!
//! A charged scene evaluates, for a point **r**, the superposition over the
//! spans k and their images in the plane z = z_g,
//!
//! $$ \mathbf E(\mathbf r) = \sum_k \big[\mathbf E_k(\mathbf r) - M\,\mathbf E_k(M\mathbf r)\big], \qquad
//!    V(\mathbf r) = \sum_k \big[V_k(\mathbf r) - V_k(M\mathbf r)\big], $$
//!
//! with M the reflection in the plane and **E**_k, V_k the Coulomb integrals
//! of span k's density σ(s, y) = σc(s)·f(y) (see [`super::kernels`] and
//! [`super::integrate`]); without a plane only the first terms remain.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | **E**, V | field, potential | V/m, V |
//! | σ, σc, f | density, centreline density, across-web shape | C/m², C/m², 1 |
//! | z_g | height of the grounded plane | m |
//!
//! ## Reference
//! Superposition and the method of images (D. J. Griffiths, *Introduction to
//! Electrodynamics*, 4th ed., §2.1 and §3.2).

use super::bem::{Bem, BemSettings, ConductorSpec, Earthing, Induced};
use super::integrate::{Patch, patch_field};
use super::kernels::{LocalField, QuadPiece};
use super::map_boxes::{MapRect, MapSources, MapStats, map_field};
use super::panels::Shape;
use super::tree::{self, PanelTree};
use super::{FieldAt, FieldError, FieldMap, PointField, SolverSettings, SpanContribution};
use crate::charge::ChargeProfile;
use crate::model::Line;
use crate::model::Span;
use crate::model::geometry::{on_web, span_frame};
use crate::progress::{Task, Tracker};
use crate::units::{Meters, VoltsPerMeter};
use rayon::prelude::*;
use std::cell::Cell;
use std::sync::OnceLock;

thread_local! {
    static BUILT: Cell<usize> = const { Cell::new(0) };
}

/// How many scenes this thread has built so far (a test counts the scenes
/// one command builds; scenes are only ever built outside rayon tasks).
pub fn scenes_built_on_this_thread() -> usize {
    BUILT.with(Cell::get)
}

/// One straight span's frame.
#[derive(Debug, Clone)]
struct SpanGeometry {
    span: Span,
    label: String,
    /// Unit vector along the span (3-D).
    t: [f64; 3],
    /// Unit normal t × ŷ (3-D).
    n: [f64; 3],
}

/// The charge-independent field model of a line.
#[derive(Debug)]
pub struct Scene {
    spans: Vec<SpanGeometry>,
    width: Meters,
    ground: Option<Meters>,
    settings: SolverSettings,
    /// The conductors' boundary-element solve, factorised once, when the
    /// settings ask for conductors and the line has any.
    bem: Option<Bem>,
    /// Per isolated conductor of the solve (its order): the wrap arcs
    /// (s_start, s_end) [m] of the web on it (isolated rollers only).
    wraps: Vec<Vec<(Meters, Meters)>>,
}

impl Scene {
    /// Builds the scene of `line` (once per line; every stage borrows it).
    pub fn new(line: &Line, settings: SolverSettings) -> Result<Scene, FieldError> {
        BUILT.with(|b| b.set(b.get() + 1));
        let spans = line
            .path
            .spans
            .iter()
            .map(|s| {
                let d = s.direction();
                let t = [d[0], 0.0, d[1]];
                // n = t × ŷ = (−t_z, 0, t_x).
                let n = [-t[2], 0.0, t[0]];
                SpanGeometry {
                    span: s.clone(),
                    label: s.label(),
                    t,
                    n,
                }
            })
            .collect();
        let bem = match settings.conductor_panel() {
            Some(panel) => conductor_solve(line, panel, settings.conductor_panel_given())?,
            None => None,
        };
        let wraps = match &bem {
            Some(b) => {
                let mut w = vec![Vec::new(); b.given_charges().len()];
                for c in b.conductors() {
                    if let Some(r) = c.isolated {
                        w[r] = line
                            .path
                            .arcs
                            .iter()
                            .filter(|a| {
                                line.rollers
                                    .get(a.roller)
                                    .is_some_and(|x| x.id == c.spec.id)
                            })
                            .map(|a| (a.s_start, a.s_end))
                            .collect();
                    }
                }
                w
            }
            None => Vec::new(),
        };
        Ok(Scene {
            spans,
            width: line.web.width,
            ground: line.ground_plane,
            settings,
            bem,
            wraps,
        })
    }

    /// The conductors' panel factors at each of `points` (see
    /// [`Bem::point_factors`]), for evaluating many charges at the same
    /// points with [`WebField::at_with`]; `None` without conductors or when
    /// they would take more than [`Self::MAX_FACTOR_BYTES`].
    pub fn panel_factors(&self, points: &[[Meters; 3]]) -> Option<Vec<Vec<[f64; 4]>>> {
        let bem = self.bem.as_ref()?;
        let bytes = points.len() * bem.panels().len() * 32;
        if bytes > Self::MAX_FACTOR_BYTES {
            return None;
        }
        Some(points.par_iter().map(|&x| bem.point_factors(x)).collect())
    }

    /// The most memory [`Self::panel_factors`] may take [B] (512 MB).
    pub const MAX_FACTOR_BYTES: usize = 512 << 20;

    /// The conductors' solve, when conductors enter the field.
    pub fn conductors(&self) -> Option<&Bem> {
        self.bem.as_ref()
    }

    /// The solver settings the scene was built with.
    pub fn settings(&self) -> SolverSettings {
        self.settings
    }

    /// Number of spans.
    pub fn span_count(&self) -> usize {
        self.spans.len()
    }

    /// The scene charged as `charge` says (the isolated conductors with
    /// their given charge): the field of [`Scene::webs_linear`] plus that of
    /// [`Scene::given_part`], in one solve.
    pub fn web<'s>(&'s self, charge: &ChargeProfile) -> WebField<'s> {
        let mut web = self.unsolved(charge, true);
        if let Some(bem) = &self.bem {
            web.induced = web.induce(bem, &web.charges).map(Some);
        }
        web
    }

    /// The web's patches for `charge` and the isolated conductors' net
    /// charges (wrap charge, plus the given charge when `given`), the
    /// conductors' solve not yet made.
    fn unsolved<'s>(&'s self, charge: &ChargeProfile, given: bool) -> WebField<'s> {
        let across = quad_pieces(charge);
        let patches = self
            .spans
            .iter()
            .map(|g| {
                let s = &g.span;
                charge
                    .pieces_between(s.s_start, s.s_end)
                    .into_iter()
                    .filter(|(_, _, a)| *a != 0.0)
                    .map(|(a, b, amp)| {
                        (
                            a - s.s_start,
                            Patch {
                                len: b - a,
                                amplitude: amp,
                                decay_length: charge.decay_length,
                                across: across.clone(),
                            },
                        )
                    })
                    .collect()
            })
            .collect();
        let wrap_charges: Vec<f64> = self
            .wraps
            .iter()
            .map(|arcs| arcs.iter().map(|&(a, b)| wrap_charge(charge, a, b)).sum())
            .collect();
        let mut web = WebField {
            scene: self,
            patches,
            induced: Ok(None),
            charges: Vec::new(),
            tree: OnceLock::new(),
        };
        if let Some(bem) = &self.bem {
            let given_charges = if given {
                bem.given_charges()
            } else {
                vec![0.0; bem.given_charges().len()]
            };
            web.charges = given_charges
                .iter()
                .zip(wrap_charges.iter().chain(std::iter::repeat(&0.0)))
                .map(|(q, w): (&f64, &f64)| q + w)
                .collect();
        }
        web
    }

    /// The scene charged with each of `charges`, the web's own charge only:
    /// every isolated conductor carries the charge the web's wraps give it
    /// but not its given charge (`charge:` of a conductor; that part is
    /// [`Scene::given_part`]). Each field is then linear in its charge
    /// profile: for profiles σ_k and amplitudes a_k,
    ///
    /// $$ \mathbf E\Bigl[\sum_k a_k σ_k\Bigr] = \mathbf E_{given}
    ///    + \sum_k a_k\,\mathbf E_{lin}[σ_k] $$
    ///
    /// (superposition; the same for V), which is how the planner's pieces and
    /// the readings' unit segments are added up. With conductors, the web's
    /// potential at the collocation points is computed per profile and the
    /// conductors' charges by one back-substitution each
    /// ([`Bem::solve_many`] with one column: see the note in the body); a
    /// profile whose potential fails keeps its error (reported when that
    /// field is asked for).
    pub fn webs_linear<'s>(&'s self, charges: &[ChargeProfile]) -> Vec<WebField<'s>> {
        let mut webs: Vec<WebField<'s>> = charges.iter().map(|c| self.unsolved(c, false)).collect();
        let Some(bem) = &self.bem else {
            return webs;
        };
        let externals: Vec<Result<Vec<f64>, FieldError>> =
            webs.iter().map(|w| w.external(bem)).collect();

        let cases: Vec<(&[f64], &[f64])> = externals
            .iter()
            .zip(&webs)
            .filter_map(|(e, w)| {
                e.as_ref()
                    .ok()
                    .map(|e| (e.as_slice(), w.charges.as_slice()))
            })
            .collect();
        // One column per call: on the demo (bench solver, parts 4 and 5),
        // solving all columns at once made the field work after it slower
        // (the readings' first run 0.33 s instead of 0.19 s; cause not
        // found), so `Bem::solve_many` gets one column at a time here.
        let mut solved = cases
            .iter()
            .map(|c| bem.solve_many(std::slice::from_ref(c)).map(|mut v| v.pop()))
            .collect::<Result<Vec<_>, _>>()
            .map_err(|e| FieldError::Conductors(e.to_string()))
            .map(|v| v.into_iter().flatten());
        for (w, ext) in webs.iter_mut().zip(externals) {
            w.induced = match (ext, &mut solved) {
                (Err(e), _) => Err(e),
                (Ok(_), Err(e)) => Err(e.clone()),
                (Ok(_), Ok(it)) => it.next().map(Some).ok_or_else(|| {
                    FieldError::Conductors("a right-hand side was not solved".to_string())
                }),
            };
        }
        webs
    }

    /// The field of the isolated conductors' given charges alone, with no
    /// charge on the web (the fixed part that [`Scene::webs_linear`] leaves
    /// out); `None` without conductors or when every given charge is 0.
    pub fn given_part(&self) -> Option<WebField<'_>> {
        let bem = self.bem.as_ref()?;
        let given = bem.given_charges();
        if given.iter().all(|q| *q == 0.0) {
            return None;
        }
        let induced = bem
            .solve_with_charges(&vec![0.0; bem.panels().len()], &given)
            .map(Some)
            .map_err(|e| FieldError::Conductors(e.to_string()));
        Some(WebField {
            scene: self,
            patches: vec![Vec::new(); self.spans.len()],
            induced,
            charges: given,
            tree: OnceLock::new(),
        })
    }

    /// The scene charged with a unit centreline density (1 C/m²) on the
    /// path from `s0` to `s1` [m] only, relaxing from `s0` with the decay
    /// length and across-web shape of `like`: the web's own charge, as
    /// [`Scene::webs_linear`] gives it (one conductors' solve of its own).
    pub fn unit_piece<'s>(&'s self, like: &ChargeProfile, s0: Meters, s1: Meters) -> WebField<'s> {
        let mut one = self.webs_linear(&[unit_profile(like, s0, s1)]);
        match one.pop() {
            Some(w) => w,
            None => self.unsolved(like, false),
        }
    }

    /// [`Scene::unit_piece`] for every piece (s0, s1) of `pieces`, the
    /// conductors' charges of all of them from one solve.
    pub fn unit_pieces<'s>(
        &'s self,
        like: &ChargeProfile,
        pieces: &[(Meters, Meters)],
    ) -> Vec<WebField<'s>> {
        let profiles: Vec<ChargeProfile> = pieces
            .iter()
            .map(|&(a, b)| unit_profile(like, a, b))
            .collect();
        self.webs_linear(&profiles)
    }
}

/// `like` with one segment: unit centreline density from `s0` to `s1` [m].
fn unit_profile(like: &ChargeProfile, s0: Meters, s1: Meters) -> ChargeProfile {
    let mut p = like.clone();
    p.segments = vec![crate::charge::ChargeSegment {
        s_start: s0,
        s_end: s1,
        amplitude: 1.0,
        origin: crate::charge::SegmentOrigin::CarriedIn,
        from_readings: false,
    }];
    p
}

/// The boundary-element solve of the line's conductors (grounded and
/// isolated rollers; `conductors:`), or `None` when it has none. A person
/// stands on the floor: the solve needs a gap to the grounded plane, so the
/// body's cylinder is taken to start [`PERSON_SOLE_GAP`] above it (the
/// feet's coupling is the person's lumped capacitance; a gap of a few mm
/// would count it twice, its base alone then adding ε0·πr²/gap ≈ 125 pF at
/// 5 mm for a 0.3 m wide body). With a default (not `given`) panel
/// size, a mesh over the panel limit is retried with the size that fits
/// (panel count ∝ 1/h², plus 5 %), at most eight times; the size used is
/// [`Bem::settings`]' panel size.
/// Height of a person's body cylinder above the floor in the solve [m]:
/// 50 mm (the soles; an assumption of this program). The base's coupling to
/// the floor is then ε0·πr²/gap ≈ 12.5 pF for a 0.3 m wide body, so the
/// body's own capacitance stays near the ≈ 50–70 pF of a free standing
/// body and the lumped feet-to-floor capacitance (default 100 pF) brings it
/// to the 150–170 pF of the usual body models (NFPA 77: people 100–300 pF).
pub const PERSON_SOLE_GAP: Meters = 0.05;

/// From this many points on, [`WebField::solve`] sums the conductors'
/// charge by clusters: building the tree costs about as much as a few
/// hundred points panel by panel.
pub const TREE_POINTS: usize = 2000;

fn conductor_solve(line: &Line, panel: f64, given: bool) -> Result<Option<Bem>, FieldError> {
    use crate::model::{
        ConductorEarthing, ConductorKind, ConductorShape, Earthing as RollerEarthing,
    };
    let shape = |s: ConductorShape| match s {
        ConductorShape::Plate { origin, e1, e2 } => Shape::Plate { origin, e1, e2 },
        ConductorShape::Box { min, max } => Shape::Cuboid { min, max },
        ConductorShape::Cylinder {
            center,
            axis,
            radius,
            length,
        } => Shape::Cylinder {
            center,
            axis,
            radius,
            length,
        },
    };
    let mut specs: Vec<ConductorSpec> = line
        .rollers
        .iter()
        .filter(|r| r.is_conductor())
        .map(|r| ConductorSpec {
            id: r.id.clone(),
            shape: shape(r.cylinder()),
            earthing: match r.earthing {
                RollerEarthing::Isolated => Earthing::Isolated {
                    charge: 0.0,
                    lumped_capacitance: 0.0,
                },
                _ => Earthing::Grounded,
            },
        })
        .collect();
    for c in &line.conductors {
        let mut s = shape(c.shape);
        if c.kind == ConductorKind::Person
            && let Shape::Cylinder { center, length, .. } = &mut s
        {
            center[2] += 0.5 * PERSON_SOLE_GAP;
            *length -= PERSON_SOLE_GAP;
        }
        specs.push(ConductorSpec {
            id: c.id.clone(),
            shape: s,
            earthing: match c.earthing {
                ConductorEarthing::Grounded => Earthing::Grounded,
                ConductorEarthing::Isolated {
                    charge,
                    capacitance_to_ground,
                    ..
                } => Earthing::Isolated {
                    charge,
                    lumped_capacitance: capacitance_to_ground.unwrap_or(0.0),
                },
            },
        });
    }
    if specs.is_empty() {
        return Ok(None);
    }
    let conductors = |e: super::bem::BemError| FieldError::Conductors(e.to_string());
    let mut size = panel;
    let mut tries = 0;
    loop {
        let settings = BemSettings::new(size).map_err(conductors)?;
        match Bem::new(&specs, line.ground_plane, settings) {
            Err(super::bem::BemError::TooManyPanels { suggest, .. }) if !given && tries < 8 => {
                size = (suggest * 1.05).max(size * 1.05);
                tries += 1;
            }
            r => return r.map(Some).map_err(conductors),
        }
    }
}

/// The charge [C] the web carries on a wrap arc from `s0` to `s1` [m]:
///
/// $$ Q = \sum_k A_k\,λ\,\bigl(1 - e^{-(b_k - a_k)/λ}\bigr) \int f(y)\,dy, $$
///
/// over the charge pieces k = (a_k, b_k, A_k) on the arc (A_k the
/// centreline density at a_k, λ the decay length; (b_k − a_k) when λ = ∞),
/// f the across-web shape, ∫f dy = Σ c₀Δy + c₁Δ(y²)/2 + c₂Δ(y³)/3 over its
/// quadratic pieces.
fn wrap_charge(charge: &ChargeProfile, s0: Meters, s1: Meters) -> f64 {
    let across: f64 = quad_pieces(charge)
        .iter()
        .map(|p| {
            let (a, b) = (p.y_lo, p.y_hi);
            p.c[0] * (b - a)
                + p.c[1] * (b * b - a * a) / 2.0
                + p.c[2] * (b.powi(3) - a.powi(3)) / 3.0
        })
        .sum();
    let lambda = charge.decay_length;
    charge
        .pieces_between(s0, s1)
        .iter()
        .map(|&(a, b, amp)| {
            let along = if lambda.is_finite() && lambda > 0.0 {
                lambda * -(-(b - a) / lambda).exp_m1()
            } else {
                b - a
            };
            amp * along
        })
        .sum::<f64>()
        * across
}

fn quad_pieces(charge: &ChargeProfile) -> Vec<QuadPiece> {
    charge
        .across
        .pieces()
        .iter()
        .map(|p| QuadPiece {
            y_lo: p.y_lo,
            y_hi: p.y_hi,
            c: p.c,
        })
        .collect()
}

/// What the web's charge does to one conductor.
#[derive(Debug, Clone, PartialEq)]
pub struct ConductorResult {
    /// The conductor's id (a roller's or a `conductors:` entry's).
    pub id: String,
    /// Whether it is held at 0 V.
    pub grounded: bool,
    /// Net charge on its surface [C] (induced, for a grounded one).
    pub charge: f64,
    /// Its potential [V] (0 when grounded; floating when isolated).
    pub potential: f64,
    /// Capacitance to ground [F] (isolated only, lumped part included).
    pub capacitance: Option<f64>,
    /// Energy ½CV² a spark to ground can release [J] (isolated only).
    pub spark_energy: Option<f64>,
    /// Panels of its mesh.
    pub panels: usize,
}

/// A scene with charge on its web, ready for evaluation at any number of
/// points.
#[derive(Debug, Clone)]
pub struct WebField<'s> {
    scene: &'s Scene,
    /// Per span: patches with their along-span offset [m].
    patches: Vec<Vec<(f64, Patch)>>,
    /// The charge this web induces on the conductors (none without them),
    /// or why it could not be solved.
    induced: Result<Option<Induced>, FieldError>,
    /// Net charge of each isolated conductor: given plus wrap charge [C].
    charges: Vec<f64>,
    /// The induced charge sorted into clusters, built at the first point asked for.
    tree: OnceLock<PanelTree>,
}

/// How much the conductors' results change when the panels are twice as
/// large: the accuracy estimate of a solve (see [`WebField::conductor_accuracy`]).
#[derive(Debug, Clone, PartialEq)]
pub struct ConductorAccuracy {
    /// Panel size of the solve [m] and its panel count.
    pub panel_size: Meters,
    /// Panels of the solve.
    pub panels: usize,
    /// Panel size of the coarse comparison solve [m].
    pub coarse_panel_size: Meters,
    /// Panels of the coarse solve.
    pub coarse_panels: usize,
    /// Largest |ΔV| over the check points [V] …
    pub potential_change: f64,
    /// … relative to the largest total |V| there [1].
    pub potential_relative: f64,
    /// Largest |Δ**E**| over the check points [V/m] …
    pub field_change: f64,
    /// … relative to the largest total |**E**| there [1].
    pub field_relative: f64,
    /// Largest |ΔC|/C of the isolated conductors' capacitances to ground [1]
    /// (0 without isolated conductors).
    pub capacitance_relative: f64,
    /// Check points used.
    pub points: usize,
}

impl ConductorAccuracy {
    /// A change above this between the two meshes (relative, in V or |E|
    /// at the check points) means the solve cannot vouch for its numbers
    /// there to better than several per cent: 5 %, a choice of this program.
    pub const DOUBTFUL: f64 = 0.05;

    /// Whether the results at the check points are in doubt (see
    /// [`Self::DOUBTFUL`]): the outputs then say so and ask for smaller panels.
    pub fn doubtful(&self) -> bool {
        self.potential_relative > Self::DOUBTFUL || self.field_relative > Self::DOUBTFUL
    }
}

/// Adds the conductors' field `e` [V/m] and potential `v` [V] to `f`, and
/// with `contributions` their share as one entry.
fn add_conductors(f: &mut PointField, e: [VoltsPerMeter; 3], v: f64, contributions: bool) {
    for (fk, ek) in f.e.iter_mut().zip(e) {
        *fk += ek;
    }
    f.v += v;
    if contributions {
        f.contributions.push(SpanContribution {
            span: "charge induced on conductors".to_string(),
            name: "conductors".to_string(),
            e,
            v,
        });
    }
}

impl WebField<'_> {
    /// Field and potential at `at`; with `contributions`, also per span.
    pub fn at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        let mut f = self.web_at(at, contributions)?;
        let induced = self.induced.as_ref().map_err(Clone::clone)?;
        if let (Some(induced), Some(bem)) = (induced, &self.scene.bem) {
            let (e, v) = induced.at(bem, at);
            add_conductors(&mut f, e, v, contributions);
        }
        Ok(f)
    }

    /// The charge induced on the conductors: the web's potential at every
    /// collocation point (a point that falls on the web — where a roller's
    /// surface meets its tangent — is taken 5 µm off it, outward from the
    /// roller's axis, which changes the potential by σ·5 µm/ε0 at most, far
    /// below a panel's own variation), then one back-substitution.
    ///
    /// The web's charge on a wrap arc lies a film thickness from the
    /// roller's metal. On a grounded roller it is bound by the equal and
    /// opposite charge it draws into the metal beneath it: the pair's field
    /// outside is that of a dipole layer a film thickness thick, negligible,
    /// so it is not integrated. On an isolated roller the metal stays
    /// neutral, so the charge drawn under the film leaves an equal charge of
    /// the wrap's sign on the rest of the roller: the wrap charge is added to
    /// the roller's net charge (`wrap_charges`, per isolated conductor), which
    /// raises its floating potential by Q/C (Gauss's law; the conductor's
    /// charge redistributes as on any conductor).
    fn induce(&self, bem: &Bem, charges: &[f64]) -> Result<Induced, FieldError> {
        let ext = self.external(bem)?;
        bem.solve_with_charges(&ext, charges)
            .map_err(|e| FieldError::Conductors(e.to_string()))
    }

    /// The web's potential at every collocation point of `bem`.
    fn external(&self, bem: &Bem) -> Result<Vec<f64>, FieldError> {
        let points = bem.collocation_points();
        let ext: Vec<f64> = points
            .par_iter()
            .map(|&x| match self.web_potential(x) {
                Err(FieldError::OnWeb { .. }) => self.web_potential([x[0], x[1], x[2] + 5e-6]),
                r => r,
            })
            .collect::<Result<_, _>>()?;
        Ok(ext)
    }

    /// The accuracy estimate of the conductors' solve for this charge: the
    /// same solve on panels twice as large (a quarter of the panels; the
    /// cylinders keep their minimum facets), compared at `checks` [m] (the
    /// places of interest) and in the isolated conductors' capacitances.
    /// With constant-density panels the error falls roughly like the panel
    /// size squared, so the change between the meshes, about 3× the finer
    /// mesh's error, bounds it with margin (L. Richardson's extrapolation
    /// argument; the unit cube in tests/bem.rs measures it). `None` without
    /// conductors or without check points.
    pub fn conductor_accuracy(
        &self,
        checks: &[[Meters; 3]],
    ) -> Result<Option<ConductorAccuracy>, FieldError> {
        let induced = self.induced.as_ref().map_err(Clone::clone)?;
        let (Some(fine), Some(bem)) = (induced, &self.scene.bem) else {
            return Ok(None);
        };
        if checks.is_empty() {
            return Ok(None);
        }
        let err = |e: super::bem::BemError| FieldError::Conductors(e.to_string());
        let h = bem.settings().panel_size();
        let coarse = bem.with_panel_size(2.0 * h).map_err(err)?;
        let ext = self.external(&coarse)?;
        let coarse_sol = coarse
            .solve_with_charges(&ext, &self.charges)
            .map_err(err)?;
        let rows = checks
            .par_iter()
            .map(|&x| {
                let total = self.at(x, false)?;
                let (e, v) = fine.at(bem, x);
                let (ec, vc) = coarse_sol.at(&coarse, x);
                let de = [e[0] - ec[0], e[1] - ec[1], e[2] - ec[2]];
                Ok([
                    total.v.abs(),
                    total.e_magnitude(),
                    (v - vc).abs(),
                    (de[0] * de[0] + de[1] * de[1] + de[2] * de[2]).sqrt(),
                ])
            })
            .collect::<Result<Vec<_>, FieldError>>()?;
        let max = |k: usize| rows.iter().map(|r| r[k]).fold(0.0, f64::max);
        let (v_scale, e_scale, dv, de) = (max(0), max(1), max(2), max(3));
        let ratio = |d: f64, s: f64| if s > 0.0 { d / s } else { 0.0 };
        let capacitance_relative = (0..bem.conductors().len())
            .filter_map(|k| {
                let c = bem.capacitance_to_ground(k)?;
                let cc = coarse.capacitance_to_ground(k)?;
                Some(ratio((c - cc).abs(), c))
            })
            .fold(0.0, f64::max);
        Ok(Some(ConductorAccuracy {
            panel_size: h,
            panels: bem.panels().len(),
            coarse_panel_size: 2.0 * h,
            coarse_panels: coarse.panels().len(),
            potential_change: dv,
            potential_relative: ratio(dv, v_scale),
            field_change: de,
            field_relative: ratio(de, e_scale),
            capacitance_relative,
            points: checks.len(),
        }))
    }

    /// Per conductor: the charge, potential, capacitance and spark energy
    /// this web's charge gives (empty without conductors).
    pub fn conductor_results(&self) -> Result<Vec<ConductorResult>, FieldError> {
        let induced = self.induced.as_ref().map_err(Clone::clone)?;
        let (Some(induced), Some(bem)) = (induced, &self.scene.bem) else {
            return Ok(Vec::new());
        };
        Ok(bem
            .conductors()
            .iter()
            .enumerate()
            .map(|(k, c)| ConductorResult {
                id: c.spec.id.clone(),
                grounded: c.isolated.is_none(),
                charge: induced.net_charge(k),
                potential: induced.potential(k),
                capacitance: bem.capacitance_to_ground(k),
                spark_energy: induced.spark_energy(bem, k),
                panels: c.panels.len(),
            })
            .collect())
    }

    /// Field and potential at `at` with the conductors' panel factors
    /// there precomputed ([`Scene::panel_factors`]); the same result as
    /// [`WebField::at`] without contributions.
    pub fn at_with(
        &self,
        at: [Meters; 3],
        factors: Option<&[[f64; 4]]>,
    ) -> Result<PointField, FieldError> {
        let Some(factors) = factors else {
            return self.at(at, false);
        };
        let mut f = self.web_at(at, false)?;
        let induced = self.induced.as_ref().map_err(Clone::clone)?;
        if let Some(induced) = induced {
            let (e, v) = induced.at_factors(factors);
            for (fk, ek) in f.e.iter_mut().zip(e) {
                *fk += ek;
            }
            f.v += v;
        }
        Ok(f)
    }

    /// Potential [V] of the web's own charge (and its images) at `at`, for
    /// the conductors' right-hand side: patches far from the point by the
    /// fixed Gauss rule of [`super::far`] (within 1e-8 of the adaptive
    /// rule's error scale), the others by the adaptive rule.
    fn web_potential(&self, at: [Meters; 3]) -> Result<f64, FieldError> {
        let mut v = 0.0;
        let tol = self.scene.settings.rel_tol();
        for (g, patches) in self.scene.spans.iter().zip(&self.patches) {
            let one = |x: [f64; 3]| -> Result<f64, FieldError> {
                let frame = span_frame(&g.span, self.scene.width, x);
                if on_web(frame.distance) {
                    return Err(FieldError::OnWeb {
                        at: x,
                        span: g.label.clone(),
                        distance: frame.distance,
                    });
                }
                let mut sum = 0.0;
                for (offset, patch) in patches {
                    let p = [frame.u - offset, frame.y, frame.h];
                    sum += match super::far::far_potential(patch, p) {
                        Some(far) => far,
                        None => {
                            patch_field(patch, p, tol)
                                .map_err(|source| FieldError::NotConverged {
                                    at: x,
                                    span: g.label.clone(),
                                    source,
                                })?
                                .v
                        }
                    };
                }
                Ok(sum)
            };
            v += one(at)?;
            if let Some(zg) = self.scene.ground {
                v -= one([at[0], at[1], 2.0 * zg - at[2]])?;
            }
        }
        Ok(v)
    }

    /// Field and potential of the web's own charge (and its images).
    fn web_at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        let mut parts = Vec::new();
        for (g, patches) in self.scene.spans.iter().zip(&self.patches) {
            let mut f = self.span_field(g, patches, at)?;
            if let Some(zg) = self.scene.ground {
                let mirrored = [at[0], at[1], 2.0 * zg - at[2]];
                let img = self.span_field(g, patches, mirrored)?;
                f.v -= img.v;
                f.e[0] -= img.e[0];
                f.e[1] -= img.e[1];
                f.e[2] += img.e[2];
            }
            v += f.v;
            for (ek, fk) in e.iter_mut().zip(f.e) {
                *ek += fk;
            }
            if contributions {
                parts.push(SpanContribution {
                    span: g.label.clone(),
                    name: g.span.name.clone(),
                    e: f.e,
                    v: f.v,
                });
            }
        }
        Ok(PointField {
            at,
            e,
            v,
            contributions: parts,
        })
    }

    /// Field and potential at every point (in parallel), in input order.
    /// From [`TREE_POINTS`] points on (or once a call has built the tree:
    /// the chunks of a long point list), the conductors' charge is summed by
    /// clusters ([`super::tree`], error within [`tree::DEFAULT_TOL`] of the
    /// sum of the panels' contribution magnitudes) instead of panel by panel.
    pub fn solve(
        &self,
        points: &[[Meters; 3]],
        contributions: bool,
    ) -> Result<FieldMap, FieldError> {
        let many = points.len() >= TREE_POINTS || self.tree.get().is_some();
        let points = points
            .par_iter()
            .map(|&p| {
                if many {
                    self.at_clustered(p, contributions)
                } else {
                    self.at(p, contributions)
                }
            })
            .collect::<Result<Vec<_>, _>>()?;
        Ok(FieldMap { points })
    }

    /// As [`WebField::at`], with the conductors' charge summed by clusters
    /// (the tree is built at the first call).
    pub fn at_clustered(
        &self,
        at: [Meters; 3],
        contributions: bool,
    ) -> Result<PointField, FieldError> {
        let induced = self.induced.as_ref().map_err(Clone::clone)?;
        let (Some(induced), Some(bem)) = (induced, &self.scene.bem) else {
            return self.at(at, contributions);
        };
        let mut f = self.web_at(at, contributions)?;
        let tree = self.tree.get_or_init(|| {
            PanelTree::new(
                bem.panels(),
                induced.scaled_densities(),
                bem.ground(),
                tree::DEFAULT_TOL,
            )
        });
        let (e, v) = tree.at(at);
        add_conductors(&mut f, e, v, contributions);
        Ok(f)
    }

    /// |E| on a regular grid in the side-view plane at across position `y`:
    /// `nx × nz` points over `x ∈ [x0, x1]`, `z ∈ [z0, z1]`, row-major by z
    /// (`values[iz * nx + ix]`) [V/m]. Points on the web (within 1 µm) are NaN,
    /// as are all points if the conductors' solve failed.
    ///
    /// Summed by boxes ([`super::map_boxes`]): the spans, panels and images
    /// near a box at every point, the far ones interpolated from the box's
    /// Chebyshev points (estimated error ≤ 1e-7 of the far field's largest
    /// |E| in the box per level; measured against [`WebField::at`] at every
    /// point of the demo's map in `benches/scaling.rs` and in the tests).
    pub fn side_view_grid(
        &self,
        x: [Meters; 2],
        z: [Meters; 2],
        nx: usize,
        nz: usize,
        y: Meters,
    ) -> (Vec<Meters>, Vec<Meters>, Vec<VoltsPerMeter>) {
        let (xs, zs, values) = self.side_view_vectors(x, z, nx, nz, y);
        let magnitudes = values
            .into_iter()
            .map(|e| {
                e.map_or(f64::NAN, |e| {
                    (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt()
                })
            })
            .collect();
        (xs, zs, magnitudes)
    }

    /// **E** [V/m] on the grid of [`WebField::side_view_grid`] (`None` where it
    /// cannot be computed), with the work done.
    pub fn side_view_vectors(
        &self,
        x: [Meters; 2],
        z: [Meters; 2],
        nx: usize,
        nz: usize,
        y: Meters,
    ) -> (Vec<Meters>, Vec<Meters>, Vec<Option<[VoltsPerMeter; 3]>>) {
        self.side_view_with_stats(x, z, nx, nz, y).0
    }

    /// As [`WebField::side_view_vectors`], with the boxes' work counts.
    #[allow(clippy::type_complexity)]
    pub fn side_view_with_stats(
        &self,
        x: [Meters; 2],
        z: [Meters; 2],
        nx: usize,
        nz: usize,
        y: Meters,
    ) -> (
        (Vec<Meters>, Vec<Meters>, Vec<Option<[VoltsPerMeter; 3]>>),
        MapStats,
    ) {
        let step = |a: f64, b: f64, n: usize, i: usize| {
            if n > 1 {
                a + (b - a) * i as f64 / (n - 1) as f64
            } else {
                a
            }
        };
        let xs: Vec<f64> = (0..nx).map(|i| step(x[0], x[1], nx, i)).collect();
        let zs: Vec<f64> = (0..nz).map(|i| step(z[0], z[1], nz, i)).collect();
        let progress = Tracker::new(Task::Map, (nx * nz) as u64);
        let Ok(induced) = self.induced.as_ref() else {
            return ((xs, zs, vec![None; nx * nz]), MapStats::default());
        };
        let sources = Sources::new(self, induced.as_ref());
        let (values, stats) = map_field(&xs, &zs, y, &sources, &|n| progress.advance(n as u64));
        ((xs, zs, values), stats)
    }

    /// Field of one span (not its image) at a point, in global coordinates.
    fn span_field(
        &self,
        g: &SpanGeometry,
        patches: &[(f64, Patch)],
        at: [f64; 3],
    ) -> Result<LocalField, FieldError> {
        let frame = span_frame(&g.span, self.scene.width, at);
        if on_web(frame.distance) {
            return Err(FieldError::OnWeb {
                at,
                span: g.label.clone(),
                distance: frame.distance,
            });
        }
        let mut local = LocalField::default();
        for (offset, patch) in patches {
            let p = [frame.u - offset, frame.y, frame.h];
            let f = patch_field(patch, p, self.scene.settings.rel_tol()).map_err(|source| {
                FieldError::NotConverged {
                    at,
                    span: g.label.clone(),
                    source,
                }
            })?;
            local.add(&f);
        }
        // Back to global coordinates: E = E_u t + E_y ŷ + E_h n.
        let e = [
            local.e[0] * g.t[0] + local.e[2] * g.n[0],
            local.e[1],
            local.e[0] * g.t[2] + local.e[2] * g.n[2],
        ];
        Ok(LocalField { v: local.v, e })
    }
}

impl FieldAt for WebField<'_> {
    fn field_at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        self.at(at, contributions)
    }
}

/// The sources of a field map: spans, panels and their images, in that order
/// (spans, span images, panels, panel images), for [`super::map_boxes`].
struct Sources<'w, 's> {
    web: &'w WebField<'s>,
    induced: Option<(&'w Induced, &'w Bem)>,
    /// Mirror plane z [m], if grounded.
    ground: Option<f64>,
}

impl<'w, 's> Sources<'w, 's> {
    fn new(web: &'w WebField<'s>, induced: Option<&'w Induced>) -> Self {
        Sources {
            web,
            induced: induced.zip(web.scene.bem.as_ref()),
            ground: web.scene.ground,
        }
    }

    fn spans(&self) -> usize {
        self.web.scene.spans.len()
    }

    fn panels(&self) -> usize {
        self.induced.map_or(0, |(_, b)| b.panels().len())
    }

    /// How many copies (1, or 2 with the plane's images).
    fn copies(&self) -> usize {
        if self.ground.is_some() { 2 } else { 1 }
    }

    /// z mirrored in the plane (unchanged without one).
    fn mirror(&self, z: f64) -> f64 {
        self.ground.map_or(z, |zg| 2.0 * zg - z)
    }
}

/// Distance in the x–z plane from the segment a–b to the rectangle [m]
/// (0 if they meet): a lower bound of the 3-D distance from the span to the box.
fn segment_rect_distance(a: [f64; 2], b: [f64; 2], r: &MapRect) -> f64 {
    // Liang–Barsky clipping: does any part of the segment lie in the rectangle?
    let d = [b[0] - a[0], b[1] - a[1]];
    let (mut t0, mut t1) = (0.0_f64, 1.0_f64);
    let mut meets = true;
    for (k, lo, hi) in [(0, r.x[0], r.x[1]), (1, r.z[0], r.z[1])] {
        if d[k] == 0.0 {
            if a[k] < lo || a[k] > hi {
                meets = false;
            }
        } else {
            let (u, v) = ((lo - a[k]) / d[k], (hi - a[k]) / d[k]);
            t0 = t0.max(u.min(v));
            t1 = t1.min(u.max(v));
        }
    }
    if meets && t0 <= t1 {
        return 0.0;
    }
    let to_rect = |p: [f64; 2]| r.distance_to([p[0], r.y, p[1]]);
    let to_segment = |p: [f64; 2]| {
        let len2 = d[0] * d[0] + d[1] * d[1];
        let t = if len2 > 0.0 {
            (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / len2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let q = [a[0] + t * d[0] - p[0], a[1] + t * d[1] - p[1]];
        (q[0] * q[0] + q[1] * q[1]).sqrt()
    };
    let corners = [
        [r.x[0], r.z[0]],
        [r.x[1], r.z[0]],
        [r.x[0], r.z[1]],
        [r.x[1], r.z[1]],
    ];
    corners
        .into_iter()
        .map(to_segment)
        .chain([to_rect(a), to_rect(b)])
        .fold(f64::INFINITY, f64::min)
}

impl MapSources for Sources<'_, '_> {
    fn count(&self) -> usize {
        (self.spans() + self.panels()) * self.copies()
    }

    fn distance(&self, i: usize, r: &MapRect) -> f64 {
        let (ns, copies) = (self.spans(), self.copies());
        if i < ns * copies {
            let g = &self.web.scene.spans[i % ns];
            let image = i >= ns;
            let end = |p: [f64; 2]| [p[0], if image { self.mirror(p[1]) } else { p[1] }];
            segment_rect_distance(end(g.span.start), end(g.span.end), r)
        } else {
            let np = self.panels();
            let j = i - ns * copies;
            let Some((_, bem)) = self.induced else {
                return 0.0;
            };
            let p = &bem.panels()[j % np];
            let mut c = p.center;
            if j >= np {
                c[2] = self.mirror(c[2]);
            }
            (r.distance_to(c) - p.half_u.hypot(p.half_v)).max(0.0)
        }
    }

    fn field(&self, p: [f64; 3], which: &[usize], mut scale: Option<&mut f64>) -> Option<[f64; 3]> {
        let (ns, copies) = (self.spans(), self.copies());
        let mut e = [0.0; 3];
        let mut add_scale = |f: [f64; 3], q: f64| {
            if let Some(s) = scale.as_deref_mut() {
                *s += q.abs() * (f[0] * f[0] + f[1] * f[1] + f[2] * f[2]).sqrt();
            }
        };
        let mirrored = [p[0], p[1], self.mirror(p[2])];
        for &i in which {
            if i < ns * copies {
                let k = i % ns;
                let g = &self.web.scene.spans[k];
                let patches = &self.web.patches[k];
                if i < ns {
                    let f = self.web.span_field(g, patches, p).ok()?;
                    add_scale(f.e, 1.0);
                    for (ek, fk) in e.iter_mut().zip(f.e) {
                        *ek += fk;
                    }
                } else {
                    // Image: −M·E(Mx).
                    let f = self.web.span_field(g, patches, mirrored).ok()?;
                    add_scale(f.e, 1.0);
                    e[0] -= f.e[0];
                    e[1] -= f.e[1];
                    e[2] += f.e[2];
                }
            } else {
                let (induced, bem) = self.induced?;
                let np = self.panels();
                let j = i - ns * copies;
                let q = induced.scaled_densities()[j % np];
                let panel = &bem.panels()[j % np];
                if j < np {
                    let f = panel.factors(p);
                    add_scale(f.e, q);
                    for (ek, fk) in e.iter_mut().zip(f.e) {
                        *ek += q * fk;
                    }
                } else {
                    let f = panel.factors(mirrored);
                    add_scale(f.e, q);
                    e[0] -= q * f.e[0];
                    e[1] -= q * f.e[1];
                    e[2] += q * f.e[2];
                }
            }
        }
        Some(e)
    }
}
