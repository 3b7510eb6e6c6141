//! Source scanning for `tests/layers.rs`: which file belongs to which module, and every use of
//! another module a file makes (`crate::NAME`, `crate::{..}`, `super::` paths that reach the
//! crate root, `ladderfan::NAME` in the binary), outside comments and literals.

use std::collections::{BTreeMap, BTreeSet};

/// One use of another module: where it is and what it names.
#[derive(Debug, Clone)]
pub(crate) struct Use {
    pub(crate) from: String,
    pub(crate) to: String,
    pub(crate) at: String,
}

/// The module a source file (path relative to `src/`, `/`-separated) belongs to; `None` for the
/// crate root `lib.rs`.
pub(crate) fn module_of(rel: &str) -> Option<String> {
    if rel == "lib.rs" {
        return None;
    }
    let first = rel.split('/').next().unwrap_or(rel);
    Some(first.trim_end_matches(".rs").to_string())
}

/// Module path of the file itself (`trust/bounds.rs` -> [trust, bounds], `trust/mod.rs` ->
/// [trust], `main.rs` -> [] (the binary's root), `units.rs` -> [units]).
fn file_path(rel: &str) -> Vec<String> {
    if rel == "main.rs" || rel == "lib.rs" {
        return Vec::new();
    }
    let mut parts: Vec<String> = rel
        .trim_end_matches(".rs")
        .split('/')
        .map(str::to_string)
        .collect();
    if parts.last().map(String::as_str) == Some("mod") {
        parts.pop();
    }
    parts
}

/// The source with comments, string literals and character literals blanked out (replaced by
/// spaces, newlines kept, so byte offsets and line numbers stay).
fn strip(src: &str) -> String {
    let b = src.as_bytes();
    let mut out = b.to_vec();
    let blank = |out: &mut Vec<u8>, from: usize, to: usize| {
        for c in out.iter_mut().take(to).skip(from) {
            if *c != b'\n' {
                *c = b' ';
            }
        }
    };
    let mut i = 0;
    while i < b.len() {
        match b[i] {
            b'/' if b.get(i + 1) == Some(&b'/') => {
                let end = src[i..].find('\n').map_or(b.len(), |k| i + k);
                blank(&mut out, i, end);
                i = end;
            }
            b'/' if b.get(i + 1) == Some(&b'*') => {
                let mut depth = 0;
                let mut j = i;
                while j < b.len() {
                    if b[j] == b'/' && b.get(j + 1) == Some(&b'*') {
                        depth += 1;
                        j += 2;
                    } else if b[j] == b'*' && b.get(j + 1) == Some(&b'/') {
                        depth -= 1;
                        j += 2;
                        if depth == 0 {
                            break;
                        }
                    } else {
                        j += 1;
                    }
                }
                blank(&mut out, i, j);
                i = j;
            }
            b'r' if (i == 0 || !is_ident(b[i - 1]))
                && matches!(b.get(i + 1), Some(b'"') | Some(b'#')) =>
            {
                // raw string r"..." or r#"..."#
                let hashes = b[i + 1..].iter().take_while(|&&c| c == b'#').count();
                if b.get(i + 1 + hashes) != Some(&b'"') {
                    i += 1;
                    continue;
                }
                let close = format!("\"{}", "#".repeat(hashes));
                let body = i + 2 + hashes;
                let end = src[body..]
                    .find(&close)
                    .map_or(b.len(), |k| body + k + close.len());
                blank(&mut out, i, end);
                i = end;
            }
            b'"' => {
                let mut j = i + 1;
                while j < b.len() && b[j] != b'"' {
                    j += if b[j] == b'\\' { 2 } else { 1 };
                }
                blank(&mut out, i, j + 1);
                i = j + 1;
            }
            b'\'' => {
                // a character literal ('x', '\n', '\u{..}'), else a lifetime or label
                let end = if b.get(i + 1) == Some(&b'\\') {
                    src[i + 2..].find('\'').map(|k| i + 2 + k + 1)
                } else {
                    let ch = src[i + 1..].chars().next().map_or(1, char::len_utf8);
                    (b.get(i + 1 + ch) == Some(&b'\'')).then_some(i + 2 + ch)
                };
                match end {
                    Some(e) => {
                        blank(&mut out, i, e);
                        i = e;
                    }
                    None => i += 1,
                }
            }
            _ => i += 1,
        }
    }
    String::from_utf8(out).unwrap_or_default()
}

fn is_ident(c: u8) -> bool {
    c.is_ascii_alphanumeric() || c == b'_'
}

/// The identifier starting at `i` (empty if none).
fn ident_at(s: &str, i: usize) -> &str {
    let b = s.as_bytes();
    let mut j = i;
    while j < b.len() && is_ident(b[j]) {
        j += 1;
    }
    &s[i..j]
}

