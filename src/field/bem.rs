//! # Charge induced on conductors, by a boundary-element (moment-method) solve
//!
//! Field stage, conductor part: given conductors (plain geometry from
//! [`super::panels`], each grounded or isolated) and an external potential
//! φ_ext (the charged web's, supplied by the caller), finds the surface charge
//! σ induced on every conductor and the floating potential of each isolated
//! one, and evaluates their field and potential anywhere. It knows nothing of
//! lines or webs: the scene supplies φ_ext at [`Bem::collocation_points`].
//!
//! ## Integral equation
//! On the surface S_k of conductor k the total potential is the conductor's
//! potential V_k (0 for a grounded one, unknown for an isolated one):
//!
//! $$ φ_{ext}(\mathbf x) + \frac{1}{4πε_0}\iint_S σ(\mathbf r')\Bigl(
//!    \frac{1}{|\mathbf x-\mathbf r'|} - \frac{1}{|\mathbf x-M\mathbf r'|}\Bigr)dA'
//!    = V_k, \qquad \mathbf x ∈ S_k, $$
//!
//! (the first kind Fredholm equation of electrostatics: J. D. Jackson,
//! *Classical Electrodynamics*, 3rd ed., ch. 1; section numbers in this
//! module are from memory), where the second term,
//! present only with a grounded plane z = z_g, is the image charge −σ at the
//! mirror point M**r**′ = (x′, y′, 2z_g − z′) that keeps the plane at 0 V
//! (method of images, Jackson §2.1; W. R. Smythe, *Static and Dynamic
//! Electricity*, 3rd ed., ch. 5). Every isolated conductor k adds the
//! constraint that its charge is the one given,
//!
//! $$ \sum_{j∈k} σ_j A_j + C_{l,k} V_k = Q_k, $$
//!
//! with C_l,k an extra lumped capacitance to ground in parallel (a person's
//! feet, a cable), 0 if none.
//!
//! ## Discretisation (point-matching moment method)
//! Each conductor is cut into flat rectangular panels ([`super::panels`]) of
//! constant density σ_j, and the equation is imposed at every panel centroid
//! x_i (collocation: R. F. Harrington, *Field Computation by Moment Methods*,
//! 1968, ch. 1–2, the charged conducting plate). The influence
//! G_ij = ∬_{panel j} dA′/|x_i − r′| is the exact closed form of
//! [`super::kernels::rectangle_geometry`], self term (i = j, h = 0 inside the
//! rectangle) included: there it is 4[a·asinh(b/a) + b·asinh(a/b)] for half
//! sides a, b, finite and exact (tested). Unknowns are scaled as
//! q̃_j = σ_j/(4πε₀) [V/m] so that the matrix entries are lengths:
//!
//! $$ \sum_j (G_{ij} - G^{img}_{ij})\,q̃_j - V_{k(i)} = -φ_{ext}(x_i), \qquad
//!    \frac{1}{\ell_k}\Bigl(\sum_{j∈k} A_j q̃_j + \frac{C_{l,k}}{4πε_0} V_k\Bigr)
//!    = \frac{Q_k}{4πε_0\,\ell_k}, $$
//!
//! ℓ_k = √(area of k) a row scale. The dense (n + m)² system is factorised
//! once (partial-pivot LU, `faer`); any external potential is then a
//! back-substitution ([`Bem::solve`]), so the response is linear in φ_ext
//! ([`Bem::solve_response`] with all Q_k = 0).
//!
//! ## Capacitances
//! Solving with φ_ext = 0 and Q = e_k gives the columns of the elastance
//! S = (C + diag C_l)⁻¹ of the isolated conductors (potentials per charge,
//! grounded conductors and the plane at 0 V). [`Bem::capacitance_matrix`] is
//! the Maxwell matrix C (surface charges only: Q_i = Σ_j C_ij V_j, symmetric
//! by Green's reciprocity, positive diagonal, negative off-diagonal: Jackson
//! ch. 1, problem 1.12; Smythe ch. 2). [`Bem::capacitance_to_ground`] is 1/S_kk, lumped part
//! included: the capacitance a spark from conductor k to ground discharges
//! while the other isolated conductors keep their charge; the energy it
//! releases is ½C_kV_k² ([`Induced::spark_energy`]).
//!
//! ## Accuracy
//! Errors come from constant density per panel (largest at edges, where σ is
//! singular: hence edge grading) and from a cylinder's facets.
//! [`Bem::error_estimate`] solves the same conductors on a mesh with twice the
//! panel size and reports the differences of the results. The error of a
//! result of this method falls like h^p with the panel size h, p between 1
//! and 2 (tested on the cube), so the difference coarse − fine is
//! (2^p − 1) × the fine error: an upper bound on the fine mesh's error as long
//! as p ≥ 1, which holds once the mesh resolves the geometry.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ_j, q̃_j | panel density, σ_j/(4πε₀) | C/m², V/m |
//! | A_j | panel area | m² |
//! | φ_ext | external (web) potential at a point | V |
//! | V_k | conductor potential | V |
//! | Q_k | given charge of an isolated conductor | C |
//! | C_l,k | lumped capacitance to ground | F |
//! | G_ij | ∬ dA′/R over panel j at x_i | m |
//! | z_g | height of the grounded plane | m |
//! | ε₀ | vacuum permittivity ([`crate::units::EPS0`]) | F/m |
//!
//! Assumptions: perfect conductors in vacuum (air); thin plates are one layer
//! carrying the sum of both faces' densities; conductors lie wholly above the
//! grounded plane and do not overlap (not checked here: the caller validates
//! placement).

