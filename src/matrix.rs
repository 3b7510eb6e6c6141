//! Spinor-space matrices: Pauli/Kronecker shorthand and explicit complex matrices.
//!
//! A `d x d` matrix acting on the spinor components is a [`SpinMatrix`] (an alias of
//! `nalgebra::DMatrix<Complex64>`). The shorthand [`pauli`] builds Kronecker products of
//! Pauli matrices from a string: each character is one 2x2 factor, leftmost factor outermost.
//!
//! | char | matrix |
//! |---|---|
//! | `0` or `i` | identity |
//! | `x`, `y`, `z` | sigma_x, sigma_y, sigma_z |
//! | `+` | sigma_+ = (sigma_x + i sigma_y)/2 = `[[0,1],[0,0]]` |
//! | `-` | sigma_- = (sigma_x - i sigma_y)/2 = `[[0,0],[1,0]]` |
//! | `u`, `d` | projectors (1 + sigma_z)/2, (1 - sigma_z)/2 |
//!
//! Separators `⊗`, `*`, ` ` and `.` are ignored, so `"x⊗z"`, `"x*z"` and `"xz"` are all
//! sigma_x ⊗ sigma_z.

use crate::error::{Error, Result};
use nalgebra::DMatrix;
use num_complex::Complex64;

/// A complex matrix on the spinor components.
pub type SpinMatrix = DMatrix<Complex64>;

const fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

fn pauli_factor(ch: char) -> Option<[[Complex64; 2]; 2]> {
    let z = c(0.0, 0.0);
    let one = c(1.0, 0.0);
    Some(match ch {
        '0' | 'i' | 'I' | '1' => [[one, z], [z, one]],
        'x' | 'X' => [[z, one], [one, z]],
        'y' | 'Y' => [[z, c(0.0, -1.0)], [c(0.0, 1.0), z]],
        'z' | 'Z' => [[one, z], [z, -one]],
        '+' => [[z, one], [z, z]],
        '-' => [[z, z], [one, z]],
        'u' | 'U' => [[one, z], [z, z]],
        'd' | 'D' => [[z, z], [z, one]],
        _ => return None,
    })
}

/// Kronecker product of Pauli-like 2x2 factors given as a string (see the module docs).
///
/// # Errors
/// [`Error::Parse`] for an unknown character or an empty string.
///
/// # Examples
/// ```
/// use ladderfan::matrix::pauli;
/// let m = pauli("x⊗z").unwrap();
/// assert_eq!(m.nrows(), 4);
/// assert_eq!(m[(0, 2)].re, 1.0); // sigma_x ⊗ sigma_z: (0,2) = 1 * 1
/// assert_eq!(m[(1, 3)].re, -1.0);
/// ```
pub fn pauli(spec: &str) -> Result<SpinMatrix> {
    // read and count every factor before any product is formed: a string of k factors is a
    // 2^k x 2^k matrix, so the length is checked first
    let mut factors = Vec::new();
    for ch in spec.chars() {
        if matches!(ch, '⊗' | '*' | ' ' | '.' | '_') {
            continue;
        }
        let f = pauli_factor(ch).ok_or_else(|| Error::Parse {
            location: format!("matrix \"{}\"", crate::limits::excerpt(spec)),
            message: format!(
                "unknown Pauli factor '{ch}'; use 0 (identity), x, y, z, +, -, u, d, joined by ⊗ or *"
            ),
        })?;
        factors.push(f);
        if factors.len() > crate::limits::MAX_PAULI_FACTORS {
            return Err(Error::Parse {
                location: format!("matrix \"{}\"", crate::limits::excerpt(spec)),
                message: format!(
                    "the Pauli string has more than {max} factors (a {max}-factor string is \
                     already {d}x{d}, the most components a model may have); give at most {max} \
                     factors",
                    max = crate::limits::MAX_PAULI_FACTORS,
                    d = 1usize << crate::limits::MAX_PAULI_FACTORS
                ),
            });
        }
    }
    let mut out = DMatrix::from_element(1, 1, c(1.0, 0.0));
    for f in &factors {
        let f = DMatrix::from_fn(2, 2, |r, col| f[r][col]);
        out = out.kronecker(&f);
    }
    if factors.is_empty() {
        return Err(Error::Parse {
            location: format!("matrix \"{}\"", crate::limits::excerpt(spec)),
            message: "empty Pauli string; give at least one factor such as \"z\"".into(),
        });
    }
    Ok(out)
}

/// `pauli(spec)` for a spec known to be valid at compile time (built-in models).
pub(crate) fn pauli_const(spec: &str) -> SpinMatrix {
    match pauli(spec) {
        Ok(m) => m,
        Err(_) => unreachable!("built-in Pauli spec {spec} is valid"),
    }
}

/// Identity matrix of size `d`.
pub fn identity(d: usize) -> SpinMatrix {
    DMatrix::identity(d, d)
}

/// Matrix with a single 1 at (row, col): the elementary matrix E_{row,col}.
pub fn unit(d: usize, row: usize, col: usize) -> SpinMatrix {
    let mut m = DMatrix::zeros(d, d);
    m[(row, col)] = c(1.0, 0.0);
    m
}

/// Real diagonal matrix.
pub fn diag(values: &[f64]) -> SpinMatrix {
    let n = values.len();
    DMatrix::from_fn(n, n, |r, col| {
        if r == col {
            c(values[r], 0.0)
        } else {
            c(0.0, 0.0)
        }
    })
}

/// Explicit matrix from complex rows; every row must have the same length as there are rows.
///
/// # Errors
/// [`Error::InvalidModel`] when the rows do not form a square matrix.
pub fn from_rows(rows: &[Vec<Complex64>]) -> Result<SpinMatrix> {
    let n = rows.len();
    if n == 0 || rows.iter().any(|r| r.len() != n) {
        return Err(Error::InvalidModel {
            what: format!(
                "matrix rows have lengths {:?} but a square {n}x{n} matrix is needed",
                rows.iter().map(Vec::len).collect::<Vec<_>>()
            ),
            fix: "give as many entries in each row as there are rows".into(),
        });
    }
    Ok(DMatrix::from_fn(n, n, |r, col| rows[r][col]))
}