/// First path segments named after `prefix::` at byte `i` of `s`: one identifier, or the
/// top-level items of a `{a, b::c, d}` group.
fn names_after(s: &str, i: usize) -> Vec<String> {
    let b = s.as_bytes();
    let mut j = i;
    while j < b.len() && b[j].is_ascii_whitespace() {
        j += 1;
    }
    if b.get(j) != Some(&b'{') {
        let name = ident_at(s, j);
        return if name.is_empty() {
            Vec::new()
        } else {
            vec![name.to_string()]
        };
    }
    let mut names = Vec::new();
    let (mut depth, mut expect) = (0usize, true);
    while j < b.len() {
        match b[j] {
            b'{' => {
                depth += 1;
                expect = depth == 1;
                j += 1;
            }
            b'}' => {
                depth -= 1;
                if depth == 0 {
                    break;
                }
                j += 1;
            }
            b',' => {
                expect = depth == 1;
                j += 1;
            }
            c if is_ident(c) && expect => {
                let name = ident_at(s, j);
                names.push(name.to_string());
                j += name.len();
                expect = false;
            }
            _ => j += 1,
        }
    }
    names
}

/// Every use of another module by the file `rel` (relative to `src/`). `root_names` maps a name
/// at the crate root of the library (a module or a re-export of `lib.rs`) to its module;
/// `bin_mods` are the modules of the binary (declared in `main.rs`).
pub(crate) fn uses_of(
    rel: &str,
    src: &str,
    root_names: &BTreeMap<String, String>,
    bin_mods: &BTreeSet<String>,
) -> Vec<Use> {
    let Some(from) = module_of(rel) else {
        return Vec::new();
    };
    let in_bin = from == "main" || bin_mods.contains(&from);
    let s = strip(src);
    let b = s.as_bytes();
    let path = file_path(rel);
    let line_of = |i: usize| s[..i].matches('\n').count() + 1;
    // a name at the root of this file's crate
    let resolve = |name: &str, lib_root: bool| -> String {
        if !lib_root && in_bin {
            if bin_mods.contains(name) {
                name.to_string()
            } else {
                "main".to_string()
            }
        } else {
            root_names
                .get(name)
                .cloned()
                .unwrap_or_else(|| format!("{name} (unknown name at the crate root)"))
        }
    };
    let mut out = Vec::new();
    let mut push = |names: Vec<String>, lib_root: bool, i: usize| {
        for n in names {
            let to = resolve(&n, lib_root);
            if to != from {
                out.push(Use {
                    from: from.clone(),
                    to,
                    at: format!("src/{rel}:{}", line_of(i)),
                });
            }
        }
    };
    let mut depth = 0usize;
    let mut inline_mods: Vec<usize> = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let boundary = i == 0 || !(is_ident(b[i - 1]) || b[i - 1] == b'$');
        let rest = &s[i..];
        if b[i] == b'{' {
            depth += 1;
        } else if b[i] == b'}' {
            if inline_mods.last() == Some(&depth) {
                inline_mods.pop();
            }
            depth = depth.saturating_sub(1);
        } else if boundary && rest.starts_with("mod ") {
            let name_at = i + 4 + rest[4..].len() - rest[4..].trim_start().len();
            let after = &s[name_at + ident_at(&s, name_at).len()..];
            if after.trim_start().starts_with('{') {
                inline_mods.push(depth + 1);
            }
        } else if boundary && rest.starts_with("crate::") {
            push(names_after(&s, i + 7), false, i);
            i += 7;
            continue;
        } else if boundary && in_bin && rest.starts_with("ladderfan::") {
            push(names_after(&s, i + 11), true, i);
            i += 11;
            continue;
        } else if boundary && rest.starts_with("super::") {
            let mut k = 0;
            let mut j = i;
            while s[j..].starts_with("super::") {
                k += 1;
                j += 7;
            }
            // the enclosing module path has path.len() + inline depth segments
            if k == path.len() + inline_mods.len() {
                push(names_after(&s, j), false, i);
            }
            i = j;
            continue;
        }
        i += 1;
    }
    out
}

/// Names at the library's root: every module declared in `lib.rs`, and every name it
/// re-exports with `pub use MODULE::NAME` or `pub use MODULE::{A, B}`.
pub(crate) fn root_names(lib_rs: &str) -> BTreeMap<String, String> {
    let s = strip(lib_rs);
    let mut names = BTreeMap::new();
    for stmt in s.split(';') {
        let stmt = stmt.trim();
        let words: Vec<&str> = stmt.split_whitespace().collect();
        if let Some(pos) = words.iter().position(|w| *w == "mod") {
            if let Some(name) = words.get(pos + 1) {
                names.insert(name.to_string(), name.to_string());
            }
        } else if let Some(rest) = stmt.strip_prefix("pub use ") {
            let rest = rest.trim().trim_start_matches("crate::");
            let module = ident_at(rest, 0).to_string();
            let tail = &rest[module.len()..].trim_start_matches("::");
            for item in tail.trim_matches(|c| c == '{' || c == '}').split(',') {
                let item = item.trim();
                let alias = item.rsplit(" as ").next().unwrap_or(item).trim();
                if !alias.is_empty() {
                    names.insert(alias.to_string(), module.clone());
                }
            }
        }
    }
    names
}

/// Modules declared in the binary's root `main.rs` (`mod cli;`).
pub(crate) fn bin_mods(main_rs: &str) -> BTreeSet<String> {
    strip(main_rs)
        .split(';')
        .filter_map(|stmt| {
            let words: Vec<&str> = stmt.split_whitespace().collect();
            let pos = words.iter().position(|w| *w == "mod")?;
            words.get(pos + 1).map(|w| w.to_string())
        })
        .collect()
}