use crate::progress::{Task, Tracker};
use faer::Mat;
use faer::linalg::solvers::{DenseSolveCore, PartialPivLu, Solve};
use rayon::prelude::*;

use super::kernels::COULOMB;
use super::panels::{self, MeshParams, Panel, Shape, ShapeError};
use crate::units::{Farads, Joules, Meters, Volts, VoltsPerMeter};

/// Charge [C] (local alias; `units` has none).
type Coulombs = f64;

/// How a conductor is connected.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Earthing {
    /// Held at 0 V.
    Grounded,
    /// Floating, with a fixed net charge.
    Isolated {
        /// Net charge, including the lumped capacitance's share [C].
        charge: Coulombs,
        /// Extra capacitance to ground in parallel, 0 if none [F].
        lumped_capacitance: Farads,
    },
}

/// One conductor: an identifier for messages, its surface and its earthing.
#[derive(Debug, Clone, PartialEq)]
pub struct ConductorSpec {
    /// Identifier used in messages and results.
    pub id: String,
    /// Surface.
    pub shape: Shape,
    /// Grounded or isolated.
    pub earthing: Earthing,
}

/// Checked settings of the boundary-element solve.
///
/// ```
/// use websigma::field::bem::BemSettings;
/// let s = BemSettings::new(0.02).unwrap().with_grading(0.5).unwrap();
/// assert_eq!(s.panel_size(), 0.02);
/// assert!(BemSettings::new(0.0).is_err());
/// assert!(BemSettings::new(0.02).unwrap().with_grading(1.0).is_err());
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BemSettings {
    panel_size: Meters,
    grading: f64,
    max_panels: usize,
    min_facets: usize,
}

impl BemSettings {
    /// Smallest panel size accepted [m].
    pub const MIN_PANEL: Meters = 1e-5;
    /// Largest panel size accepted [m].
    pub const MAX_PANEL: Meters = 100.0;
    /// Default largest number of panels (the dense matrix and its LU copy take
    /// 2 × 8 n² bytes: 1 GB at 8000).
    pub const DEFAULT_MAX_PANELS: usize = 8000;
    /// Hard ceiling on [`Self::with_max_panels`] (2 × 8 n² = 6.4 GB at 20000).
    pub const MAX_PANELS_CEILING: usize = 20000;
    /// Default edge grading.
    pub const DEFAULT_GRADING: f64 = 0.5;

    /// Settings with largest panel side `panel_size` [m], default grading and panel limit.
    pub fn new(panel_size: Meters) -> Result<Self, BemError> {
        if !(Self::MIN_PANEL..=Self::MAX_PANEL).contains(&panel_size) {
            return Err(BemError::Settings(format!(
                "panel size must be between {:e} m and {:e} m, got {panel_size:e} m",
                Self::MIN_PANEL,
                Self::MAX_PANEL
            )));
        }
        Ok(BemSettings {
            panel_size,
            grading: Self::DEFAULT_GRADING,
            max_panels: Self::DEFAULT_MAX_PANELS,
            min_facets: panels::MIN_FACETS,
        })
    }
    /// The same settings with edge grading `g` ∈ [0, 0.95] (0 = uniform panels).
    pub fn with_grading(self, g: f64) -> Result<Self, BemError> {
        if !(0.0..=0.95).contains(&g) {
            return Err(BemError::Settings(format!(
                "grading must be between 0 (uniform) and 0.95, got {g}"
            )));
        }
        Ok(BemSettings { grading: g, ..self })
    }
    /// The same settings with another panel limit (1 to [`Self::MAX_PANELS_CEILING`]).
    pub fn with_max_panels(self, n: usize) -> Result<Self, BemError> {
        if !(1..=Self::MAX_PANELS_CEILING).contains(&n) {
            return Err(BemError::Settings(format!(
                "panel limit must be between 1 and {}, got {n}",
                Self::MAX_PANELS_CEILING
            )));
        }
        Ok(BemSettings {
            max_panels: n,
            ..self
        })
    }
    /// The same settings with at least `n` facets around every cylinder
    /// ([`panels::MIN_FACETS`] to 2000): finer around than along, for the
    /// faceting error π²/(3N²) (see [`super::panels`]).
    pub fn with_min_facets(self, n: usize) -> Result<Self, BemError> {
        if !(panels::MIN_FACETS..=2000).contains(&n) {
            return Err(BemError::Settings(format!(
                "minimum facets per cylinder must be between {} and 2000, got {n}",
                panels::MIN_FACETS
            )));
        }
        Ok(BemSettings {
            min_facets: n,
            ..self
        })
    }
    /// Fewest facets around a cylinder.
    pub fn min_facets(&self) -> usize {
        self.min_facets
    }
    /// Largest panel side [m].
    pub fn panel_size(&self) -> Meters {
        self.panel_size
    }
    /// Edge grading [1].
    pub fn grading(&self) -> f64 {
        self.grading
    }
    /// Largest number of panels.
    pub fn max_panels(&self) -> usize {
        self.max_panels
    }
}

