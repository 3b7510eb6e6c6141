//! The dependency rule of DEVELOPERS.md ("Module map and dependency rule"), checked on the
//! source: every module of `src/` is in the map and every mapped module exists; a module uses
//! only modules of its own row of the map or of rows above it; and the modules of one row use
//! each other without cycles.
//!
//! A "module" is a top-level module of the crate: `src/NAME.rs` or the directory `src/NAME/`;
//! `src/main.rs` is the module `main`, and `src/lib.rs` (the module list and its re-exports) is
//! the crate root, not a module. A use is any path `crate::NAME`, `crate::{NAME, ..}`,
//! `super::..` climbing to the crate root, or (in the binary: `main` and `cli/`)
//! `ladderfan::NAME`, outside comments and string literals. A name re-exported by `lib.rs`
//! (`crate::Error`) counts as a use of the module it comes from.
//!
//! Uses listed under "Known exceptions" in DEVELOPERS.md are allowed (each names why and who
//! removes it); an exception that no longer occurs is reported, so the list only shrinks.

mod layers_scan;

use layers_scan::{bin_mods, module_of, root_names, uses_of, Use};
use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

/// Heading of the section of DEVELOPERS.md whose first table is the module map.
const HEADING: &str = "## Module map and dependency rule";

/// Heading (below [`HEADING`]) of the table of known exceptions: `| from | to | why |`.
const EXCEPTIONS: &str = "### Known exceptions";

/// The (from, to) pairs of the first table after the [`EXCEPTIONS`] heading at the start of `md`.
fn parse_exceptions(md: &str) -> Result<BTreeSet<(String, String)>, String> {
    let mut out = BTreeSet::new();
    let mut in_table = false;
    for line in md.lines().skip(1) {
        let line = line.trim();
        if !line.starts_with('|') {
            if in_table {
                break;
            }
            continue;
        }
        in_table = true;
        let cells: Vec<&str> = line.trim_matches('|').split('|').map(str::trim).collect();
        if cells[0] == "from" || cells[0].starts_with("---") {
            continue;
        }
        let name = |c: &str| c.trim_matches('`').trim_end_matches('/').to_string();
        match cells.as_slice() {
            [from, to, why, ..] if !why.is_empty() => {
                out.insert((name(from), name(to)));
            }
            _ => {
                return Err(format!(
                    "known exception {line:?}: want | from | to | why |"
                ))
            }
        }
    }
    Ok(out)
}

/// One table entry: a module name and whether it may be absent from `src/` (marked
/// "(planned)": not written yet; "(retiring)": being folded into another module).
#[derive(Debug, Clone)]
struct Entry {
    name: String,
    optional: bool,
}

/// The module map: rows in order (row 0 is the lowest layer), each with its label and entries,
/// and the known exceptions: uses (from, to) that break the rule today and are being removed.
#[derive(Debug)]
struct Map {
    rows: Vec<(String, Vec<Entry>)>,
    exceptions: BTreeSet<(String, String)>,
}

impl Map {
    /// Parses the first markdown table after [`HEADING`]: `| layer | group | modules |`, the
    /// modules a comma-separated list of backticked names, each optionally followed by
    /// "(planned)" or "(retiring)".
    fn parse(md: &str) -> Result<Map, String> {
        let start = md
            .find(HEADING)
            .ok_or_else(|| format!("DEVELOPERS.md has no heading {HEADING:?}"))?;
        let mut rows = Vec::new();
        let mut in_table = false;
        for line in md[start..].lines().skip(1) {
            let line = line.trim();
            if !line.starts_with('|') {
                if in_table {
                    break;
                }
                continue;
            }
            in_table = true;
            let cells: Vec<&str> = line.trim_matches('|').split('|').map(str::trim).collect();
            if cells.len() < 3 {
                return Err(format!(
                    "module map row {line:?}: want | layer | group | modules |"
                ));
            }
            if cells[0] == "layer" || cells[0].starts_with("---") {
                continue;
            }
            let mut entries = Vec::new();
            for item in cells[2].split(',') {
                let item = item.trim();
                let name = item
                    .strip_prefix('`')
                    .and_then(|rest| rest.split('`').next())
                    .ok_or_else(|| format!("module map row {line:?}: {item:?} is not `name`"))?
                    .trim_end_matches('/');
                let tail = item.rsplit('`').next().unwrap_or("").trim();
                let optional = match tail {
                    "" => false,
                    "(planned)" | "(retiring)" => true,
                    other => {
                        return Err(format!(
                            "module map row {line:?}: unknown marker {other:?} after `{name}` \
                             (use (planned) or (retiring))"
                        ))
                    }
                };
                entries.push(Entry {
                    name: name.to_string(),
                    optional,
                });
            }
            rows.push((format!("{} {}", cells[0], cells[1]), entries));
        }
        if rows.is_empty() {
            return Err(format!("no table under {HEADING:?} in DEVELOPERS.md"));
        }
        let exceptions = match md[start..].find(EXCEPTIONS) {
            Some(k) => parse_exceptions(&md[start + k..])?,
            None => BTreeSet::new(),
        };
        Ok(Map { rows, exceptions })
    }

