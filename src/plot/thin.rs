//! Turning a curve's pixel points into drawable runs: breaks at jumps, thinning at the
//! resolution limit, clipping at the frame.

use std::collections::HashMap;

/// A point in pixels with its colour value.
pub(crate) type P = (f64, f64, f64);

/// Break flags: `out[i]` says the step from point i - 1 to i is a jump (taller than
/// `min_px` and more than six times both neighbouring steps; a step with a missing
/// neighbour is never judged a jump).
pub(crate) fn jump_breaks(pts: &[Option<P>], min_px: f64) -> Vec<bool> {
    let dy = |i: usize| -> Option<f64> {
        if i == 0 || i >= pts.len() {
            return None;
        }
        match (pts[i - 1], pts[i]) {
            (Some(a), Some(b)) => Some((b.1 - a.1).abs()),
            _ => None,
        }
    };
    (0..pts.len())
        .map(|i| match (dy(i), dy(i.wrapping_sub(1)), dy(i + 1)) {
            (Some(d), Some(before), Some(after)) => {
                d > min_px && d > 6.0 * before && d > 6.0 * after
            }
            _ => false,
        })
        .collect()
}

/// Hide points where curves of one group (e.g. the computed lines, or the dashed overlays)
/// crowd: in each half-pixel column, a curve's point is hidden when a point of an earlier
/// curve of its group (the `curves` order is the priority) lies closer than `limit` pixels.
/// A curve never hides its own points (a steep line has several points a column, closer than
/// the limit, and would otherwise be drawn as dots). Only points inside the band
/// `top..=bottom` occupy room.
pub(crate) fn thin(curves: &mut [(u8, Vec<Option<P>>)], limit: f64, (top, bottom): (f64, f64)) {
    if limit <= 0.0 {
        return;
    }
    // per (group, column): the kept heights with the curve they belong to
    let mut columns: HashMap<(u8, i64), Vec<(usize, f64)>> = HashMap::new();
    for (id, (group, pts)) in curves.iter_mut().enumerate() {
        for p in pts.iter_mut() {
            let Some((x, y, _)) = *p else { continue };
            if y < top || y > bottom {
                continue;
            }
            let kept = columns
                .entry((*group, (2.0 * x).round() as i64))
                .or_default();
            if kept
                .iter()
                .any(|&(k, ky)| k != id && (ky - y).abs() < limit)
            {
                *p = None;
            } else {
                kept.push((id, y));
            }
        }
    }
}

