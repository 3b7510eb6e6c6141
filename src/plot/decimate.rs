//! Lines thinned online to a figure's resolution: a sweep of many points hands each line its
//! values one at a time, and the line keeps at most a few values per pixel column (the lowest
//! and the highest of the column, so no extreme is lost), whatever the number of points.

/// Columns of a sweep's figure: half the figure's width [`super::SIZE`] `.0` (480). The data
/// area is narrower than the figure (axis labels left, key and line labels right), so a
/// column is at most 2 px wide there: the resolution at which the figure thins crowded lines
/// ([`super::LinePlot::thin_px`] 2 px) and about a line's width (1.8 px).
pub const FIGURE_COLUMNS: usize = super::SIZE.0 as usize / 2;

/// Values a [`DecimatedLine`] holds at most per column: the lowest, the highest and one break.
pub const VALUES_PER_COLUMN: usize = 3;

/// How the x range of a sweep maps to columns. A sweep of at most `columns` points is kept
/// exactly (every point, non-finite where a line has no value); a longer one is binned by x
/// into `columns` equal columns between its smallest and largest x.
///
/// # Formula
/// column(x) = min(floor((x - x_min) / (x_max - x_min) * columns), columns - 1).
#[derive(Debug, Clone)]
pub struct Decimation {
    x_min: f64,
    x_max: f64,
    columns: usize,
    total: usize,
    /// Every x when the sweep is kept exactly (at most `columns` values), else empty.
    exact_xs: Vec<f64>,
}

impl Decimation {
    /// The decimation of a sweep at the abscissae `xs` (in point order) into `columns`
    /// columns (at least 1).
    pub fn new(xs: &[f64], columns: usize) -> Self {
        let columns = columns.max(1);
        let (x_min, x_max) = xs
            .iter()
            .filter(|x| x.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                (a.min(x), b.max(x))
            });
        let exact = xs.len() <= columns;
        Decimation {
            x_min,
            x_max,
            columns,
            total: xs.len(),
            exact_xs: if exact { xs.to_vec() } else { Vec::new() },
        }
    }

    /// Whether every point is kept (the sweep has at most as many points as columns).
    pub fn is_exact(&self) -> bool {
        self.total <= self.columns
    }

    /// Values a line holds at most: every point when exact, else [`VALUES_PER_COLUMN`] per
    /// column.
    pub fn max_values(&self) -> usize {
        if self.is_exact() {
            self.total
        } else {
            VALUES_PER_COLUMN * self.columns
        }
    }

    fn column(&self, x: f64) -> usize {
        let span = self.x_max - self.x_min;
        if span.is_nan() || span <= 0.0 || !x.is_finite() {
            return 0;
        }
        let c = ((x - self.x_min) / span * self.columns as f64).floor();
        (c.max(0.0) as usize).min(self.columns - 1)
    }
}

/// One point of a line with its colour value.
#[derive(Debug, Clone, Copy)]
struct Sample {
    index: usize,
    x: f64,
    y: f64,
    value: f64,
}

/// The open column of a binned line: its lowest and highest sample so far.
#[derive(Debug, Clone, Copy)]
struct Open {
    column: usize,
    low: Sample,
    high: Sample,
}

/// A line built point by point and thinned by a [`Decimation`]: exact for a short sweep
/// (points with no value become non-finite y, which breaks the line, as a whole-sweep figure
/// draws it), else the lowest and highest value of each column in x order, and a break where
/// points without a value separate two columns.
#[derive(Debug, Clone, Default)]
pub struct DecimatedLine {
    points: Vec<(f64, f64)>,
    /// Colour values of `points`, held only from the first finite one on (before it, all NaN:
    /// filled in by [`DecimatedLine::finish`]); empty for a line without colour values.
    values: Vec<f64>,
    last: Option<Sample>,
    open: Option<Open>,
}

impl DecimatedLine {
    /// Add the value `y` (colour value `value`, NaN: none) at point `index` (ascending over
    /// calls) of abscissa `x`.
    pub fn push(&mut self, d: &Decimation, index: usize, x: f64, y: f64, value: f64) {
        let s = Sample { index, x, y, value };
        if d.is_exact() {
            self.pad_to(d, index);
            self.points.push((x, y));
            self.keep_value(value);
            self.last = Some(s);
            return;
        }
        let column = d.column(x);
        match &mut self.open {
            Some(o) if o.column == column => {
                if y < o.low.y {
                    o.low = s;
                }
                if y > o.high.y {
                    o.high = s;
                }
            }
            _ => {
                self.flush();
                if self.last.is_some_and(|l| index > l.index + 1) {
                    self.points.push((x, f64::NAN));
                    self.keep_value(f64::NAN);
                }
                self.open = Some(Open {
                    column,
                    low: s,
                    high: s,
                });
            }
        }
        self.last = Some(s);
    }