/// Why a boundary-element solve was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum BemError {
    /// A setting out of range.
    #[error("`BemSettings`: {0}")]
    Settings(String),
    /// A shape that cannot be meshed.
    #[error("conductor '{id}': {source}")]
    Shape {
        /// Conductor identifier.
        id: String,
        /// What is wrong with the shape.
        source: ShapeError,
    },
    /// Bad earthing values.
    #[error("conductor '{id}': {what}")]
    Earthing {
        /// Conductor identifier.
        id: String,
        /// What is wrong.
        what: String,
    },
    /// Two conductors with one identifier.
    #[error("conductor id '{0}' is used twice: give every conductor its own id")]
    DuplicateId(String),
    /// A conductor reaching the grounded plane.
    #[error(
        "conductor '{id}' reaches down to z = {z_min:.6} m, at or below the grounded plane z = {ground:.6} m: keep it above the plane (a conductor touching a grounded floor is grounded: lift it by a small gap and make it grounded)"
    )]
    BelowGround {
        /// Conductor identifier.
        id: String,
        /// Its lowest point [m].
        z_min: Meters,
        /// The plane [m].
        ground: Meters,
    },
    /// The mesh is larger than allowed.
    #[error(
        "the conductors need {panels} panels at a panel size of {panel_size} m, more than the limit of {max} (a dense matrix of {gb:.1} GB): choose a panel size of at least {suggest:.3} m"
    )]
    TooManyPanels {
        /// Panels needed.
        panels: usize,
        /// The limit.
        max: usize,
        /// Panel size asked for [m].
        panel_size: Meters,
        /// Memory for the matrix and its factors [GB].
        gb: f64,
        /// A panel size that would roughly fit [m].
        suggest: Meters,
    },
    /// No conductor given.
    #[error("no conductors: give at least one conductor to solve for")]
    Empty,
    /// The system matrix is (numerically) singular.
    #[error(
        "the boundary-element system is singular (pivot ratio {ratio:.1e}): check for overlapping or coincident conductors"
    )]
    Singular {
        /// Smallest over largest |pivot|.
        ratio: f64,
    },
    /// The external potential has the wrong length or is not finite.
    #[error("{0}")]
    Input(String),
}

/// A conductor as meshed: its spec, panel range and unknown index.
#[derive(Debug, Clone, PartialEq)]
pub struct Conductor {
    /// What was asked for.
    pub spec: ConductorSpec,
    /// Its panels in [`Bem::panels`].
    pub panels: std::ops::Range<usize>,
    /// Surface area of the mesh [m²].
    pub area: f64,
    /// Index among the isolated conductors (row of the capacitance matrix).
    pub isolated: Option<usize>,
}

/// The factorised boundary-element system of a set of conductors.
pub struct Bem {
    conductors: Vec<Conductor>,
    panels: Vec<Panel>,
    owner: Vec<usize>,
    ground: Option<Meters>,
    settings: BemSettings,
    lu: PartialPivLu<f64>,
    /// Row scale ℓ_k of each isolated conductor [m].
    row_scale: Vec<f64>,
    /// Conductor index of each isolated conductor.
    iso: Vec<usize>,
    /// Maxwell capacitance matrix of the isolated conductors [F].
    maxwell: Vec<Vec<Farads>>,
    /// 1/S_kk, lumped part included [F].
    to_ground: Vec<Farads>,
}

impl std::fmt::Debug for Bem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Bem")
            .field("conductors", &self.conductors.len())
            .field("panels", &self.panels.len())
            .field("ground", &self.ground)
            .field("settings", &self.settings)
            .finish()
    }
}

/// The result of one solve: panel densities and conductor potentials.
#[derive(Debug, Clone, PartialEq)]
pub struct Induced {
    /// q̃_j = σ_j/(4πε₀) per panel [V/m].
    q: Vec<f64>,
    /// Potential of each conductor (0 for grounded) [V].
    potentials: Vec<Volts>,
    /// Net surface charge of each conductor [C].
    charges: Vec<Coulombs>,
}