/// Split at missing points and at `breaks`, then clip every run to the band
/// `y0 <= y <= y1`: a segment crossing the edge ends (or starts) at the crossing, found by
/// linear interpolation (of x and of the colour value).
pub(crate) fn clip_runs(pts: &[Option<P>], breaks: &[bool], (y0, y1): (f64, f64)) -> Vec<Vec<P>> {
    let mut out = Vec::new();
    let mut cur: Vec<P> = Vec::new();
    let inside = |y: f64| y >= y0 && y <= y1;
    let cross = |a: P, b: P, edge: f64| {
        let t = (edge - a.1) / (b.1 - a.1);
        (a.0 + t * (b.0 - a.0), edge, a.2 + t * (b.2 - a.2))
    };
    let edge_between = |a: f64, b: f64| if (a - y1) * (b - y1) <= 0.0 { y1 } else { y0 };
    let mut prev: Option<P> = None;
    for (i, p) in pts.iter().enumerate() {
        let Some(p) = *p else {
            if !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev = None;
            continue;
        };
        if breaks.get(i).copied().unwrap_or(false) {
            if !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev = None;
        }
        match prev {
            Some(q) if inside(q.1) && inside(p.1) => cur.push(p),
            Some(q) if inside(q.1) => {
                cur.push(cross(q, p, edge_between(q.1, p.1)));
                out.push(std::mem::take(&mut cur));
            }
            Some(q) if inside(p.1) => {
                cur.push(cross(q, p, edge_between(q.1, p.1)));
                cur.push(p);
            }
            Some(q) if (q.1 < y0 && p.1 > y1) || (q.1 > y1 && p.1 < y0) => {
                let (a, b) = if q.1 < y0 { (y0, y1) } else { (y1, y0) };
                out.push(vec![cross(q, p, a), cross(q, p, b)]);
            }
            Some(_) => {}
            None if inside(p.1) => cur.push(p),
            None => {}
        }
        prev = Some(p);
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pts(v: &[(f64, f64)]) -> Vec<Option<P>> {
        v.iter()
            .map(|&(x, y)| (x.is_finite() && y.is_finite()).then_some((x, y, 0.0)))
            .collect()
    }

    #[test]
    fn broken_curves_split_into_runs() {
        let p = pts(&[(0.0, 1.0), (1.0, f64::NAN), (2.0, 3.0), (3.0, 4.0)]);
        let r = clip_runs(&p, &[false; 4], (0.0, 10.0));
        assert_eq!(r.len(), 2);
        assert_eq!(r[1], vec![(2.0, 3.0, 0.0), (3.0, 4.0, 0.0)]);
    }

    #[test]
    fn curves_are_clipped_at_the_frame() {
        // y = 2x leaves the band [0, 4] at x = 2
        let r = clip_runs(&pts(&[(0.0, 0.0), (1.0, 2.0), (3.0, 6.0)]), &[], (0.0, 4.0));
        assert_eq!(
            r,
            vec![vec![(0.0, 0.0, 0.0), (1.0, 2.0, 0.0), (2.0, 4.0, 0.0)]]
        );
        // crossing the whole band in one segment: y = 3x - 4 enters at 4/3, leaves at 8/3
        let r = clip_runs(&pts(&[(0.0, -4.0), (4.0, 8.0)]), &[], (0.0, 4.0));
        assert!((r[0][0].0 - 4.0 / 3.0).abs() < 1e-12 && (r[0][1].0 - 8.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn a_jump_breaks_the_line_but_a_steep_start_does_not() {
        // steps 1, 1, 80, 1, 1: the 80 px step is a jump
        let p = pts(&[
            (0.0, 0.0),
            (1.0, 1.0),
            (2.0, 2.0),
            (3.0, 82.0),
            (4.0, 83.0),
            (5.0, 84.0),
        ]);
        assert_eq!(
            jump_breaks(&p, 40.0),
            vec![false, false, false, true, false, false]
        );
        // sqrt-like start: steps 100, 41, 32 (ratio < 6): no break
        let p = pts(&[(0.0, 0.0), (1.0, 100.0), (2.0, 141.0), (3.0, 173.0)]);
        assert!(jump_breaks(&p, 40.0).iter().all(|b| !b));
        let r = clip_runs(
            &pts(&[(0.0, 0.0), (1.0, 1.0), (2.0, 50.0), (3.0, 51.0)]),
            &[false, false, true, false],
            (-1.0, 100.0),
        );
        assert_eq!(r.len(), 2);
    }

    #[test]
    fn crowded_points_of_later_curves_are_hidden() {
        // three curves 0.5 px apart at x = 0, 10 px apart at x = 10; limit 2 px
        let mut c = vec![
            (0, pts(&[(0.0, 0.0), (10.0, 0.0)])),
            (0, pts(&[(0.0, 0.5), (10.0, 10.0)])),
            (0, pts(&[(0.0, 3.0), (10.0, 20.0)])),
            (1, pts(&[(0.0, 0.5), (10.0, 10.0)])),
        ];
        thin(&mut c, 2.0, (-100.0, 100.0));
        assert!(c[0].1[0].is_some() && c[1].1[0].is_none() && c[2].1[0].is_some());
        // another group (an overlay) keeps its own room
        assert!(c[3].1[0].is_some());
        assert!(c.iter().all(|(_, p)| p[1].is_some()));
    }

    #[test]
    fn a_steep_curve_keeps_its_own_points() {
        // regression: points of one steep curve 1 px apart in the same half-pixel column were
        // hidden by each other, so steep lines were drawn as dots
        let steep: Vec<(f64, f64)> = (0..8).map(|i| (0.1 * i as f64, i as f64)).collect();
        let mut c = vec![(0, pts(&steep))];
        thin(&mut c, 2.0, (-100.0, 100.0));
        assert!(c[0].1.iter().all(|p| p.is_some()));
    }
}
