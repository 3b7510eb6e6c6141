//! Scale-out by sharding a sweep: run shard K of N as an independent job (a batch scheduler's
//! job array, a loop over machines, ...), then merge the N output tables into exactly the table
//! one run gives. No scheduler of our own: a shard is a pure function of (K, N, the sweep).
//!
//! # Selection
//! Shard K/N (1-based K) of a sweep of P points holds the contiguous block of point indices
//! [floor((K-1) P / N), floor(K P / N)): blocks differ in size by at most one point, cover
//! 0..P exactly once, and depend on nothing but K, N and P.
//!
//! # Shard tables
//! A shard table is the CSV text one run would write for the whole sweep (one column line,
//! data rows one per line, no comment line), restricted to the rows of the shard's points.
//! What makes it a shard, a [`ShardHeader`], travels beside it: the command line writes it as
//! the `shard` object of the CSV's metadata sidecar ([`crate::records::meta::CsvMeta`]), e.g.
//!
//! ```text
//! "shard": { "shard": { "index": 2, "count": 4 }, "total_points": 1000,
//!            "group_by": ["track"], "keep": { "column": "energy_meV", "lo": -1.5, "hi": 2.5 } }
//! ```
//!
//! * `group_by` (may be empty): in the single-run table the rows are ordered by these
//!   columns first and by point second. A key field is compared as a list of integers when
//!   every `:`-separated part parses as one (so `0:10` sorts after `0:9`, `-1` before `0`),
//!   else as text. When empty, the rows are in point order.
//! * `keep` (optional): the single run keeps only the groups having at least one row with
//!   lo <= COL <= hi somewhere in the sweep. A shard cannot know that, so it writes every
//!   group and the merge applies the rule over all shards.
//!
//! # Merge
//! [`merge`] checks that the shards agree on N, P, the grouping, the filter, the context
//! (everything else the sidecars say, see [`ShardTable::context`]) and the column line, that
//! every K in 1..=N is present exactly once, and that no value of the first column (the swept
//! point) occurs in two shards; it then concatenates the data rows in shard order,
//! stable-sorts them by group key (which keeps the point order inside a group), applies the
//! filter, and returns the column line plus the rows, byte for byte as written by the shards.
//!
//! # Examples
//! ```
//! use ladderfan::shard::{merge, Shard, ShardHeader, ShardTable};
//! let points: Vec<f64> = (1..=5).map(f64::from).collect();
//! let table = |rows: &[f64]| -> String {
//!     let mut t = String::from("field_T,energy_meV\n");
//!     for b in rows {
//!         t.push_str(&format!("{b:e},{:e}\n", 0.5 * b));
//!     }
//!     t
//! };
//! let single = table(&points);
//! let mut shards = Vec::new();
//! for k in 1..=2 {
//!     let s: Shard = format!("{k}/2").parse()?;
//!     let header = ShardHeader::new(s, points.len());
//!     shards.push(ShardTable::new(format!("part{k}.csv"), header, table(s.select(&points)?)));
//! }
//! assert_eq!(merge(&shards)?, single);
//! # Ok::<(), ladderfan::Error>(())
//! ```

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;
use std::ops::Range;
use std::str::FromStr;

/// Shard K of N (1-based K): which block of a sweep's points one job computes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct Shard {
    /// K, 1-based: 1 <= index <= count.
    pub index: usize,
    /// N, the number of shards (>= 1).
    pub count: usize,
}

impl Shard {
    /// The whole sweep as one shard (1/1).
    pub const WHOLE: Shard = Shard { index: 1, count: 1 };

    /// Parse `K/N` (1 <= K <= N, decimal, surrounding spaces allowed).
    ///
    /// # Errors
    /// [`Error::Parse`] (location `--shard`) for anything else, saying what is expected.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::shard::Shard;
    /// assert_eq!(Shard::parse("3/8")?, Shard { index: 3, count: 8 });
    /// assert!(Shard::parse("0/8").is_err() && Shard::parse("9/8").is_err());
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn parse(text: &str) -> Result<Shard> {
        let bad = |why: &str| Error::Parse {
            location: "shard".into(),
            message: format!(
                "`{text}` is not a shard: {why}; write K/N with 1 <= K <= N, e.g. 2/8"
            ),
        };
        let (k, n) = text.trim().split_once('/').ok_or_else(|| bad("no `/`"))?;
        let k: usize = k
            .trim()
            .parse()
            .map_err(|_| bad("K is not a whole number"))?;
        let n: usize = n
            .trim()
            .parse()
            .map_err(|_| bad("N is not a whole number"))?;
        if n == 0 {
            return Err(bad("N must be at least 1"));
        }
        if k == 0 || k > n {
            return Err(bad("K must lie between 1 and N"));
        }
        Ok(Shard { index: k, count: n })
    }