impl Bem {
    /// Meshes `conductors`, assembles and factorises the system, with a
    /// grounded plane at z = `ground` [m] if given.
    pub fn new(
        conductors: &[ConductorSpec],
        ground: Option<Meters>,
        settings: BemSettings,
    ) -> Result<Bem, BemError> {
        if conductors.is_empty() {
            return Err(BemError::Empty);
        }
        if let Some(zg) = ground
            && !zg.is_finite()
        {
            return Err(BemError::Input(format!(
                "grounded plane height {zg} is not a finite number of metres"
            )));
        }
        let mp = MeshParams {
            panel_size: settings.panel_size,
            grading: settings.grading,
            min_facets: settings.min_facets,
        };
        let mut meshed = Vec::new();
        let mut panels = Vec::new();
        let mut owner = Vec::new();
        let mut iso = Vec::new();
        for (k, spec) in conductors.iter().enumerate() {
            if conductors[..k].iter().any(|c| c.id == spec.id) {
                return Err(BemError::DuplicateId(spec.id.clone()));
            }
            check_earthing(spec)?;
            let p = panels::mesh(&spec.shape, &mp).map_err(|source| BemError::Shape {
                id: spec.id.clone(),
                source,
            })?;
            if let Some(zg) = ground {
                let z_min = p.iter().map(Panel::z_min).fold(f64::INFINITY, f64::min);
                if z_min <= zg {
                    return Err(BemError::BelowGround {
                        id: spec.id.clone(),
                        z_min,
                        ground: zg,
                    });
                }
            }
            let start = panels.len();
            let area = p.iter().map(Panel::area).sum();
            owner.extend(std::iter::repeat_n(k, p.len()));
            panels.extend(p);
            if panels.len() > settings.max_panels {
                // Panel count grows like 1/h²: the size that would fit.
                let total: usize = panels.len();
                let suggest =
                    settings.panel_size * (total as f64 / settings.max_panels as f64).sqrt();
                return Err(BemError::TooManyPanels {
                    panels: total,
                    max: settings.max_panels,
                    panel_size: settings.panel_size,
                    gb: 16.0 * (total as f64).powi(2) / 1e9,
                    suggest,
                });
            }
            let isolated = match spec.earthing {
                Earthing::Grounded => None,
                Earthing::Isolated { .. } => {
                    iso.push(k);
                    Some(iso.len() - 1)
                }
            };
            meshed.push(Conductor {
                spec: spec.clone(),
                panels: start..panels.len(),
                area,
                isolated,
            });
        }
        let row_scale: Vec<f64> = iso.iter().map(|&k| meshed[k].area.sqrt()).collect();
        let n = panels.len();
        let size = n + iso.len();
        // Column-major assembly, one column (source panel) per task; the
        // factorisation counts as a tenth of the work on the progress bar.
        let progress = Tracker::new(Task::Conductors, (size + size / 10 + 1) as u64);
        let mut data = vec![0.0; size * size];
        data.par_chunks_mut(size).enumerate().for_each(|(j, col)| {
            progress.advance(1);
            if j < n {
                let pj = &panels[j];
                for (i, pi) in panels.iter().enumerate() {
                    let x = pi.center;
                    let mut g = pj.potential_factor(x);
                    if let Some(zg) = ground {
                        g -= pj.potential_factor([x[0], x[1], 2.0 * zg - x[2]]);
                    }
                    col[i] = g;
                }
                if let Some(r) = meshed[owner[j]].isolated {
                    col[n + r] = pj.area() / row_scale[r];
                }
            } else {
                let r = j - n;
                let k = iso[r];
                for i in meshed[k].panels.clone() {
                    col[i] = -1.0;
                }
                if let Earthing::Isolated {
                    lumped_capacitance, ..
                } = meshed[k].spec.earthing
                {
                    col[n + r] = lumped_capacitance * COULOMB / row_scale[r];
                }
            }
        });
        let a = faer::MatRef::from_column_major_slice(&data, size, size);
        let lu = PartialPivLu::new(a);
        progress.advance((size / 10 + 1) as u64);
        drop(progress);
        drop(data);
        let diag = lu.U().diagonal();
        let (mut lo, mut hi) = (f64::INFINITY, 0.0_f64);
        for i in 0..size {
            let d = diag[i].abs();
            lo = lo.min(d);
            hi = hi.max(d);
        }
        let ratio = if hi > 0.0 { lo / hi } else { 0.0 };
        if ratio.is_nan() || ratio <= 1e-13 {
            return Err(BemError::Singular { ratio });
        }
        let mut bem = Bem {
            conductors: meshed,
            panels,
            owner,
            ground,
            settings,
            lu,
            row_scale,
            iso,
            maxwell: Vec::new(),
            to_ground: Vec::new(),
        };
        bem.capacitances()?;
        Ok(bem)
    }

    /// Elastance columns from unit-charge solves, then C = S⁻¹ − diag(C_l).
    fn capacitances(&mut self) -> Result<(), BemError> {
        let m = self.iso.len();
        if m == 0 {
            return Ok(());
        }
        let n = self.panels.len();
        let mut rhs = Mat::<f64>::zeros(n + m, m);
        for r in 0..m {
            rhs[(n + r, r)] = COULOMB / self.row_scale[r];
        }
        self.lu.solve_in_place(rhs.as_mut());
        let s = Mat::<f64>::from_fn(m, m, |i, j| rhs[(n + i, j)]);
        let c_tot = PartialPivLu::new(s.as_ref()).inverse();
        self.to_ground = (0..m).map(|k| 1.0 / s[(k, k)]).collect();
        self.maxwell = (0..m)
            .map(|i| {
                (0..m)
                    .map(|j| {
                        let mut c = c_tot[(i, j)];
                        if i == j {
                            c -= self.lumped(i);
                        }
                        c
                    })
                    .collect()
            })
            .collect();
        if self
            .to_ground
            .iter()
            .chain(self.maxwell.iter().flatten())
            .any(|c| !c.is_finite())
        {
            return Err(BemError::Singular { ratio: 0.0 });
        }
        Ok(())
    }

    fn lumped(&self, r: usize) -> Farads {
        match self.conductors[self.iso[r]].spec.earthing {
            Earthing::Isolated {
                lumped_capacitance, ..
            } => lumped_capacitance,
            Earthing::Grounded => 0.0,
        }
    }

    /// The conductors as meshed, in input order.
    pub fn conductors(&self) -> &[Conductor] {
        &self.conductors
    }
    /// Every panel, conductor after conductor.
    pub fn panels(&self) -> &[Panel] {
        &self.panels
    }
    /// The settings used.
    pub fn settings(&self) -> BemSettings {
        self.settings
    }
    /// The grounded plane, if any [m].
    pub fn ground(&self) -> Option<Meters> {
        self.ground
    }
    /// Panel centroids, where the caller supplies φ_ext, in panel order [m].
    pub fn collocation_points(&self) -> Vec<[Meters; 3]> {
        self.panels.iter().map(|p| p.center).collect()
    }

    /// Induced charge for external potential `external` [V] at the
    /// collocation points, with every isolated conductor carrying its given charge.
    pub fn solve(&self, external: &[Volts]) -> Result<Induced, BemError> {
        self.solve_with_charges(external, &self.given_charges())
    }

    /// The net charge given to each isolated conductor (order of
    /// [`Conductor::isolated`]) [C].
    pub fn given_charges(&self) -> Vec<Coulombs> {
        self.iso
            .iter()
            .map(|&k| match self.conductors[k].spec.earthing {
                Earthing::Isolated { charge, .. } => charge,
                Earthing::Grounded => 0.0,
            })
            .collect()
    }

