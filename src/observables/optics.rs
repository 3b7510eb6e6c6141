//! Magneto-optical transitions from the velocity operator's matrix elements.
//!
//! # Velocity operator
//! v = (i/hbar)[H, r] = (1/hbar) dH/dk. With the Peierls substitution the kinetic wave numbers
//! obey [kx, x] = -i, [ky, x] = 0, so the commutator acts as a derivation on every factor of a
//! Weyl-ordered word, and averaging over the words gives
//! d/dkx Weyl(kx^p ky^q) = p Weyl(kx^(p-1) ky^q) (and likewise for ky). [`velocity_model`]
//! differentiates each term this way into a derived [`Model`] with the same components, whose
//! operator is hbar v (energy x length: meV nm for lab models), and assembles it with
//! [`LadderHamiltonian::assemble`]. Terms linear in B or in kz keep those factors. Matrix
//! elements are converted to velocities at the edge: m/s for lab models
//! (v = (hbar v)[meV nm] / (hbar x 1 m/s)[meV nm]), units of c for natural-unit models.
//!
//! # Transitions and polarisations
//! Light with time factor e^{-i omega t} and polarisation vector e couples through e . v; the
//! absorption from level i to level f (E_f > E_i) is proportional to |<f| e . v |i>|^2 times the
//! occupation difference o_i - o_f ([`super::filling::Occupation`]). Reported per transition:
//! linear x and y, and circular e_± = (x ± i y)/sqrt 2, i.e. (v_x ± i v_y)/sqrt 2 (sigma+ and
//! sigma-; B along +z). Selection rules are not imposed: a transition is listed when its
//! weighted strength exceeds a fraction of the largest one, so the rules come out of the matrix
//! elements.
//!
//! The oscillator strength 2 m_e |<f|v_x|i>|^2 / (E_f - E_i) (free-electron mass m_e; the
//! reference particle's mass in natural units) obeys the Thomas-Reiche-Kuhn f-sum rule
//! sum_f f_fi = m_e/m* for a parabolic band of mass m* (sum over all f, with the sign of
//! E_f - E_i).
//!
//! Only models in the direct form are supported (the squared Klein-Gordon operator is not a
//! Hamiltonian whose k-derivative is a velocity).

use super::filling::{fermi_level, FermiSettings, FermiSolution, Occupation};
use super::labels::{track_keys, TrackKey};
use crate::error::{Error, Result};
use crate::hamiltonian::{FieldPoint, LadderHamiltonian};
use crate::ladder::ladder_element;
use crate::levels::{LandauLabel, LevelVector, Spectrum};
use crate::model::{Model, Monomial, SpectrumForm};
use crate::solve::{Settings, Vectors};
use crate::units::{hbar_v_mev_nm, Units, ELECTRON_MASS, MEV};
use num_complex::Complex64;
use serde::Serialize;
use std::collections::HashMap;

/// A direction in the plane.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Direction {
    /// Along x.
    X,
    /// Along y.
    Y,
}

/// The derived model hbar v_dir = dH/dk_dir (see the module docs), or `None` when no term
/// depends on k_dir (the velocity vanishes).
///
/// # Errors
/// [`Error::Unsupported`] for a Klein-Gordon-form model; [`Error::InvalidModel`] /
/// [`Error::NotHermitian`] cannot occur for a valid model (the derivative of a Hermitian sum
/// with real factors p is Hermitian) but are passed on.
///
/// # Examples
/// ```
/// use ladderfan::{models, Monomial};
/// use ladderfan::observables::optics::{velocity_model, Direction};
/// let m = models::schrodinger(models::MassParams::default())?;
/// let vx = velocity_model(&m, Direction::X)?.expect("kx terms");
/// // d/dkx (c kx^2) = 2 c kx, c = hbar^2/2m_e = 38.0998 meV nm^2 (CODATA 2018)
/// assert_eq!(vx.terms()[0].monomial, Monomial::KX);
/// assert!((vx.terms()[0].coefficient.re - 2.0 * 38.099_821).abs() < 1e-4);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn velocity_model(model: &Model, direction: Direction) -> Result<Option<Model>> {
    if let SpectrumForm::KleinGordon { .. } = model.form() {
        return Err(Error::Unsupported(format!(
            "model '{}' is in the squared Klein-Gordon form, whose k-derivative is not a velocity; \
             optics needs a model in the direct (Hamiltonian) form such as the 3+1 Dirac model",
            model.name()
        )));
    }
    let names: Vec<&str> = model.component_names().iter().map(|s| s.as_str()).collect();
    let tag = match direction {
        Direction::X => "x",
        Direction::Y => "y",
    };
    let mut b = Model::builder(&format!("{} hbar v_{tag}", model.name()), model.dim())
        .charge(model.charge())
        .units(model.units())
        .degeneracy(model.degeneracy())
        .component_names(&names);
    let mut any = false;
    for t in model.terms() {
        let m = t.monomial;
        let (p, mono) = match direction {
            Direction::X if m.kx > 0 => (m.kx, Monomial { kx: m.kx - 1, ..m }),
            Direction::Y if m.ky > 0 => (m.ky, Monomial { ky: m.ky - 1, ..m }),
            _ => continue,
        };
        any = true;
        b = b.term_complex(
            &format!("d/dk{tag} ({})", t.label),
            t.coefficient * p as f64,
            t.matrix.clone(),
            mono,
        );
    }
    if any {
        b.build().map(Some)
    } else {
        Ok(None)
    }
}