    /// Row index of every mapped module.
    fn rank(&self) -> BTreeMap<&str, usize> {
        let mut rank = BTreeMap::new();
        for (r, (_, entries)) in self.rows.iter().enumerate() {
            for e in entries {
                rank.insert(e.name.as_str(), r);
            }
        }
        rank
    }
}

/// Every problem with the map and the uses, one message each (empty when the rule holds).
/// `files` are (path relative to `src/`, text) and must include `lib.rs` and `main.rs`.
fn check(map_md: &str, files: &[(String, String)]) -> Vec<String> {
    let map = match Map::parse(map_md) {
        Ok(m) => m,
        Err(e) => return vec![e],
    };
    let mut problems = Vec::new();
    let rank = map.rank();
    let text = |name: &str| {
        files
            .iter()
            .find(|(p, _)| p == name)
            .map_or("", |(_, t)| t.as_str())
    };
    let present: BTreeSet<String> = files.iter().filter_map(|(p, _)| module_of(p)).collect();
    // (a) the map and the tree agree
    let mut seen = BTreeSet::new();
    for (label, entries) in &map.rows {
        for e in entries {
            if !seen.insert(e.name.clone()) {
                problems.push(format!("module `{}` appears twice in the map", e.name));
            }
            if !e.optional && !present.contains(&e.name) {
                problems.push(format!(
                    "the map lists `{}` (row {label}) but src/ has neither {0}.rs nor {0}/; \
                     remove it from the map or mark it (planned)",
                    e.name
                ));
            }
        }
    }
    for m in &present {
        if !rank.contains_key(m.as_str()) {
            problems.push(format!(
                "src/ module `{m}` is not in the module map of DEVELOPERS.md: add it to a row"
            ));
        }
    }
    // (b) uses go to the own row or a row above
    let roots = root_names(text("lib.rs"));
    let bins = bin_mods(text("main.rs"));
    let uses: Vec<Use> = files
        .iter()
        .flat_map(|(p, t)| uses_of(p, t, &roots, &bins))
        .collect();
    let excepted = |u: &Use| map.exceptions.contains(&(u.from.clone(), u.to.clone()));
    for (from, to) in &map.exceptions {
        if !uses.iter().any(|u| &u.from == from && &u.to == to) {
            problems.push(format!(
                "known exception `{from}` -> `{to}` no longer occurs: remove it from the table"
            ));
        }
    }
    let uses: Vec<Use> = uses.into_iter().filter(|u| !excepted(u)).collect();
    for u in &uses {
        match (rank.get(u.from.as_str()), rank.get(u.to.as_str())) {
            (Some(&rf), Some(&rt)) if rt > rf => problems.push(format!(
                "{}: `{}` (row {}) uses `{}` (row {}), a higher layer",
                u.at, u.from, map.rows[rf].0, u.to, map.rows[rt].0
            )),
            (Some(_), None) => problems.push(format!(
                "{}: `{}` uses `{}`, which is not in the module map",
                u.at, u.from, u.to
            )),
            _ => {}
        }
    }
    // (c) no cycles inside one row
    problems.extend(cycles(&uses, &rank));
    problems
}

/// Cycles among modules of one row, each reported once as a path `a -> b -> a` with the place
/// of each use.
fn cycles(uses: &[Use], rank: &BTreeMap<&str, usize>) -> Vec<String> {
    let mut edges: BTreeMap<&str, BTreeMap<&str, &str>> = BTreeMap::new();
    for u in uses {
        let (Some(rf), Some(rt)) = (rank.get(u.from.as_str()), rank.get(u.to.as_str())) else {
            continue;
        };
        if rf == rt {
            edges
                .entry(u.from.as_str())
                .or_default()
                .entry(u.to.as_str())
                .or_insert(u.at.as_str());
        }
    }
    let mut reported: BTreeSet<BTreeSet<&str>> = BTreeSet::new();
    let mut out = Vec::new();
    for &start in edges.keys() {
        // depth-first search for a path back to `start`
        let mut stack: Vec<(&str, Vec<&str>)> = vec![(start, vec![start])];
        let mut visited = BTreeSet::new();
        while let Some((node, path)) = stack.pop() {
            for (&next, _) in edges.get(node).into_iter().flatten() {
                if next == start {
                    let members: BTreeSet<&str> = path.iter().copied().collect();
                    if reported.insert(members) {
                        let mut text = String::new();
                        for w in path.iter().zip(path.iter().skip(1).chain([&start])) {
                            let at = edges[w.0][*w.1];
                            text.push_str(&format!("{} -> {} ({at}); ", w.0, w.1));
                        }
                        out.push(format!(
                            "cycle between modules of one layer: {} -> {start}: {}",
                            path.join(" -> "),
                            text.trim_end_matches("; ")
                        ));
                    }
                } else if visited.insert(next) {
                    let mut p = path.clone();
                    p.push(next);
                    stack.push((next, p));
                }
            }
        }
    }
    out
}