    /// Each panel's field and potential factors at `x` [m], its image in
    /// the grounded plane included ([E_x, E_y, E_z, V] per unit q̃, as in
    /// [`Induced::at`]): for a point evaluated with many charges (the
    /// planner's pieces), so that each is a dot product.
    pub fn point_factors(&self, x: [Meters; 3]) -> Vec<[f64; 4]> {
        let mirrored = self.ground.map(|zg| [x[0], x[1], 2.0 * zg - x[2]]);
        self.panels
            .iter()
            .map(|p| {
                let f = p.factors(x);
                let mut out = [f.e[0], f.e[1], f.e[2], f.v];
                if let Some(xm) = mirrored {
                    let g = p.factors(xm);
                    out[0] -= g.e[0];
                    out[1] -= g.e[1];
                    out[2] += g.e[2];
                    out[3] -= g.v;
                }
                out
            })
            .collect()
    }

    /// The linear response to `external` alone: every isolated conductor's
    /// net charge 0 (superpose [`Bem::solve`] of a zero potential for the given charges).
    pub fn solve_response(&self, external: &[Volts]) -> Result<Induced, BemError> {
        self.solve_with_charges(external, &vec![0.0; self.iso.len()])
    }

    /// Induced charge for `external` [V] with isolated conductor r (in order of
    /// [`Conductor::isolated`]) carrying net charge `charges[r]` [C].
    pub fn solve_with_charges(
        &self,
        external: &[Volts],
        charges: &[Coulombs],
    ) -> Result<Induced, BemError> {
        let mut out = self.solve_many(&[(external, charges)])?;
        out.pop()
            .ok_or_else(|| BemError::Input("no right-hand side was solved".to_string()))
    }

    /// [`Bem::solve_with_charges`] for many right-hand sides at once: entry c
    /// of `cases` is (φ_ext at the collocation points [V], the isolated
    /// conductors' charges [C]). The right-hand sides are the columns of one
    /// (n + m) × K matrix B and the factorisation P·A = L·U solves
    /// A·X = B with one forward and one back substitution over all K columns
    /// (blocked: the work is matrix products instead of K vector passes), so a
    /// column costs a fraction of a single solve. Each column of X is the
    /// solution of its own system; only the order in which the blocked
    /// products add up differs from a one-column solve (round-off, tested to
    /// 1e-12 relative).
    pub fn solve_many(&self, cases: &[(&[Volts], &[Coulombs])]) -> Result<Vec<Induced>, BemError> {
        let n = self.panels.len();
        let m = self.iso.len();
        for (external, charges) in cases {
            if external.len() != n {
                return Err(BemError::Input(format!(
                    "external potential given at {} points, expected one per collocation point ({n})",
                    external.len()
                )));
            }
            if charges.len() != m {
                return Err(BemError::Input(format!(
                    "{} charges given, expected one per isolated conductor ({m})",
                    charges.len()
                )));
            }
            if let Some(i) = external.iter().chain(*charges).position(|v| !v.is_finite()) {
                return Err(BemError::Input(format!(
                    "external potential or charge number {i} is not finite: give finite values"
                )));
            }
        }
        let mut rhs = Mat::<f64>::from_fn(n + m, cases.len(), |i, c| {
            let (external, charges) = cases[c];
            if i < n {
                -external[i]
            } else {
                charges[i - n] * COULOMB / self.row_scale[i - n]
            }
        });
        self.lu.solve_in_place(rhs.as_mut());
        Ok((0..cases.len())
            .map(|c| {
                let q: Vec<f64> = (0..n).map(|i| rhs[(i, c)]).collect();
                let mut potentials = vec![0.0; self.conductors.len()];
                let mut sums = vec![0.0; self.conductors.len()];
                for (r, &k) in self.iso.iter().enumerate() {
                    potentials[k] = rhs[(n + r, c)];
                }
                for (j, p) in self.panels.iter().enumerate() {
                    sums[self.owner[j]] += q[j] * p.area();
                }
                let charges = sums.iter().map(|s| s / COULOMB).collect();
                Induced {
                    q,
                    potentials,
                    charges,
                }
            })
            .collect())
    }

    /// Maxwell capacitance matrix of the isolated conductors (order of
    /// [`Conductor::isolated`]), surface charges only [F]; empty without isolated conductors.
    pub fn capacitance_matrix(&self) -> &[Vec<Farads>] {
        &self.maxwell
    }

    /// Capacitance to ground of conductor `k` (index into [`Bem::conductors`]),
    /// the other isolated conductors floating, lumped part included [F];
    /// `None` for a grounded conductor or an index out of range.
    pub fn capacitance_to_ground(&self, k: usize) -> Option<Farads> {
        let r = self.conductors.get(k)?.isolated?;
        Some(self.to_ground[r])
    }

    /// The same conductors meshed with another panel size (same grading, plane and limit).
    pub fn with_panel_size(&self, panel_size: Meters) -> Result<Bem, BemError> {
        let settings = BemSettings::new(panel_size)?
            .with_grading(self.settings.grading)?
            .with_max_panels(self.settings.max_panels)?
            .with_min_facets(self.settings.min_facets)?;
        let specs: Vec<ConductorSpec> = self.conductors.iter().map(|c| c.spec.clone()).collect();
        Bem::new(&specs, self.ground, settings)
    }