/// Matrix element of the velocity between two levels, in m/s (lab) or units of c (natural).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VelocityElement {
    /// <f| v_x |i>.
    pub x: Complex64,
    /// <f| v_y |i>.
    pub y: Complex64,
}

impl VelocityElement {
    /// <f| (v_x + i v_y)/sqrt 2 |i>: sigma+.
    pub fn plus(&self) -> Complex64 {
        (self.x + Complex64::i() * self.y) * std::f64::consts::FRAC_1_SQRT_2
    }
    /// <f| (v_x - i v_y)/sqrt 2 |i>: sigma-.
    pub fn minus(&self) -> Complex64 {
        (self.x - Complex64::i() * self.y) * std::f64::consts::FRAC_1_SQRT_2
    }
}

/// The velocity operator assembled at one field point.
#[derive(Debug, Clone)]
pub struct VelocityOperator {
    x: Option<LadderHamiltonian>,
    y: Option<LadderHamiltonian>,
    /// Factor from the assembled hbar v (energy x length) to the reported velocity.
    to_velocity: f64,
    units: Units,
}

/// A velocity applied to one level vector: (n, alpha) -> amplitude, for x and y, in the
/// reported velocity unit. Includes components beyond the cutoff.
#[derive(Debug, Clone, Default)]
pub struct AppliedVelocity {
    x: HashMap<(usize, usize), Complex64>,
    y: HashMap<(usize, usize), Complex64>,
}

impl AppliedVelocity {
    /// <f| v |i> for the level vector f.
    pub fn project(&self, f: &LevelVector) -> VelocityElement {
        let dot = |map: &HashMap<(usize, usize), Complex64>| {
            f.states
                .iter()
                .zip(&f.coeffs)
                .filter_map(|(s, c)| map.get(s).map(|z| c.conj() * z))
                .sum::<Complex64>()
        };
        VelocityElement {
            x: dot(&self.x),
            y: dot(&self.y),
        }
    }

    /// (<i|v_x^2|i>, <i|v_y^2|i>) = squared norms of v_x|i>, v_y|i> in the untruncated space.
    pub fn norms_squared(&self) -> (f64, f64) {
        let n = |map: &HashMap<(usize, usize), Complex64>| map.values().map(|z| z.norm_sqr()).sum();
        (n(&self.x), n(&self.y))
    }
}

fn apply(h: &LadderHamiltonian, v: &LevelVector, scale: f64) -> HashMap<(usize, usize), Complex64> {
    let mut out: HashMap<(usize, usize), Complex64> = HashMap::new();
    for (&(n, beta), &c) in v.states.iter().zip(&v.coeffs) {
        for op in &h.ops {
            let f = ladder_element(op.j, op.k, n);
            if f == 0.0 {
                continue;
            }
            let m = (n as i64 + op.shift()) as usize;
            for alpha in 0..h.dim {
                let a = op.matrix[(alpha, beta)];
                if a.re == 0.0 && a.im == 0.0 {
                    continue;
                }
                *out.entry((m, alpha)).or_default() += a * (f * scale) * c;
            }
        }
    }
    out
}

impl VelocityOperator {
    /// Assemble v_x and v_y of `model` at `point`.
    ///
    /// # Errors
    /// As [`velocity_model`] and [`LadderHamiltonian::assemble`].
    pub fn new(model: &Model, point: FieldPoint) -> Result<Self> {
        let build = |d| -> Result<Option<LadderHamiltonian>> {
            match velocity_model(model, d)? {
                Some(vm) => Ok(Some(LadderHamiltonian::assemble(&vm, point, 0.0)?)),
                None => Ok(None),
            }
        };
        let to_velocity = match model.units() {
            Units::Lab => 1.0 / hbar_v_mev_nm(1.0),
            Units::Natural => 1.0,
        };
        Ok(VelocityOperator {
            x: build(Direction::X)?,
            y: build(Direction::Y)?,
            to_velocity,
            units: model.units(),
        })
    }

