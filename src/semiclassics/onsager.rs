//! Semiclassical Landau levels by Onsager quantisation with the Berry phase.
//!
//! # Formula
//! A(E_n) l_B^2 = 2 pi (n + 1/2 - gamma(E_n) / 2 pi),  n = 0, 1, 2, ...
//! (Onsager, Phil. Mag. 43, 1006 (1952); the Berry-phase term: Mikitik & Sharlai, PRL 82, 2147
//! (1999); from memory), with A the area of the orbit in k space, l_B^2 = hbar / |qB| and gamma
//! the Berry phase along the orbit in the sense the carrier runs it. From hbar dk/dt = q v x B
//! with B along z, an orbit whose area grows with energy (electron-like, v pointing out) runs
//! counter-clockwise when qB < 0; so gamma = s phi_B with s = -sign(q B dA/dE) and phi_B the
//! counter-clockwise Wilson-loop phase ([`super::berry`]).
//!
//! gamma is known modulo 2 pi, which only relabels n; it is made continuous in E starting from
//! its representative in [-pi/2, 3 pi/2) at the band edge. Field-linear (Zeeman-like) terms of
//! the model are in the bands at the field of the levels ([`Bands::new`]): the first Zeeman
//! correction. The orbital moment of the Bloch states (the other O(B) correction) is in the
//! bands only when they are built with [`Bands::with_orbital_moment`]; without it a gapped
//! model's levels carry an O(level spacing x gap / E) error.
//!
//! # Method
//! g(E) = A l_B^2 / (2 pi) + gamma / (2 pi) - 1/2 is sampled from the band edge outward on a grid
//! fine enough to separate consecutive integers; each E_n then solves g(E) = n by bracketed regula
//! falsi. A level whose g is within 1e-3 of an integer already at the band edge (the
//! massless Dirac n = 0 level) is placed at the edge. The number of rays is fixed once, by
//! refining the orbit at the highest level ([`super::orbit::orbit`]).

use super::bands::Bands;
use super::berry::wilson_loop;
use super::contour::{contours, Search};
use super::orbit::{orbit, Resolution};
use crate::error::{Error, Result};
use crate::numeric::root::{illinois, Stop};
use crate::units::Units;
use std::f64::consts::PI;

/// The band edge at the search centre and the direction in which the band leaves it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Edge {
    /// E_b at the centre.
    pub energy: f64,
    /// +1 when the band rises away from the centre (electron-like orbits), -1 when it falls.
    pub direction: f64,
}

/// The band edge of `s.band` at `s.center`.
///
/// # Errors
/// [`Error::Numerical`] when the band is flat around the centre or rises in some directions and
/// falls in others (a saddle: no closed orbits around it).
pub fn band_edge(bands: &Bands, s: &Search) -> Result<Edge> {
    let e0 = bands.energy(s.band, s.center.0, s.center.1)?;
    let r = 1e-3 * s.k_max;
    let mut signs = Vec::new();
    for j in 0..8 {
        let t = 2.0 * PI * j as f64 / 8.0;
        let e = bands.energy(s.band, s.center.0 + r * t.cos(), s.center.1 + r * t.sin())?;
        signs.push((e - e0).signum() * f64::from(e != e0));
    }
    let up = signs.iter().all(|&x| x > 0.0);
    let down = signs.iter().all(|&x| x < 0.0);
    if !(up || down) {
        return Err(Error::Numerical {
            stage: "band edge".into(),
            detail: format!(
                "band {} is not an extremum at ({}, {}) (it rises in some directions and falls or \
                 stays flat in others); centre the search on a band minimum or maximum",
                s.band, s.center.0, s.center.1
            ),
        });
    }
    Ok(Edge {
        energy: e0,
        direction: if up { 1.0 } else { -1.0 },
    })
}

/// One semiclassical level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SemiLevel {
    /// Onsager index n.
    pub n: usize,
    /// Energy E_n.
    pub energy: f64,
    /// Orbit area A(E_n), 1/length^2 (0 for a level at the band edge).
    pub area: f64,
    /// Berry phase along the orbit, gamma(E_n), continuous in E.
    pub berry_phase: f64,
    /// Whether the level sits at the band edge (g was an integer there).
    pub at_edge: bool,
}

