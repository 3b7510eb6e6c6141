//! MatrixMarket exchange files of the assembled Hamiltonian: writing the lower triangle of a
//! Hermitian matrix (`%%MatrixMarket matrix coordinate complex hermitian`, 1-based indices)
//! and reading such a file back, plus the size estimates the memory check needs.
//!
//! # Format
//! A header line, `%` comment lines, a size line `rows cols entries`, then one line
//! `i j re im` per stored entry with i >= j (1-based). Diagonal imaginary parts are written as
//! 0 (the matrix is Hermitian); zeros are skipped.

use crate::error::{Error, Result};
use crate::hamiltonian::LadderHamiltonian;
use num_complex::Complex64;

/// Location of an error that concerns the whole text rather than one line.
const WHOLE: &str = "MatrixMarket text";

/// The MatrixMarket text of a Hermitian matrix given by its states and element function:
/// lower-triangle entries (i >= j), 1-based, zeros skipped, diagonal imaginary parts written
/// as 0 (the matrix is Hermitian).
pub fn write(
    comments: &[String],
    n: usize,
    half_bandwidth: usize,
    element: impl Fn(usize, usize) -> Complex64,
) -> (String, usize) {
    // entries beyond the half-bandwidth are zero: O(n b) element calls, not O(n^2)
    let rows = |j: usize| j..n.min(j.saturating_add(half_bandwidth).saturating_add(1));
    let nonzero = |z: Complex64| z.re != 0.0 || z.im != 0.0;
    // a first pass counts the entries, so the size line is written first and the text is built
    // in one buffer reserved at its longest (two indices, two numbers in `{:e}` form of at
    // most 24 characters): reserved pages that are never written cost no resident memory
    let count: usize = (0..n)
        .map(|j| rows(j).filter(|&i| nonzero(element(i, j))).count())
        .sum();
    let digits = n.max(1).ilog10() as usize + 1;
    let mut s = String::from("%%MatrixMarket matrix coordinate complex hermitian\n");
    for c in comments {
        s.push_str(&format!("% {c}\n"));
    }
    s.push_str(&format!("{n} {n} {count}\n"));
    s.reserve(count.saturating_mul(2 * digits + 2 * 24 + 4));
    for j in 0..n {
        for i in rows(j) {
            let z = element(i, j);
            if !nonzero(z) {
                continue;
            }
            let im = if i == j { 0.0 } else { z.im };
            s.push_str(&format!("{} {} {:e} {:e}\n", i + 1, j + 1, z.re, im));
        }
    }
    (s, count)
}

/// Stored entries of the lower triangle of the whole matrix at `cutoff` orbitals, at most, in
/// closed form: per orbital, the distinct (alpha, beta, shift) with a non-zero coupling and
/// shift > 0, or shift = 0 and alpha >= beta (rows are n d + alpha, so these are the entries on
/// or below the diagonal).
pub fn lower_entries_bound(h: &LadderHamiltonian, cutoff: usize) -> u64 {
    let mut seen: Vec<(usize, usize, i64)> = Vec::new();
    for op in &h.ops {
        let shift = op.shift();
        if shift < 0 {
            continue;
        }
        for alpha in 0..h.dim {
            for beta in 0..h.dim {
                let z = op.matrix[(alpha, beta)];
                if (z.re != 0.0 || z.im != 0.0) && (shift > 0 || alpha >= beta) {
                    seen.push((alpha, beta, shift));
                }
            }
        }
    }
    seen.sort_unstable();
    seen.dedup();
    (cutoff as u64).saturating_mul(seen.len() as u64)
}

/// Longest text line of one entry of a matrix of `rows` rows: two indices and two numbers in
/// `{:e}` form (at most 24 characters; 3 for an exact zero imaginary part of a real matrix).
pub fn line_bytes(rows: u64, real: bool) -> u64 {
    let digits = u64::from(rows.max(1).ilog10()) + 1;
    2 * digits + 24 + if real { 3 } else { 24 } + 3
}