    /// Name of the velocity unit: `m/s` (lab) or `c` (natural).
    pub fn unit(&self) -> &'static str {
        match self.units {
            Units::Lab => "m/s",
            Units::Natural => "c",
        }
    }

    /// v_x |i> and v_y |i>.
    ///
    /// # Complexity
    /// O(s x ops x d) for a vector on s states.
    pub fn apply(&self, i: &LevelVector) -> AppliedVelocity {
        AppliedVelocity {
            x: self
                .x
                .as_ref()
                .map(|h| apply(h, i, self.to_velocity))
                .unwrap_or_default(),
            y: self
                .y
                .as_ref()
                .map(|h| apply(h, i, self.to_velocity))
                .unwrap_or_default(),
        }
    }

    /// <f| v |i>.
    pub fn element(&self, f: &LevelVector, i: &LevelVector) -> VelocityElement {
        self.apply(i).project(f)
    }
}

/// Dominant circular polarisation of a transition.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Polarisation {
    /// Only sigma+ (the sigma- strength is below 1e-6 of it).
    SigmaPlus,
    /// Only sigma-.
    SigmaMinus,
    /// Both circular components (elliptic or linear).
    Mixed,
}

/// What to list.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OpticsSettings {
    /// Largest transition energy listed (model energy unit), or `None` for all.
    pub max_energy: Option<f64>,
    /// A transition is listed when its weighted strength (|v_x|^2 + |v_y|^2)(o_i - o_f) is
    /// above this fraction of the largest one (default 1e-8: forbidden transitions have
    /// matrix elements at the rounding level, ~1e-30 relative).
    pub min_relative_strength: f64,
}

impl Default for OpticsSettings {
    fn default() -> Self {
        OpticsSettings {
            max_energy: None,
            min_relative_strength: 1e-8,
        }
    }
}

/// One allowed transition i -> f, E_f > E_i.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Transition {
    /// Index of the initial level in the spectrum.
    pub from: usize,
    /// Index of the final level.
    pub to: usize,
    /// Identity of the initial level (its quantum numbers; see
    /// [`crate::observables::labels::TrackKey`]).
    pub from_key: TrackKey,
    /// Identity of the final level.
    pub to_key: TrackKey,
    /// Landau label of the initial level (n and branch as the trade writes them).
    pub from_label: LandauLabel,
    /// Landau label of the final level.
    pub to_label: LandauLabel,
    /// Dominant orbital of the initial level.
    pub from_orbital: usize,
    /// Dominant orbital of the final level.
    pub to_orbital: usize,
    /// Initial level energy.
    pub from_energy: f64,
    /// Final level energy.
    pub to_energy: f64,
    /// Transition energy E_f - E_i (model energy unit).
    pub energy: f64,
    /// Occupation difference o_i - o_f.
    pub occupation_difference: f64,
    /// Velocity matrix element <f|v|i> (m/s or c).
    pub velocity: VelocityElement,
    /// |<f|v_x|i>|^2 (o_i - o_f), velocity unit squared.
    pub strength_x: f64,
    /// |<f|v_y|i>|^2 (o_i - o_f).
    pub strength_y: f64,
    /// |<f|(v_x + i v_y)/sqrt2|i>|^2 (o_i - o_f): sigma+.
    pub strength_plus: f64,
    /// |<f|(v_x - i v_y)/sqrt2|i>|^2 (o_i - o_f): sigma-.
    pub strength_minus: f64,
    /// (strength_x + strength_y) relative to the largest transition of the list (0..1).
    pub relative_strength: f64,
    /// Oscillator strength 2 m_e |<f|v_x|i>|^2 / (E_f - E_i), without occupations.
    pub oscillator_strength_x: f64,
    /// Dominant circular polarisation.
    pub polarisation: Polarisation,
}

/// 2 m |v|^2 / dE, dimensionless, in the model's units.
fn oscillator(units: Units, v2: f64, de: f64) -> f64 {
    match units {
        Units::Lab => 2.0 * ELECTRON_MASS * v2 / (de * MEV),
        Units::Natural => 2.0 * v2 / de,
    }
}