/// Semiclassical levels of one band at one field.
#[derive(Debug, Clone, PartialEq)]
pub struct SemiSpectrum {
    /// The band edge.
    pub edge: Edge,
    /// Magnetic length used.
    pub magnetic_length: f64,
    /// Orientation s = -sign(q B dA/dE) of the orbit (+1 counter-clockwise).
    pub orientation: f64,
    /// Rays per contour used.
    pub rays: usize,
    /// The levels, n ascending.
    pub levels: Vec<SemiLevel>,
}

/// What the quantisation needs besides the bands.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Quantisation {
    /// Unit system of the model.
    pub units: Units,
    /// Carrier charge, units of e, signed.
    pub charge: f64,
    /// Field, signed, in the model's field unit.
    pub field: f64,
    /// Which contour around the centre (0 = innermost).
    pub index: usize,
    /// Number of levels wanted, n = 0 .. count-1.
    pub count: usize,
}

struct Onsager<'a> {
    bands: &'a Bands,
    s: &'a Search,
    q: &'a Quantisation,
    edge: Edge,
    orientation: f64,
    lb2: f64,
    rays: usize,
}

impl Onsager<'_> {
    /// (A, gamma/2pi as the representative closest to `near`) at distance t from the edge.
    fn eval(&self, t: f64, near: f64) -> Result<(f64, f64)> {
        let e = self.edge.energy + self.edge.direction * t;
        let all = contours(self.bands, self.s, e, self.rays)?;
        let c = all.get(self.q.index).ok_or_else(|| Error::Numerical {
            stage: "Onsager levels".into(),
            detail: format!("contour {} does not exist at energy {e}", self.q.index),
        })?;
        let w = wilson_loop(self.bands, self.s.band, c)?;
        let frac = self.orientation * w.phase / (2.0 * PI);
        let k = (near - frac).round();
        Ok((c.area(), frac + k))
    }

    fn g(&self, area: f64, frac: f64) -> f64 {
        area * self.lb2 / (2.0 * PI) + frac - 0.5
    }
}

/// The first `q.count` semiclassical levels of contour `q.index` of `s.band` at field
/// `q.field` (see the module docs for the formula and method).
///
/// # Errors
/// As [`band_edge`], [`contours`] and [`orbit`]; [`Error::ZeroField`] for a zero field.
pub fn semiclassical_levels(
    bands: &Bands,
    s: &Search,
    q: &Quantisation,
    res: &Resolution,
) -> Result<SemiSpectrum> {
    if q.field == 0.0 || !q.field.is_finite() {
        return Err(Error::ZeroField { field: q.field });
    }
    let edge = band_edge(bands, s)?;
    let lb = q.units.magnetic_length(q.field, q.charge);
    let mut on = Onsager {
        bands,
        s,
        q,
        edge,
        orientation: -(q.charge * q.field * edge.direction).signum(),
        lb2: lb * lb,
        rays: res.start_rays.max(8),
    };
    // energy scale: the band at one inverse magnetic length from the centre
    let t0 = (bands.energy(s.band, s.center.0 + 1.0 / lb, s.center.1)? - edge.energy).abs();
    let t_small = 1e-4 * t0;
    let (a_small, f_small) = on.eval(t_small, 0.0)?;
    let start = f_small - (f_small + 0.5).div_euclid(2.0) * 2.0; // into [-1/2, 3/2)
    let start = start - (start + 0.25).div_euclid(1.0); // into [-1/4, 3/4)
    let g_small = on.g(a_small, start);
    // grow the top until g passes count
    let mut t_hi = t0;
    let mut frac = start;
    for _ in 0..80 {
        let (a, f) = on.eval(t_hi, frac)?;
        frac = f;
        if on.g(a, f) >= q.count as f64 {
            break;
        }
        t_hi *= 2.0;
    }
    let top = orbit(bands, s, edge.energy + edge.direction * t_hi, q.index, res)?;
    on.rays = top.contour.rays();
    scan_levels(&on, t_small, t_hi, start, g_small)
}