    /// Accuracy estimate: solves on a mesh of twice the panel size (a
    /// quarter of the panels; half the minimum facets, at least
    /// [`panels::MIN_FACETS`]) with the external potential `external` [V]
    /// (a function of position) and compares with this mesh at `checks` [m]
    /// (points in the air, away from surfaces). See the module header for why
    /// the differences bound this mesh's error.
    pub fn error_estimate(
        &self,
        external: &(dyn Fn([Meters; 3]) -> Volts + Sync),
        checks: &[[Meters; 3]],
    ) -> Result<ErrorEstimate, BemError> {
        let settings = BemSettings::new(2.0 * self.settings.panel_size)?
            .with_grading(self.settings.grading)?
            .with_max_panels(self.settings.max_panels)?
            .with_min_facets((self.settings.min_facets / 2).max(panels::MIN_FACETS))?;
        let specs: Vec<ConductorSpec> = self.conductors.iter().map(|c| c.spec.clone()).collect();
        let coarse = Bem::new(&specs, self.ground, settings)?;
        let fine_sol = self.solve(&eval(external, &self.collocation_points()))?;
        let coarse_sol = coarse.solve(&eval(external, &coarse.collocation_points()))?;
        let capacitance = (0..self.conductors.len())
            .filter_map(|k| {
                let c = self.capacitance_to_ground(k)?;
                let cc = coarse.capacitance_to_ground(k)?;
                Some(((c - cc) / c).abs())
            })
            .collect();
        let q_scale = fine_sol.charges.iter().map(|c| c.abs()).fold(0.0, f64::max);
        let charge = fine_sol
            .charges
            .iter()
            .zip(&coarse_sol.charges)
            .map(|(a, b)| (a - b).abs())
            .collect();
        let potential = fine_sol
            .potentials
            .iter()
            .zip(&coarse_sol.potentials)
            .map(|(a, b)| (a - b).abs())
            .collect();
        let points = checks
            .par_iter()
            .map(|&x| {
                let (e, v) = fine_sol.at(self, x);
                let (ec, vc) = coarse_sol.at(&coarse, x);
                let de = [e[0] - ec[0], e[1] - ec[1], e[2] - ec[2]];
                PointError {
                    at: x,
                    v,
                    e,
                    dv: (v - vc).abs(),
                    de: panels::norm(de),
                }
            })
            .collect();
        Ok(ErrorEstimate {
            panels: self.panels.len(),
            coarse_panels: coarse.panels.len(),
            capacitance,
            charge,
            charge_scale: q_scale,
            potential,
            points,
        })
    }
}

fn eval(f: &(dyn Fn([f64; 3]) -> f64 + Sync), xs: &[[f64; 3]]) -> Vec<f64> {
    xs.par_iter().map(|&x| f(x)).collect()
}

fn check_earthing(spec: &ConductorSpec) -> Result<(), BemError> {
    if let Earthing::Isolated {
        charge,
        lumped_capacitance,
    } = spec.earthing
    {
        if !charge.is_finite() {
            return Err(BemError::Earthing {
                id: spec.id.clone(),
                what: format!("charge {charge} is not a finite number of coulombs"),
            });
        }
        if !lumped_capacitance.is_finite() || !(0.0..=1.0).contains(&lumped_capacitance) {
            return Err(BemError::Earthing {
                id: spec.id.clone(),
                what: format!(
                    "lumped capacitance to ground {lumped_capacitance:e} F is out of range: expected between 0 F and 1 F"
                ),
            });
        }
    }
    Ok(())
}

impl Induced {
    /// Field [V/m] and potential [V] of the induced charge (with its images) at `x` [m].
    /// Add the external field for the total; inside a conductor the total is
    /// E ≈ 0 and V ≈ the conductor's potential. On a panel's edge the field
    /// is infinite (and may come back non-finite): evaluate in the air or
    /// inside. Cost: one closed form per panel (two with the plane), about
    /// 0.12 µs each.
    pub fn at(&self, bem: &Bem, x: [Meters; 3]) -> ([VoltsPerMeter; 3], Volts) {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        let mirrored = bem.ground.map(|zg| [x[0], x[1], 2.0 * zg - x[2]]);
        for (p, &q) in bem.panels.iter().zip(&self.q) {
            let f = p.factors(x);
            v += q * f.v;
            for (ek, fk) in e.iter_mut().zip(f.e) {
                *ek += q * fk;
            }
            if let Some(xm) = mirrored {
                // Image: −M·E(Mx), −V(Mx).
                let g = p.factors(xm);
                v -= q * g.v;
                e[0] -= q * g.e[0];
                e[1] -= q * g.e[1];
                e[2] += q * g.e[2];
            }
        }
        (e, v)
    }

    /// As [`Induced::at`] from the point's panel factors precomputed by
    /// [`Bem::point_factors`]: the same sums, without the closed forms.
    pub fn at_factors(&self, factors: &[[f64; 4]]) -> ([VoltsPerMeter; 3], Volts) {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        for (f, &q) in factors.iter().zip(&self.q) {
            v += q * f[3];
            e[0] += q * f[0];
            e[1] += q * f[1];
            e[2] += q * f[2];
        }
        (e, v)
    }

    /// q̃_j = σ_j/(4πε₀) of every panel [V/m] (in [`Bem::panels`] order).
    pub fn scaled_densities(&self) -> &[f64] {
        &self.q
    }

    /// Surface charge density of every panel [C/m²].
    pub fn densities(&self) -> Vec<f64> {
        self.q.iter().map(|q| q / COULOMB).collect()
    }