/// The allowed transitions between converged levels of `spectrum` (computed with eigenvectors),
/// weighted with the occupations of `occupation`, strongest first within ascending energy.
///
/// # Errors
/// [`Error::Unsupported`] when the spectrum has no eigenvectors or the model is in
/// Klein-Gordon form; errors of [`VelocityOperator::new`].
///
/// # Complexity
/// O(L s ops d) to apply v to L converged levels of sector size s, plus one O(s) projection per
/// pair of levels sharing a state with v|i>: O(L d^2) pairs for exactly conserved J (linear in
/// the cutoff), O(L^2) when sectors are large (J mod m or no symmetry).
pub fn transitions(
    model: &Model,
    spectrum: &Spectrum,
    occupation: &Occupation,
    settings: &OpticsSettings,
) -> Result<Vec<Transition>> {
    let vecs = spectrum.vectors.as_deref().ok_or_else(|| {
        Error::Unsupported(
            "transitions need eigenvectors: compute the spectrum with Settings.vectors = \
             Vectors::Compute"
                .into(),
        )
    })?;
    let vop = VelocityOperator::new(model, spectrum.point)?;
    let keys = track_keys(spectrum);
    let conv: Vec<usize> = (0..spectrum.levels.len())
        .filter(|&i| spectrum.levels[i].is_converged())
        .collect();
    let occ: Vec<f64> = conv
        .iter()
        .map(|&i| occupation.of_level(spectrum.levels[i].energy))
        .collect();
    let by_state = index_by_state(&conv, vecs);
    let mut candidates: Vec<usize> = Vec::new();
    let mut out = Vec::new();
    for (a, &i) in conv.iter().enumerate() {
        let applied = vop.apply(&vecs[i]);
        let ei = spectrum.levels[i].energy;
        reached_levels(&applied, &by_state, &mut candidates);
        for &b in &candidates {
            let f = conv[b];
            let ef = spectrum.levels[f].energy;
            let de = ef - ei;
            if de <= 0.0 || settings.max_energy.is_some_and(|m| de > m) {
                continue;
            }
            let dw = occ[a] - occ[b];
            if dw <= 0.0 {
                continue;
            }
            let v = applied.project(&vecs[f]);
            out.push(transition(spectrum, &keys, (i, f), v, de, dw));
        }
    }
    keep_relative_strength(&mut out, settings.min_relative_strength);
    Ok(out)
}

/// `<f|v|i>` vanishes unless f has weight on a state that `v|i>` reaches: index the converged
/// levels (positions in `conv`) by the states of their vectors, so each i meets only the levels
/// sharing a state with `v|i>` (O(L) pairs for exactly conserved J, where sectors hold <= d
/// states).
fn index_by_state(conv: &[usize], vecs: &[LevelVector]) -> HashMap<(usize, usize), Vec<usize>> {
    let mut by_state: HashMap<(usize, usize), Vec<usize>> = HashMap::new();
    for (b, &f) in conv.iter().enumerate() {
        for &st in &vecs[f].states {
            by_state.entry(st).or_default().push(b);
        }
    }
    by_state
}

/// The converged levels (positions in `conv`) sharing a state with `v|i>`, into `candidates`.
fn reached_levels(
    applied: &AppliedVelocity,
    by_state: &HashMap<(usize, usize), Vec<usize>>,
    candidates: &mut Vec<usize>,
) {
    candidates.clear();
    for st in applied.x.keys().chain(applied.y.keys()) {
        if let Some(bs) = by_state.get(st) {
            candidates.extend_from_slice(bs);
        }
    }
    // ascending, as in a scan of every pair (the order of equal entries in the result)
    candidates.sort_unstable();
    candidates.dedup();
}

/// The transition i -> f with velocity element `v`, energy `de` and occupation difference `dw`
/// (strengths `|v|^2 dw`; relative strength filled in later).
fn transition(
    spectrum: &Spectrum,
    keys: &[TrackKey],
    (i, f): (usize, usize),
    v: VelocityElement,
    de: f64,
    dw: f64,
) -> Transition {
    let (sx, sy) = (v.x.norm_sqr() * dw, v.y.norm_sqr() * dw);
    let (sp, sm) = (v.plus().norm_sqr() * dw, v.minus().norm_sqr() * dw);
    let lf = &spectrum.levels[f];
    let li = &spectrum.levels[i];
    Transition {
        from: i,
        to: f,
        from_key: keys[i],
        to_key: keys[f],
        from_label: li.label,
        to_label: lf.label,
        from_orbital: li.orbital,
        to_orbital: lf.orbital,
        from_energy: li.energy,
        to_energy: lf.energy,
        energy: de,
        occupation_difference: dw,
        velocity: v,
        strength_x: sx,
        strength_y: sy,
        strength_plus: sp,
        strength_minus: sm,
        relative_strength: 0.0,
        oscillator_strength_x: oscillator(spectrum.units, v.x.norm_sqr(), de),
        polarisation: if sm <= 1e-6 * sp {
            Polarisation::SigmaPlus
        } else if sp <= 1e-6 * sm {
            Polarisation::SigmaMinus
        } else {
            Polarisation::Mixed
        },
    }
}