    /// The block of point indices of this shard in a sweep of `total` points:
    /// [floor((K-1) total / N), floor(K total / N)).
    ///
    /// # Errors
    /// [`Error::BadNumber`] when N exceeds `total` (some shard would hold no point: use fewer
    /// shards).
    ///
    /// # Examples
    /// ```
    /// use ladderfan::shard::Shard;
    /// assert_eq!(Shard::parse("2/3")?.range(10)?, 3..6);
    /// assert_eq!(Shard::parse("3/3")?.range(10)?, 6..10);
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn range(&self, total: usize) -> Result<Range<usize>> {
        if self.count > total {
            return Err(Error::BadNumber {
                name: "shard count N".into(),
                value: self.count as f64,
                fix: format!(
                    "the sweep has only {total} points, so at most {total} shards are useful; \
                     lower N or add points"
                ),
            });
        }
        // u128: total * index cannot overflow for any realistic (or unrealistic) sweep
        let at = |k: usize| ((total as u128 * k as u128) / self.count as u128) as usize;
        Ok(at(self.index - 1)..at(self.index))
    }

    /// The shard's block of `items` (see [`Shard::range`]).
    ///
    /// # Errors
    /// As [`Shard::range`].
    pub fn select<'a, T>(&self, items: &'a [T]) -> Result<&'a [T]> {
        Ok(&items[self.range(items.len())?])
    }
}

impl FromStr for Shard {
    type Err = Error;
    fn from_str(s: &str) -> Result<Shard> {
        Shard::parse(s)
    }
}

impl fmt::Display for Shard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// The single-run rule that keeps only the groups that enter a window somewhere in the sweep.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KeepGroups {
    /// Column compared with the window (parsed as a number).
    pub column: String,
    /// Lower end (inclusive).
    pub lo: f64,
    /// Upper end (inclusive).
    pub hi: f64,
}

/// What makes a table a shard table (see the module docs): which shard, of how many points,
/// and how the merge orders and filters the rows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShardHeader {
    /// Which shard.
    pub shard: Shard,
    /// Points of the whole sweep (P).
    pub total_points: usize,
    /// Columns ordering the rows before the point order (empty: point order only).
    #[serde(default)]
    pub group_by: Vec<String>,
    /// Group filter applied by the merge, if any.
    #[serde(default)]
    pub keep: Option<KeepGroups>,
}

impl ShardHeader {
    /// A header for rows in point order without a group filter.
    pub fn new(shard: Shard, total_points: usize) -> Self {
        ShardHeader {
            shard,
            total_points,
            group_by: Vec::new(),
            keep: None,
        }
    }

    /// A line for humans, e.g. `shard 2/4: points 3-4 of 8; rows grouped by a,b`. Points are
    /// 1-based and inclusive; a shard without points says `points none`.
    pub fn line(&self) -> String {
        let r = self.shard.range(self.total_points).unwrap_or(0..0);
        let pts = if r.is_empty() {
            "none".to_string()
        } else {
            format!("{}-{}", r.start + 1, r.end)
        };
        let mut s = format!(
            "shard {}: points {pts} of {}",
            self.shard, self.total_points
        );
        if !self.group_by.is_empty() {
            s.push_str(&format!("; rows grouped by {}", self.group_by.join(",")));
        }
        if let Some(k) = &self.keep {
            s.push_str(&format!(
                "; keep groups with {} in [{}, {}]",
                k.column, k.lo, k.hi
            ));
        }
        s
    }
}

/// One shard's table for [`merge`]: where it came from, its [`ShardHeader`], the context it
/// must share with the other shards, and the CSV text.
#[derive(Debug, Clone, PartialEq)]
pub struct ShardTable {
    /// Name for messages (usually the file path).
    pub name: String,
    /// Which shard this is.
    pub header: ShardHeader,
    /// Lines that every shard of one sweep has in common (model, units, notes, ...; the
    /// command line writes its sidecar without the command line and shard object): the merge
    /// refuses shards whose context differs. May be empty.
    pub context: Vec<String>,
    /// The CSV text: column line, then the data rows.
    pub text: String,
}

impl ShardTable {
    /// A table with an empty context.
    pub fn new(name: impl Into<String>, header: ShardHeader, text: impl Into<String>) -> Self {
        ShardTable {
            name: name.into(),
            header,
            context: Vec::new(),
            text: text.into(),
        }
    }
}

/// One key field: integers compare numerically and before text.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
enum KeyPart {
    Ints(Vec<i64>),
    Text(String),
}

fn key_part(field: &str) -> KeyPart {
    let ints: std::result::Result<Vec<i64>, _> = field.split(':').map(str::parse).collect();
    match ints {
        Ok(v) => KeyPart::Ints(v),
        Err(_) => KeyPart::Text(field.to_string()),
    }
}