/// A parsed MatrixMarket file: size and lower-triangle entries (i, j, value), 0-based.
pub type Parsed = (usize, Vec<(usize, usize, Complex64)>);

fn parse_error(location: impl Into<String>, message: impl Into<String>) -> Error {
    Error::Parse {
        location: location.into(),
        message: message.into(),
    }
}

/// Parse a `coordinate complex hermitian` MatrixMarket text into (size, entries (i, j, z),
/// 0-based) and reject anything else.
///
/// # Errors
/// [`Error::Parse`] located at the line that does not parse (or at `MatrixMarket text` for
/// a missing header, size line or entries).
pub fn read(text: &str) -> Result<Parsed> {
    let mut lines = text.lines().enumerate();
    let (_, header) = lines
        .next()
        .ok_or_else(|| parse_error(WHOLE, "empty file"))?;
    if header.trim() != "%%MatrixMarket matrix coordinate complex hermitian" {
        return Err(parse_error(
            "line 1",
            format!("unexpected header '{header}'"),
        ));
    }
    let mut size = None;
    let mut expected = 0;
    let mut out: Vec<(usize, usize, Complex64)> = Vec::new();
    for (no, line) in lines {
        let line = line.trim();
        if line.is_empty() || line.starts_with('%') {
            continue;
        }
        let f: Vec<&str> = line.split_whitespace().collect();
        match size {
            None => {
                let nums: std::result::Result<Vec<usize>, _> =
                    f.iter().map(|x| x.parse::<usize>()).collect();
                match nums.as_deref() {
                    Ok([r, c, k]) if r == c => {
                        size = Some(*r);
                        expected = *k;
                        // one allocation of the announced size (bounded by the text's lines)
                        out.reserve_exact(expected.min(text.len() / 8));
                    }
                    _ => {
                        return Err(parse_error(
                            format!("line {}", no + 1),
                            format!("bad size line '{line}'"),
                        ))
                    }
                }
            }
            Some(n) => {
                let bad = || parse_error(format!("line {}", no + 1), format!("bad entry '{line}'"));
                if f.len() != 4 {
                    return Err(bad());
                }
                let i: usize = f[0].parse().map_err(|_| bad())?;
                let j: usize = f[1].parse().map_err(|_| bad())?;
                let re: f64 = f[2].parse().map_err(|_| bad())?;
                let im: f64 = f[3].parse().map_err(|_| bad())?;
                if i < j || i == 0 || j == 0 || i > n {
                    return Err(parse_error(
                        format!("line {}", no + 1),
                        format!(
                            "entry ({i}, {j}) is outside the lower triangle of a {n}x{n} matrix"
                        ),
                    ));
                }
                out.push((i - 1, j - 1, Complex64::new(re, im)));
            }
        }
    }
    let n = size.ok_or_else(|| parse_error(WHOLE, "no size line"))?;
    if out.len() != expected {
        return Err(parse_error(
            WHOLE,
            format!(
                "{} entries but the size line announces {expected}",
                out.len()
            ),
        ));
    }
    Ok((n, out))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matrix_market_round_trip() {
        // a 2x2 Hermitian matrix of invented entries; the header line is the MatrixMarket
        // exchange format's (NIST, common practice)
        let m = [
            [Complex64::new(1.0, 0.0), Complex64::new(0.5, -0.25)],
            [Complex64::new(0.5, 0.25), Complex64::new(-3.0, 0.0)],
        ];
        let (text, count) = write(&["c".into()], 2, 1, |i, j| m[i][j]);
        assert_eq!(count, 3);
        assert!(
            text.starts_with("%%MatrixMarket matrix coordinate complex hermitian\n% c\n2 2 3\n")
        );
        let (n, e) = read(&text).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(n, 2);
        for (i, j, z) in e {
            assert!(i >= j);
            assert!((m[i][j] - z).norm() < 1e-15);
        }
        assert!(read("%%MatrixMarket matrix coordinate real general\n1 1 0\n").is_err());
    }
}