/// Drop transitions weaker than `min_relative` times the strongest (`strength_x + strength_y`),
/// fill in the relative strengths, sort by energy, then strongest first.
fn keep_relative_strength(out: &mut Vec<Transition>, min_relative: f64) {
    let max = out
        .iter()
        .map(|t| t.strength_x + t.strength_y)
        .fold(0.0, f64::max);
    out.retain(|t| t.strength_x + t.strength_y > min_relative * max);
    for t in out.iter_mut() {
        t.relative_strength = (t.strength_x + t.strength_y) / max;
    }
    out.sort_by(|p, q| {
        p.energy
            .total_cmp(&q.energy)
            .then(q.relative_strength.total_cmp(&p.relative_strength))
    });
}

/// Transitions at one field of a sweep.
#[derive(Debug, Clone)]
pub struct TransitionPoint {
    /// Field.
    pub field: f64,
    /// Fermi level and filling at this field.
    pub fermi: FermiSolution,
    /// The allowed transitions.
    pub transitions: Vec<Transition>,
}

/// The transition-energy fan: at each point, the Fermi level for the fixed carrier density and
/// the allowed transitions (eigenvectors are computed whatever `settings.vectors` says).
/// Transitions of different points with the same (from_key, to_key) are one line of the fan.
///
/// # Errors
/// As [`crate::Spectrum::compute`], [`fermi_level`] and [`transitions`] at any point.
pub fn transition_sweep(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    fermi: &FermiSettings,
    optics: &OpticsSettings,
) -> Result<Vec<TransitionPoint>> {
    transition_sweep_with(model, points, settings, fermi, optics, &|| ())
}

/// [`transition_sweep`], calling `tick` once per finished point (from any worker thread; a
/// front end draws its progress from it).
///
/// # Errors
/// As [`transition_sweep`].
pub fn transition_sweep_with(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    fermi: &FermiSettings,
    optics: &OpticsSettings,
    tick: &(dyn Fn() + Sync),
) -> Result<Vec<TransitionPoint>> {
    let mut out = Vec::with_capacity(points.len());
    transition_stream(model, points, settings, fermi, optics, tick, &mut |_, p| {
        out.push(p);
        Ok(())
    })?;
    Ok(out)
}

/// [`transition_sweep_with`] streamed: each point's [`TransitionPoint`] is handed to `sink`
/// in point order as soon as it and every point before it are done
/// ([`crate::sweep::stream_map`], batches of [`crate::sweep::default_batch`] points). A point's
/// spectrum and eigenvectors are dropped as soon as its transitions are found, so at most
/// one spectrum per worker thread and two batches of points' transitions are alive, whatever the
/// number of points. The sink sees exactly the points [`transition_sweep`] returns.
///
/// # Errors
/// The first error in point order, of a solve, a Fermi level or `sink`.
///
/// # Complexity
/// One solve with eigenvectors and one velocity-matrix pass per point, in parallel.
pub fn transition_stream(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    fermi: &FermiSettings,
    optics: &OpticsSettings,
    tick: &(dyn Fn() + Sync),
    sink: &mut (dyn FnMut(usize, TransitionPoint) -> Result<()> + Send),
) -> Result<crate::sweep::StreamStats> {
    let s = with_vectors(settings);
    let compute = |i: usize| {
        let r = transition_point(model, points[i], &s, fermi, optics);
        tick();
        r
    };
    crate::sweep::stream_map(points.len(), 0, None, &compute, sink)
}

/// `settings` with eigenvectors on (the velocity matrix elements need them).
fn with_vectors(settings: &Settings) -> Settings {
    let mut s = settings.clone();
    s.vectors = Vectors::Compute;
    s
}

/// One point of the transition fan: solve, Fermi level, transitions; the spectrum is dropped.
fn transition_point(
    model: &Model,
    p: FieldPoint,
    s: &Settings,
    fermi: &FermiSettings,
    optics: &OpticsSettings,
) -> Result<TransitionPoint> {
    let spec = Spectrum::compute(model, p, s)?;
    let sol = fermi_level(model, &spec, fermi)?;
    let tr = transitions(model, &spec, &sol.occupation, optics)?;
    Ok(TransitionPoint {
        field: p.field,
        fermi: sol,
        transitions: tr,
    })
}