/// Samples g on a quadratic grid in t and solves g = n in each bracket.
fn scan_levels(
    on: &Onsager,
    t_small: f64,
    t_hi: f64,
    start: f64,
    g_small: f64,
) -> Result<SemiSpectrum> {
    let count = on.q.count;
    let mut levels = Vec::new();
    let nearest = g_small.round();
    let at_edge = (g_small - nearest).abs() < 1e-3 && nearest >= 0.0;
    let first = if at_edge {
        nearest + 1.0
    } else {
        g_small.ceil()
    };
    if at_edge {
        levels.push(SemiLevel {
            n: nearest as usize,
            energy: on.edge.energy,
            area: 0.0,
            berry_phase: 2.0 * PI * start,
            at_edge: true,
        });
    }
    let grid = 4 * count + 8;
    let mut prev = (t_small, g_small, start);
    let mut n = first.max(0.0);
    for j in 1..=grid {
        let t = t_small + (t_hi - t_small) * (j as f64 / grid as f64).powi(2);
        let (a, f) = on.eval(t, prev.2)?;
        let g = on.g(a, f);
        while n < count as f64 && prev.1 < n && g >= n {
            levels.push(solve_level(on, prev, (t, g, f), n)?);
            n += 1.0;
        }
        prev = (t, g, f);
    }
    Ok(SemiSpectrum {
        edge: on.edge,
        magnetic_length: on.lb2.sqrt(),
        orientation: on.orientation,
        rays: on.rays,
        levels,
    })
}

/// g(t) = n between a = (ta, ga, fa) and b = (tb, gb, fb) (t, g, gamma/2pi) by regula falsi
/// (Illinois, [`crate::numeric::root::illinois`]).
fn solve_level(on: &Onsager, a: (f64, f64, f64), b: (f64, f64, f64), n: f64) -> Result<SemiLevel> {
    let g = |t: f64| -> Result<f64> {
        let (area, f) = on.eval(t, a.2)?;
        Ok(on.g(area, f) - n)
    };
    let stop = Stop {
        rel_width: 1e-13,
        max_steps: 60,
        small: 0.0,
    };
    let best = illinois(g, (a.0, a.1 - n), (b.0, b.1 - n), stop)?;
    let (area, f) = on.eval(best, a.2)?;
    Ok(SemiLevel {
        n: n as usize,
        energy: on.edge.energy + on.edge.direction * best,
        area,
        berry_phase: 2.0 * PI * f,
        at_edge: false,
    })
}

/// The semiclassical level nearest `energy` (same formula as [`semiclassical_levels`]), without
/// computing the levels below it: n = round(g(energy)), then g(E) = n by Newton steps with the
/// slope g' = l_B^2 (dA/dE) / (2 pi) taken once at `energy` (gamma's slow change is ignored in
/// the slope, not in g). The index n is the one of gamma's representative in [-pi/2, 3 pi/2),
/// which may differ by a constant from [`semiclassical_levels`]' count; the energies do not.
///
/// # Errors
/// As [`semiclassical_levels`]; [`Error::NotConverged`] when 40 steps do not reach
/// |g - n| < 1e-9.
pub fn semiclassical_level_near(
    bands: &Bands,
    s: &Search,
    q: &Quantisation,
    res: &Resolution,
    energy: f64,
) -> Result<SemiLevel> {
    if q.field == 0.0 || !q.field.is_finite() {
        return Err(Error::ZeroField { field: q.field });
    }
    let edge = band_edge(bands, s)?;
    let lb = q.units.magnetic_length(q.field, q.charge);
    let o = orbit(bands, s, energy, q.index, res)?;
    let on = Onsager {
        bands,
        s,
        q,
        edge,
        orientation: -(q.charge * q.field * edge.direction).signum(),
        lb2: lb * lb,
        rays: o.contour.rays(),
    };
    let t0 = edge.direction * (energy - edge.energy);
    let h = 1e-3 * t0;
    let slope =
        (on.eval(t0 + h, 0.25)?.0 - on.eval(t0 - h, 0.25)?.0) / (2.0 * h) * on.lb2 / (2.0 * PI);
    let (a0, f0) = on.eval(t0, 0.25)?;
    let n = on.g(a0, f0).round().max(0.0);
    let mut t = t0;
    for _ in 0..40 {
        let (a, f) = on.eval(t, f0)?;
        let miss = on.g(a, f) - n;
        if miss.abs() < 1e-9 {
            return Ok(SemiLevel {
                n: n as usize,
                energy: edge.energy + edge.direction * t,
                area: a,
                berry_phase: 2.0 * PI * f,
                at_edge: false,
            });
        }
        t -= miss / slope;
    }
    Err(Error::NotConverged {
        tolerance: 1e-9,
        detail: format!("the Onsager level near {energy} did not settle in 40 Newton steps"),
    })
}