    /// Record the colour value of the point just pushed (the first finite one starts the
    /// list, with NaN for the points before it).
    fn keep_value(&mut self, value: f64) {
        if self.values.is_empty() && value.is_nan() {
            return;
        }
        // the point this value belongs to is pushed already
        self.values.resize(self.points.len() - 1, f64::NAN);
        self.values.push(value);
    }

    /// Exact mode: the points before `index` that got no value, as breaks.
    fn pad_to(&mut self, d: &Decimation, index: usize) {
        let from = self.last.map_or(0, |l| l.index + 1);
        for &x in d.exact_xs.get(from..index).unwrap_or(&[]) {
            self.points.push((x, f64::NAN));
            self.keep_value(f64::NAN);
        }
    }

    /// Binned mode: the open column's samples, in x order.
    fn flush(&mut self) {
        if let Some(o) = self.open.take() {
            let (a, b) = if o.low.index <= o.high.index {
                (o.low, o.high)
            } else {
                (o.high, o.low)
            };
            self.points.push((a.x, a.y));
            self.keep_value(a.value);
            if b.index != a.index {
                self.points.push((b.x, b.y));
                self.keep_value(b.value);
            }
        }
    }

    /// Values held so far.
    pub fn len(&self) -> usize {
        self.points.len() + if self.open.is_some() { 2 } else { 0 }
    }

    /// Whether no value was added.
    pub fn is_empty(&self) -> bool {
        self.last.is_none()
    }

    /// The finished line: its points (x, y) and the colour value of each (empty when no
    /// colour value was finite).
    pub fn finish(mut self, d: &Decimation) -> (Vec<(f64, f64)>, Vec<f64>) {
        if d.is_exact() {
            self.pad_to(d, d.total);
        } else {
            self.flush();
        }
        if !self.values.is_empty() {
            self.values.resize(self.points.len(), f64::NAN);
        }
        (self.points, self.values)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_short_sweep_is_kept_exactly_with_breaks_where_values_are_missing() {
        let xs = [1.0, 2.0, 3.0, 4.0, 5.0];
        let d = Decimation::new(&xs, 10);
        let mut l = DecimatedLine::default();
        l.push(&d, 1, 2.0, 20.0, 0.5);
        l.push(&d, 3, 4.0, 40.0, 0.25);
        let (p, v) = l.finish(&d);
        assert_eq!(p.len(), 5);
        let ys: Vec<bool> = p.iter().map(|q| q.1.is_nan()).collect();
        assert_eq!(ys, [true, false, true, false, true]);
        assert_eq!(p.iter().map(|q| q.0).collect::<Vec<_>>(), xs);
        assert_eq!((p[1].1, p[3].1), (20.0, 40.0));
        assert_eq!((v[1], v[3]), (0.5, 0.25));
    }

    #[test]
    fn a_long_sweep_keeps_the_extremes_of_each_column_and_its_breaks() {
        // 10000 points of a sine over 100 columns: at most 3 values per column, the global
        // extremes kept exactly, a break where points 5000..5099 have no value
        let n = 10_000;
        let xs: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let d = Decimation::new(&xs, 100);
        let f = |i: usize| (i as f64 * 0.0123).sin() + 1e-6 * i as f64;
        let mut l = DecimatedLine::default();
        for i in (0..n).filter(|i| !(5000..5100).contains(i)) {
            l.push(&d, i, xs[i], f(i), i as f64);
            assert!(l.len() <= d.max_values());
        }
        let (p, v) = l.finish(&d);
        assert!(p.len() <= d.max_values(), "{}", p.len());
        assert_eq!(p.len(), v.len());
        let max = (0..n)
            .filter(|i| !(5000..5100).contains(i))
            .map(f)
            .fold(f64::NEG_INFINITY, f64::max);
        let min = (0..n)
            .filter(|i| !(5000..5100).contains(i))
            .map(f)
            .fold(f64::INFINITY, f64::min);
        let ys: Vec<f64> = p.iter().map(|q| q.1).filter(|y| y.is_finite()).collect();
        assert!(ys.contains(&max) && ys.contains(&min));
        assert_eq!(p.iter().filter(|q| q.1.is_nan()).count(), 1);
        // x in ascending order, each kept value the line's own at its x
        assert!(p.windows(2).all(|w| w[0].0 <= w[1].0));
        for (q, &val) in p.iter().zip(&v) {
            if q.1.is_finite() {
                assert_eq!(q.1, f(q.0 as usize));
                assert_eq!(val, q.0);
            }
        }
    }
}