    /// Potential of conductor `k` (0 if grounded) [V].
    pub fn potential(&self, k: usize) -> Volts {
        self.potentials.get(k).copied().unwrap_or(0.0)
    }

    /// Net charge on conductor `k`'s surface [C] (without the lumped capacitance's share).
    pub fn net_charge(&self, k: usize) -> Coulombs {
        self.charges.get(k).copied().unwrap_or(0.0)
    }

    /// Energy ½·C·V² [J] a spark from isolated conductor `k` to ground can
    /// release, C its [`Bem::capacitance_to_ground`] and V its potential;
    /// `None` for a grounded conductor.
    pub fn spark_energy(&self, bem: &Bem, k: usize) -> Option<Joules> {
        let c = bem.capacitance_to_ground(k)?;
        let v = self.potential(k);
        Some(0.5 * c * v * v)
    }
}

/// Differences between this mesh and one of twice the panel size.
#[derive(Debug, Clone, PartialEq)]
pub struct ErrorEstimate {
    /// Panels of this mesh.
    pub panels: usize,
    /// Panels of the coarse mesh.
    pub coarse_panels: usize,
    /// Per isolated conductor (in conductor order): |ΔC|/C of the capacitance to ground [1].
    pub capacitance: Vec<f64>,
    /// Per conductor: |ΔQ| of the net surface charge [C].
    pub charge: Vec<Coulombs>,
    /// The largest |Q| of any conductor on this mesh [C] (a scale for `charge`).
    pub charge_scale: Coulombs,
    /// Per conductor: |ΔV| of its potential [V].
    pub potential: Vec<Volts>,
    /// At each check point.
    pub points: Vec<PointError>,
}

/// Induced field at one check point, and its difference between the meshes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointError {
    /// The point [m].
    pub at: [Meters; 3],
    /// Induced potential on this mesh [V].
    pub v: Volts,
    /// Induced field on this mesh [V/m].
    pub e: [VoltsPerMeter; 3],
    /// |ΔV| [V].
    pub dv: Volts,
    /// |ΔE| [V/m].
    pub de: VoltsPerMeter,
}

