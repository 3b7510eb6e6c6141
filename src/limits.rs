//! Limits on every size that comes from input, in one place.
//!
//! Each limit is far above any physically sensible use and far below what would exhaust the
//! stack or the memory of the process; input beyond a limit is refused with an
//! [`crate::Error::Parse`] or [`crate::Error::BadNumber`] that names the limit (the README,
//! section Errors, lists them).

/// Deepest nesting of an expression (model-file expressions, `--set`, `--formula`, `--case`):
/// parentheses, signs, powers and function calls, counted together. Deeper expressions are
/// refused before they can overflow the parser's stack.
pub const MAX_EXPRESSION_DEPTH: usize = 200;

/// Longest expression text, in bytes. Together with [`MAX_EXPRESSION_DEPTH`] this bounds the
/// depth of a compiled expression tree (a chain `1+1+...` of this length is about 5000 deep).
pub const MAX_EXPRESSION_LEN: usize = 10_000;

/// Most factors in a Pauli/Kronecker string: 2^6 = 64 components, the most a model may have.
/// The length is checked before the Kronecker product is formed.
pub const MAX_PAULI_FACTORS: usize = 6;

/// Longest name (model, component, parameter, term label), in characters.
pub const MAX_NAME_LEN: usize = 256;

/// Largest model file, in bytes (16 MiB).
pub const MAX_MODEL_FILE_BYTES: usize = 16 << 20;

/// Most points of an energy grid (`dos --energy-points`).
pub const MAX_ENERGY_POINTS: usize = 1_000_000;

/// Most points of a field or kz sweep (`--points`).
pub const MAX_SWEEP_POINTS: usize = 100_000;

/// Most worker threads (`--threads`); more are refused rather than started.
pub const MAX_THREADS: usize = 1024;

/// Longest excerpt of a user's text quoted in a message, in characters.
pub const MAX_QUOTED_LEN: usize = 60;

/// `s` shortened to [`MAX_QUOTED_LEN`] characters (with `...` when cut) and with control
/// characters escaped (`\n`, `\u{0}`), for messages that quote input: an error stays one
/// readable line whatever the input.
///
/// # Examples
/// ```
/// let long = "x".repeat(100);
/// assert_eq!(ladderfan::limits::excerpt(&long).chars().count(), 63);
/// assert_eq!(ladderfan::limits::excerpt("kx"), "kx");
/// assert_eq!(ladderfan::limits::excerpt("a\nb"), "a\\nb");
/// ```
pub fn excerpt(s: &str) -> String {
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i == MAX_QUOTED_LEN {
            out.push_str("...");
            break;
        }
        if c.is_control() {
            out.extend(c.escape_debug());
        } else {
            out.push(c);
        }
    }
    out
}

/// Longest word (a run without whitespace) of a message, in characters; longer words are
/// quoted input and are shortened with [`excerpt`].
pub const MAX_MESSAGE_WORD: usize = 100;

/// Longest message, in characters.
pub const MAX_MESSAGE_LEN: usize = 1500;

/// `message` as one bounded line: control characters escaped, every word longer than
/// [`MAX_MESSAGE_WORD`] shortened, the whole at most [`MAX_MESSAGE_LEN`] characters. Applied
/// to the messages of [`crate::Error::Parse`], which quote the user's input.
///
/// # Examples
/// ```
/// let m = format!("unknown name '{}'; define it", "a".repeat(5000));
/// let b = ladderfan::limits::bounded(&m);
/// assert!(b.len() < 200 && b.ends_with("; define it"));
/// ```
pub fn bounded(message: &str) -> String {
    let words: Vec<String> = message
        .split(' ')
        .map(|w| {
            if w.chars().count() > MAX_MESSAGE_WORD || w.chars().any(char::is_control) {
                let mut e = excerpt(w);
                if w.chars().count() <= MAX_QUOTED_LEN {
                    return e;
                }
                // keep a closing quote or punctuation of the shortened word
                if let Some(last) = w.chars().last().filter(|c| !c.is_alphanumeric()) {
                    e.push(last);
                }
                e
            } else {
                w.to_string()
            }
        })
        .collect();
    let joined = words.join(" ");
    if joined.chars().count() > MAX_MESSAGE_LEN {
        format!(
            "{}...",
            joined.chars().take(MAX_MESSAGE_LEN).collect::<String>()
        )
    } else {
        joined
    }
}