/// Every `.rs` file under `dir`, as (path relative to `root`, text).
fn read_tree(root: &Path, dir: &Path, out: &mut Vec<(String, String)>) {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("read {}: {e}", dir.display()))
        .map(|e| e.expect("directory entry").path())
        .collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            read_tree(root, &p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            let rel = p.strip_prefix(root).expect("under src/");
            let rel = rel
                .components()
                .map(|c| c.as_os_str().to_string_lossy().into_owned())
                .collect::<Vec<_>>()
                .join("/");
            let text = std::fs::read_to_string(&p).expect("read source");
            out.push((rel, text));
        }
    }
}

#[test]
fn module_map_and_dependency_rule_hold() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let md = std::fs::read_to_string(root.join("DEVELOPERS.md")).expect("read DEVELOPERS.md");
    let mut files = Vec::new();
    read_tree(&root.join("src"), &root.join("src"), &mut files);
    assert!(
        files.len() > 20,
        "found only {} source files under src/",
        files.len()
    );
    let problems = check(&md, &files);
    assert!(
        problems.is_empty(),
        "{} violation(s) of the module map in DEVELOPERS.md:\n{}",
        problems.len(),
        problems.join("\n")
    );
}

/// The checker itself: a made-up map and made-up sources with one upward use, one cycle, one
/// module missing from the map and one mapped module missing from the tree must each be
/// reported; the same tree with the violations removed must pass.
#[test]
fn checker_reports_made_up_violations() {
    let md = "# x\n\n## Module map and dependency rule\n\n\
              | layer | group | modules |\n|---|---|---|\n\
              | 0 | base | `error`, `future` (planned) |\n\
              | 1 | middle | `alpha`, `beta`, `gamma/` |\n\
              | 2 | top | `front`, `main`, `cli` |\n\n## Next\n";
    let f = |p: &str, t: &str| (p.to_string(), t.to_string());
    let good = vec![
        f(
            "lib.rs",
            "pub mod error; pub mod alpha; pub mod beta; pub mod gamma; pub mod front;\n\
             pub use error::{Error, Result as R};\n",
        ),
        f("main.rs", "mod cli;\nuse ladderfan::front;\nfn main() {}\n"),
        f("cli/mod.rs", "use crate::cli::x;\nuse ladderfan::{alpha, Error};\n"),
        f("error.rs", "pub enum Error {}\n"),
        f(
            "alpha.rs",
            "use crate::Error;\n// crate::front in a comment\nconst S: &str = \"crate::front\";\n\
             fn f() { let c = '\"'; crate::beta::g(); }\n#[cfg(test)]\nmod tests { use super::*; }\n",
        ),
        f("beta.rs", "use crate::{error::Error, gamma};\n"),
        f("gamma/mod.rs", "pub mod inner;\n"),
        f("gamma/inner.rs", "use super::super::error::Error;\nuse super::x;\n"),
        f("front.rs", "use crate::{alpha, beta::{g, h}};\n"),
    ];
    let clean = check(md, &good);
    assert!(clean.is_empty(), "the clean tree must pass: {clean:?}");

    let mut bad = good.clone();
    // upward use (row 1 -> row 2), found through a grouped import and through super::super
    bad.push(f("gamma/up.rs", "use super::super::{front, error};\n"));
    // cycle alpha -> beta -> gamma -> alpha (row 1)
    bad.push(f("gamma/back.rs", "fn h() { crate::alpha::f(); }\n"));
    // a module outside the map
    bad.push(f("stray.rs", "\n"));
    // a mapped, not optional module removed from the tree
    bad.retain(|(p, _)| p != "error.rs");
    let problems = check(md, &bad);
    let has = |needle: &str| problems.iter().any(|p| p.contains(needle));
    assert!(
        has("src/gamma/up.rs:1: `gamma` (row 1 middle) uses `front` (row 2 top), a higher layer"),
        "{problems:#?}"
    );
    assert!(
        has("cycle between modules of one layer: alpha -> beta -> gamma -> alpha"),
        "{problems:#?}"
    );
    assert!(
        has("src/ module `stray` is not in the module map"),
        "{problems:#?}"
    );
    assert!(has("the map lists `error`"), "{problems:#?}");
    assert!(
        !has("future"),
        "a planned entry may be absent: {problems:#?}"
    );
    assert_eq!(problems.len(), 4, "{problems:#?}");

    // a known exception lifts the upward use and breaks the cycle; a stale one is reported
    let excepted = md.replace(
        "## Next",
        "### Known exceptions\n\n| from | to | why |\n|---|---|---|\n\
         | `gamma` | `front` | made up |\n| `gamma` | `alpha` | made up |\n\
         | `beta` | `front` | made up, stale |\n\n## Next",
    );
    let problems = check(&excepted, &bad);
    let has = |needle: &str| problems.iter().any(|p| p.contains(needle));
    assert!(!has("a higher layer") && !has("cycle"), "{problems:#?}");
    assert!(
        has("known exception `beta` -> `front` no longer occurs"),
        "{problems:#?}"
    );
    assert_eq!(problems.len(), 3, "{problems:#?}");
}