fn fields(line: &str, where_: &str) -> Result<Vec<String>> {
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(line.as_bytes());
    match rdr.records().next() {
        Some(Ok(r)) => Ok(r.iter().map(str::to_string).collect()),
        Some(Err(e)) => Err(Error::Parse {
            location: where_.to_string(),
            message: format!("not a CSV row ({e})"),
        }),
        None => Ok(Vec::new()),
    }
}

struct Parsed {
    header: ShardHeader,
    comments: Vec<String>,
    columns: String,
    rows: Vec<String>,
}

fn parse_table(t: &ShardTable) -> Result<Parsed> {
    let mut columns = None;
    let mut rows = Vec::new();
    for (i, line) in t.text.lines().enumerate() {
        if line.starts_with('#') {
            return Err(Error::Parse {
                location: format!("{}:{}", t.name, i + 1),
                message: "a `#` line: shard tables have none (an older ladderfan wrote this \
                          one); run the shard again"
                    .into(),
            });
        }
        if columns.is_none() {
            columns = Some(line.to_string());
        } else if !line.is_empty() {
            rows.push(line.to_string());
        }
    }
    let columns = columns.ok_or_else(|| Error::Parse {
        location: t.name.clone(),
        message: "empty table: no column line".into(),
    })?;
    Ok(Parsed {
        header: t.header.clone(),
        comments: t.context.clone(),
        columns,
        rows,
    })
}

/// Merge shard tables (any order) into the single-run table.
///
/// # Errors
/// [`Error::Parse`] naming the file when a table has a `#` line or no column line, when the
/// shards disagree (N, P, grouping, filter, context or column lines; the first differing line
/// is quoted), when a shard is missing or given twice, when a grouping/filter column does not
/// exist or a filter value is not a number, or when a point (first column value) appears in
/// two shards.
///
/// # Complexity
/// O(R log R) for R data rows in total; memory O(total text).
pub fn merge(tables: &[ShardTable]) -> Result<String> {
    let first = tables.first().ok_or_else(|| Error::Parse {
        location: "merge".into(),
        message: "no shard tables given".into(),
    })?;
    let mut parsed: Vec<(String, Parsed)> = Vec::with_capacity(tables.len());
    for t in tables {
        parsed.push((t.name.clone(), parse_table(t)?));
    }
    let base = &parsed[0].1;
    check_same_sweep(&parsed, &first.name)?;
    let by_k = shards_in_order(&parsed)?;
    let columns = fields(&base.columns, &format!("{}: column line", first.name))?;
    let (group_cols, keep) = grouping_columns(base, &columns, &first.name)?;
    let mut rows = collect_rows(&parsed, &by_k, &columns, &group_cols, keep)?;
    rows.sort_by(|a, b| a.0.cmp(&b.0)); // stable: keeps shard (= point) order inside a group
    let keep_group: Option<Vec<bool>> = keep.map(|(_, lo, hi)| groups_entering(&rows, lo, hi));
    Ok(render_merged(base, &rows, keep_group.as_deref()))
}

/// One data row of the merged table: group key, filter value (when a filter is set), text.
type MergeRow<'a> = (Vec<KeyPart>, Option<f64>, &'a str);

/// The filter of a shard header as (column index, lo, hi).
type KeepWindow = Option<(usize, f64, f64)>;

/// Every shard after the first must agree with the first (named `first`) on N, P, grouping,
/// filter, column line and comment lines.
fn check_same_sweep(parsed: &[(String, Parsed)], first: &str) -> Result<()> {
    let base = &parsed[0].1;
    let (n, p) = (base.header.shard.count, base.header.total_points);
    let mismatch = |name: &str, what: String| Error::Parse {
        location: name.to_string(),
        message: format!("{what} (compared with {first}); these shards are not from one sweep"),
    };
    for (name, t) in &parsed[1..] {
        let h = &t.header;
        if h.shard.count != n || h.total_points != p {
            return Err(mismatch(
                name,
                format!(
                    "shard {} of {} points, but {} of {p} points",
                    h.shard, h.total_points, base.header.shard
                ),
            ));
        }
        if h.group_by != base.header.group_by || h.keep != base.header.keep {
            return Err(mismatch(name, "different grouping or group filter".into()));
        }
        if t.columns != base.columns {
            return Err(mismatch(
                name,
                format!("different column line `{}`", t.columns),
            ));
        }
        if let Some((a, b)) = t.comments.iter().zip(&base.comments).find(|(a, b)| a != b) {
            return Err(mismatch(
                name,
                format!("context line `{a}` differs from `{b}`"),
            ));
        }
        if t.comments.len() != base.comments.len() {
            return Err(mismatch(name, "a different number of context lines".into()));
        }
    }
    Ok(())
}