impl ErrorEstimate {
    /// The largest |ΔV| over the check points relative to `v_scale` [V]
    /// (e.g. the largest total potential there), and likewise |ΔE| relative to `e_scale` [V/m].
    pub fn worst_relative(&self, v_scale: Volts, e_scale: VoltsPerMeter) -> (f64, f64) {
        let dv = self.points.iter().map(|p| p.dv).fold(0.0, f64::max);
        let de = self.points.iter().map(|p| p.de).fold(0.0, f64::max);
        (dv / v_scale, de / e_scale)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::EPS0;
    use std::f64::consts::PI;

    fn cube(id: &str, min: [f64; 3], side: f64, earthing: Earthing) -> ConductorSpec {
        ConductorSpec {
            id: id.into(),
            shape: Shape::Cuboid {
                min,
                max: [min[0] + side, min[1] + side, min[2] + side],
            },
            earthing,
        }
    }

    #[test]
    fn self_term_is_the_closed_form_at_the_centre() {
        // Potential at the centre of a uniform 2a × 2b rectangle, times 4πε₀/σ:
        // 4[a·asinh(b/a) + b·asinh(a/b)] (elementary: ∫∫ dx dy/√(x² + y²) over each of
        // the four a × b quarters, in polar coordinates; derived here, not quoted).
        for (a, b) in [(0.5, 0.5), (0.01, 0.3), (2.0, 1e-3)] {
            let p = Panel {
                center: [0.3, -0.2, 1.0],
                eu: [1.0, 0.0, 0.0],
                ev: [0.0, 1.0, 0.0],
                en: [0.0, 0.0, 1.0],
                half_u: a,
                half_v: b,
            };
            let want = 4.0 * (a * (b / a).asinh() + b * (a / b).asinh());
            let got = p.potential_factor(p.center);
            assert!(got.is_finite());
            assert!(
                (got - want).abs() < 1e-13 * want,
                "{a},{b}: {got} vs {want}"
            );
        }
    }

    #[test]
    fn settings_and_inputs_are_checked() {
        assert!(BemSettings::new(-1.0).is_err());
        assert!(BemSettings::new(f64::NAN).is_err());
        assert!(BemSettings::new(0.1).unwrap().with_max_panels(0).is_err());
        let s = BemSettings::new(0.5).unwrap();
        assert_eq!(Bem::new(&[], None, s).unwrap_err(), BemError::Empty);
        let c = cube("a", [0.0; 3], 1.0, Earthing::Grounded);
        let e = Bem::new(&[c.clone(), c.clone()], None, s).unwrap_err();
        assert_eq!(e, BemError::DuplicateId("a".into()));
        let e = Bem::new(std::slice::from_ref(&c), Some(0.0), s).unwrap_err();
        assert!(matches!(e, BemError::BelowGround { .. }), "{e}");
        let bad = ConductorSpec {
            earthing: Earthing::Isolated {
                charge: 0.0,
                lumped_capacitance: -1e-12,
            },
            ..c.clone()
        };
        let e = Bem::new(&[bad], None, s).unwrap_err().to_string();
        assert!(
            e.contains("lumped capacitance") && e.contains("expected"),
            "{e}"
        );
        let tight = BemSettings::new(0.01)
            .unwrap()
            .with_max_panels(100)
            .unwrap();
        let e = Bem::new(std::slice::from_ref(&c), None, tight).unwrap_err();
        assert!(matches!(e, BemError::TooManyPanels { .. }), "{e}");
        let bem = Bem::new(&[c], None, s).unwrap();
        assert!(bem.solve(&[1.0]).is_err());
        let mut ext = vec![0.0; bem.panels().len()];
        ext[0] = f64::NAN;
        assert!(bem.solve(&ext).is_err());
    }

    #[test]
    fn many_right_hand_sides_agree_with_one_solve_each() {
        // A grounded and an isolated cube over a plane; 40 external
        // potentials (the field of a point charge at 40 places, so that each
        // column differs) with varied charges: the blocked multi-column solve
        // gives every column's densities, potentials and charges within
        // 1e-12 relative of solving that column alone (same system, other
        // summation order).
        let specs = [
            cube("g", [0.0, 0.0, 0.3], 0.2, Earthing::Grounded),
            cube(
                "i",
                [0.5, 0.0, 0.3],
                0.2,
                Earthing::Isolated {
                    charge: 0.0,
                    lumped_capacitance: 10e-12,
                },
            ),
        ];
        let bem = Bem::new(&specs, Some(0.0), BemSettings::new(0.04).unwrap()).unwrap();
        let pts = bem.collocation_points();
        let externals: Vec<Vec<f64>> = (0..40)
            .map(|c| {
                let src = [0.02 * c as f64 - 0.1, 0.1, 0.8];
                pts.iter()
                    .map(|x| {
                        let r = ((x[0] - src[0]).powi(2)
                            + (x[1] - src[1]).powi(2)
                            + (x[2] - src[2]).powi(2))
                        .sqrt();
                        1.0 / r
                    })
                    .collect()
            })
            .collect();
        let charges: Vec<Vec<f64>> = (0..40).map(|c| vec![(c as f64 - 20.0) * 1e-12]).collect();
        let cases: Vec<(&[f64], &[f64])> = externals
            .iter()
            .zip(&charges)
            .map(|(e, q)| (e.as_slice(), q.as_slice()))
            .collect();
        let many = bem.solve_many(&cases).unwrap();
        assert_eq!(many.len(), 40);
        let close = |a: f64, b: f64, scale: f64| (a - b).abs() <= 1e-12 * scale;
        for (c, m) in many.iter().enumerate() {
            let one = bem.solve_with_charges(&externals[c], &charges[c]).unwrap();
            let scale = one.q.iter().fold(0.0_f64, |a, q| a.max(q.abs()));
            for (a, b) in m.q.iter().zip(&one.q) {
                assert!(close(*a, *b, scale), "column {c}: {a} vs {b}");
            }
            for k in 0..2 {
                assert!(close(
                    m.potential(k),
                    one.potential(k),
                    one.potential(k).abs().max(1e-30)
                ));
                let qs = one.net_charge(0).abs().max(one.net_charge(1).abs());
                assert!(close(m.net_charge(k), one.net_charge(k), qs));
            }
        }
    }

    #[test]
    fn isolated_charged_cube_has_uniform_potential_and_its_charge() {
        // Charge 1 nC on a 0.2 m cube: the surface charge is what was given, and
        // V = Q/C with C within 2 % of 0.66068·4πε₀·a (published value, see tests/bem.rs).
        let q = 1e-9;
        let a = 0.2;
        let spec = cube(
            "c",
            [0.0; 3],
            a,
            Earthing::Isolated {
                charge: q,
                lumped_capacitance: 0.0,
            },
        );
        let bem = Bem::new(&[spec], None, BemSettings::new(a / 6.0).unwrap()).unwrap();
        let sol = bem.solve(&vec![0.0; bem.panels().len()]).unwrap();
        assert!((sol.net_charge(0) - q).abs() < 1e-12 * q);
        let c = q / sol.potential(0);
        let want = 0.660_68 * 4.0 * PI * EPS0 * a;
        assert!((c - want).abs() < 0.02 * want, "{c} vs {want}");
        assert!((bem.capacitance_matrix()[0][0] - c).abs() < 1e-9 * c);
        // Potential at the centre equals the conductor's potential.
        let (_, v) = sol.at(&bem, [a / 2.0; 3]);
        assert!((v - sol.potential(0)).abs() < 1e-3 * v.abs());
        let w = sol.spark_energy(&bem, 0).unwrap();
        assert!((w - 0.5 * q * q / c).abs() < 1e-9 * w);
    }

    #[test]
    fn lumped_capacitance_adds_in_parallel() {
        // With C_l in parallel the potential is Q/(C + C_l) (circuit law).
        let a = 0.3;
        let cl = 100e-12;
        let mk = |cl| {
            let spec = cube(
                "p",
                [0.0; 3],
                a,
                Earthing::Isolated {
                    charge: 1e-8,
                    lumped_capacitance: cl,
                },
            );
            Bem::new(&[spec], None, BemSettings::new(a / 4.0).unwrap()).unwrap()
        };
        let (b0, b1) = (mk(0.0), mk(cl));
        let c0 = b0.capacitance_to_ground(0).unwrap();
        let c1 = b1.capacitance_to_ground(0).unwrap();
        assert!((c1 - (c0 + cl)).abs() < 1e-9 * c1);
        assert!((b1.capacitance_matrix()[0][0] - c0).abs() < 1e-9 * c0);
        let s = b1.solve(&vec![0.0; b1.panels().len()]).unwrap();
        assert!((s.potential(0) - 1e-8 / (c0 + cl)).abs() < 1e-9 * s.potential(0));
        assert!((s.net_charge(0) + cl * s.potential(0) - 1e-8).abs() < 1e-12 * 1e-8);
    }
}