/// Shard index K -> position in `parsed`, checking every K in 1..=N appears exactly once.
fn shards_in_order(parsed: &[(String, Parsed)]) -> Result<BTreeMap<usize, usize>> {
    let base = &parsed[0].1;
    let (n, p) = (base.header.shard.count, base.header.total_points);
    let mut by_k: BTreeMap<usize, usize> = BTreeMap::new();
    for (i, (name, t)) in parsed.iter().enumerate() {
        if let Some(j) = by_k.insert(t.header.shard.index, i) {
            return Err(Error::Parse {
                location: name.clone(),
                message: format!(
                    "shard {} given twice (also {}); give each shard once",
                    t.header.shard, parsed[j].0
                ),
            });
        }
    }
    let missing: Vec<String> = (1..=n)
        .filter(|k| !by_k.contains_key(k))
        .map(|k| format!("{k}/{n}"))
        .collect();
    if !missing.is_empty() {
        return Err(Error::Parse {
            location: "merge".into(),
            message: format!(
                "shard(s) {} missing: every shard 1/{n}..{n}/{n} is needed for the {p} points",
                missing.join(", ")
            ),
        });
    }
    Ok(by_k)
}

/// Column indices of the grouping columns and of the filter column (with its window).
fn grouping_columns(
    base: &Parsed,
    columns: &[String],
    first: &str,
) -> Result<(Vec<usize>, KeepWindow)> {
    let col_index = |c: &str| {
        columns
            .iter()
            .position(|x| x == c)
            .ok_or_else(|| Error::Parse {
                location: first.to_string(),
                message: format!("column `{c}` named in the shard header does not exist"),
            })
    };
    let group_cols: Vec<usize> = base
        .header
        .group_by
        .iter()
        .map(|c| col_index(c))
        .collect::<Result<_>>()?;
    let keep = match &base.header.keep {
        Some(k) => Some((col_index(&k.column)?, k.lo, k.hi)),
        None => None,
    };
    Ok((group_cols, keep))
}

/// Rows in shard order with their keys; the point of each row belongs to one shard only.
fn collect_rows<'a>(
    parsed: &'a [(String, Parsed)],
    by_k: &BTreeMap<usize, usize>,
    columns: &[String],
    group_cols: &[usize],
    keep: KeepWindow,
) -> Result<Vec<MergeRow<'a>>> {
    let mut point_owner: BTreeMap<String, usize> = BTreeMap::new();
    let mut rows: Vec<MergeRow<'a>> = Vec::new();
    for &i in by_k.values() {
        let (name, t) = &parsed[i];
        for (r, line) in t.rows.iter().enumerate() {
            let at = format!("{name}: data row {}", r + 1);
            let f = fields(line, &at)?;
            if f.len() != columns.len() {
                return Err(Error::Parse {
                    location: at,
                    message: format!("{} fields, the column line has {}", f.len(), columns.len()),
                });
            }
            let point = f[0].clone();
            match point_owner.get(&point) {
                Some(&o) if o != i => {
                    return Err(Error::Parse {
                        location: at,
                        message: format!(
                            "point {point} also appears in {}; shards must hold disjoint points",
                            parsed[o].0
                        ),
                    })
                }
                _ => {
                    point_owner.insert(point, i);
                }
            }
            let key = group_cols.iter().map(|&c| key_part(&f[c])).collect();
            let value = match keep {
                Some((c, _, _)) => Some(f[c].trim().parse::<f64>().map_err(|_| Error::Parse {
                    location: at.clone(),
                    message: format!("`{}` in column {} is not a number", f[c], columns[c]),
                })?),
                None => None,
            };
            rows.push((key, value, line.as_str()));
        }
    }
    Ok(rows)
}

/// For sorted rows: whether each row's group has a filter value in `[lo, hi]` somewhere.
fn groups_entering(rows: &[MergeRow<'_>], lo: f64, hi: f64) -> Vec<bool> {
    // groups are contiguous after the sort: mark each row's group once
    let mut flags = vec![false; rows.len()];
    let mut start = 0;
    while start < rows.len() {
        let mut end = start;
        while end < rows.len() && rows[end].0 == rows[start].0 {
            end += 1;
        }
        let enters = rows[start..end]
            .iter()
            .any(|r| r.1.is_some_and(|v| v >= lo && v <= hi));
        flags[start..end].iter_mut().for_each(|x| *x = enters);
        start = end;
    }
    flags
}

/// The merged table: column line, then the kept rows.
fn render_merged(base: &Parsed, rows: &[MergeRow<'_>], keep_group: Option<&[bool]>) -> String {
    let mut out = String::new();
    out.push_str(&base.columns);
    out.push('\n');
    for (i, r) in rows.iter().enumerate() {
        if keep_group.map_or(true, |k| k[i]) {
            out.push_str(r.2);
            out.push('\n');
        }
    }
    out
}

#[cfg(test)]
mod tests;
