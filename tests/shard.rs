//! Sharded sweeps merge into exactly the single-run table: at library level (sweep::run on
//! each shard's block, tables formatted here) and through the binary (`fan`/`dispersion
//! --shard K/N` and `ladderfan merge`). Also: the merge refuses incomplete, duplicated or
//! inconsistent shard sets.

use ladderfan::shard::{merge, KeepGroups, Shard, ShardHeader, ShardTable};
use ladderfan::{models, sweep, FieldPoint, Settings, Spectrum};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

/// Invented parameters: a gapped 2D Dirac cone (v = 5e5 m/s, Delta = 12 meV).
fn model() -> ladderfan::Model {
    models::dirac2d(models::Dirac2dParams {
        velocity_m_per_s: 5e5,
        mass_mev: 12.0,
        valley: ladderfan::models::Valley::Plus,
        charge: -1.0,
    })
    .expect("model")
}

fn points(count: usize) -> Vec<FieldPoint> {
    sweep::grid(0.5, 9.0, count, sweep::Spacing::Linear)
        .expect("grid")
        .into_iter()
        .map(FieldPoint::field)
        .collect()
}

/// (sector "class:label", rank within the sector, energy) of every converged level.
fn labelled(s: &Spectrum) -> Vec<(String, usize, f64)> {
    let mut seen: BTreeMap<(usize, i64), usize> = BTreeMap::new();
    s.levels
        .iter()
        .filter(|l| l.is_converged())
        .map(|l| {
            let r = seen.entry((l.sector.class, l.sector.label)).or_insert(0);
            *r += 1;
            (
                format!("{}:{}", l.sector.class, l.sector.label),
                *r - 1,
                l.energy,
            )
        })
        .collect()
}

/// What every shard of one sweep shares besides its columns (the CLI puts its sidecar here).
fn context() -> Vec<String> {
    vec!["invented gapped Dirac cone, cutoff 80".to_string()]
}

fn table(name: String, header: ShardHeader, text: String) -> ShardTable {
    let mut t = ShardTable::new(name, header, text);
    t.context = context();
    t
}

/// Table grouped by (sector, rank), rows in point order within a group; `window` keeps only
/// the groups with some energy inside it (None: keep all).
fn grouped_table(spectra: &[Spectrum], window: Option<(f64, f64)>) -> String {
    let mut groups: BTreeMap<(Vec<i64>, usize), Vec<String>> = BTreeMap::new();
    for s in spectra {
        for (sector, rank, e) in labelled(s) {
            let key: Vec<i64> = sector.split(':').map(|x| x.parse().expect("int")).collect();
            groups
                .entry((key, rank))
                .or_default()
                .push(format!("{:e},{sector},{rank},{e:e}", s.point.field));
        }
    }
    let mut t = "field,sector,rank,energy\n".to_string();
    for rows in groups.values() {
        let enters = window.map_or(true, |(lo, hi)| {
            rows.iter().any(|r| {
                let e: f64 = r
                    .rsplit(',')
                    .next()
                    .and_then(|x| x.parse().ok())
                    .expect("e");
                e >= lo && e <= hi
            })
        });
        if enters {
            for r in rows {
                t.push_str(r);
                t.push('\n');
            }
        }
    }
    t
}

/// Table in point order: the lowest 6 converged levels of each point.
fn point_table(spectra: &[Spectrum]) -> String {
    let mut t = "field,index,energy\n".to_string();
    for s in spectra {
        for (i, l) in s.converged().take(6).enumerate() {
            t.push_str(&format!("{:e},{i},{:e}\n", s.point.field, l.energy));
        }
    }
    t
}

fn solve(pts: &[FieldPoint]) -> Vec<Spectrum> {
    sweep::run(&model(), pts, &Settings::with_cutoff(80)).expect("sweep")
}

#[test]
fn grouped_shards_merge_into_the_single_run_table_with_the_global_window_rule() {
    let pts = points(29);
    let whole = solve(&pts);
    // window chosen so that some (sector, rank) groups enter it only at high field, in the
    // last shards: those groups must still appear in full, and others must be dropped
    let window = (20.0, 60.0);
    let single = grouped_table(&whole, Some(window));
    let everything = grouped_table(&whole, None);
    assert!(
        single.lines().count() < everything.lines().count(),
        "the window must drop some groups for this test to exercise the filter"
    );
    for n in [1usize, 2, 3, 7, 29] {
        let mut shards = Vec::new();
        let mut local_sets = Vec::new();
        for k in (1..=n).rev() {
            let s = Shard { index: k, count: n };
            let part = solve(s.select(&pts).expect("select"));
            let h = ShardHeader {
                shard: s,
                total_points: pts.len(),
                group_by: vec!["sector".into(), "rank".into()],
                keep: Some(KeepGroups {
                    column: "energy".into(),
                    lo: window.0,
                    hi: window.1,
                }),
            };
            local_sets.push(grouped_table(&part, Some(window)));
            shards.push(table(format!("part{k}"), h, grouped_table(&part, None)));
        }
        let merged = merge(&shards).expect("merge");
        assert_eq!(merged, single, "{n} shards");
        if n > 1 {
            // filtering each shard on its own would lose rows: the global rule matters
            let local_rows: usize = local_sets.iter().map(|t| t.lines().count() - 1).sum();
            assert!(local_rows < single.lines().count() - 1, "{n} shards");
        }
    }
}

#[test]
fn point_ordered_shards_concatenate_into_the_single_run_table() {
    let pts = points(17);
    let single = point_table(&solve(&pts));
    for n in [1usize, 4, 17] {
        let shards: Vec<ShardTable> = (1..=n)
            .map(|k| {
                let s = Shard { index: k, count: n };
                let t = point_table(&solve(s.select(&pts).expect("select")));
                table(format!("{k}"), ShardHeader::new(s, pts.len()), t)
            })
            .collect();
        assert_eq!(merge(&shards).expect("merge"), single, "{n} shards");
    }
}

fn three_shards() -> Vec<ShardTable> {
    let pts = points(9);
    (1..=3)
        .map(|k| {
            let s = Shard { index: k, count: 3 };
            let t = point_table(&solve(s.select(&pts).expect("select")));
            table(format!("s{k}.csv"), ShardHeader::new(s, pts.len()), t)
        })
        .collect()
}

fn merge_error(tables: &[ShardTable]) -> String {
    match merge(tables) {
        Ok(_) => panic!("merge accepted a bad shard set"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn merge_refuses_missing_duplicate_and_foreign_shards() {
    let good = three_shards();
    assert!(merge(&good).is_ok());
    let missing = merge_error(&good[..2]);
    assert!(missing.contains("3/3 missing"), "{missing}");
    let mut dup = good.clone();
    dup.push(good[1].clone());
    assert!(merge_error(&dup).contains("given twice"));
    // a shard of another sweep: a different context line
    let mut foreign = good.clone();
    foreign[2].context = vec!["invented gapped Dirac cone, cutoff 90".to_string()];
    assert!(merge_error(&foreign).contains("differs"));
    // a shard of a split into a different N
    let mut other_n = good.clone();
    other_n[0].header = ShardHeader::new(Shard { index: 1, count: 2 }, 9);
    assert!(merge_error(&other_n).contains("not from one sweep"));
    // a point present in two shards (a row copied across)
    let mut twice = good.clone();
    let row = good[0].text.lines().last().unwrap_or_default().to_string();
    twice[1].text.push_str(&row);
    twice[1].text.push('\n');
    assert!(merge_error(&twice).contains("also appears in s1.csv"));
    // a table with a comment line (the format before the sidecars)
    let mut old = good.clone();
    old[0].text = format!("# shard 1/3\n{}", old[0].text);
    assert!(merge_error(&old).contains("s1.csv:1"));
}

// ---- through the binary -------------------------------------------------------------------

fn bin() -> &'static str {
    env!("CARGO_BIN_EXE_ladderfan")
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("ladderfan-shard-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).expect("scratch dir");
    d
}

fn run_ok(args: &[&str]) {
    let out = Command::new(bin())
        .args(args)
        .output()
        .expect("run ladderfan");
    assert!(
        out.status.success(),
        "ladderfan {args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn cli_round_trip(command: &str, model_args: &[&str], n: usize) {
    let dir = scratch(command);
    let single = dir.join("single");
    let mut a: Vec<&str> = vec![command];
    a.extend_from_slice(model_args);
    let single_s = single.to_string_lossy().to_string();
    run_ok(&[a.clone(), vec!["--out", &single_s]].concat());
    let mut shard_files = Vec::new();
    for k in (1..=n).rev() {
        let d = dir.join(format!("s{k}"));
        let ds = d.to_string_lossy().to_string();
        let spec = format!("{k}/{n}");
        run_ok(&[a.clone(), vec!["--shard", &spec, "--out", &ds]].concat());
        shard_files.push(
            d.join(format!("{command}.csv"))
                .to_string_lossy()
                .to_string(),
        );
    }
    let merged = dir.join("merged.csv").to_string_lossy().to_string();
    let mut m = vec!["merge", merged.as_str()];
    m.extend(shard_files.iter().map(String::as_str));
    run_ok(&m);
    let expect = read(&single.join(format!("{command}.csv")));
    let got = read(Path::new(&merged));
    assert!(
        expect.lines().count() > 50,
        "the sweep table is nearly empty"
    );
    assert!(
        got == expect,
        "merged {command} table differs from the single run"
    );
    // the merged table has its own sidecar: the single run's columns, no shard object
    let side = |p: &Path| -> serde_json::Value {
        serde_json::from_str(&read(p)).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
    };
    let merged_meta = side(&dir.join("merged.meta.json"));
    let single_meta = side(&single.join(format!("{command}.meta.json")));
    assert_eq!(merged_meta["columns"], single_meta["columns"]);
    assert!(merged_meta.get("shard").is_none(), "{merged_meta}");
    assert_eq!(
        side(&dir.join("s1").join(format!("{command}.meta.json")))["shard"]["shard"]["index"],
        1
    );
    // a shard without its sidecar is refused, naming the missing file
    let lone = dir.join("s1").join(format!("{command}.meta.json"));
    std::fs::remove_file(&lone).unwrap_or_else(|e| panic!("{e}"));
    let r = Command::new(bin()).args(&m).output().expect("run");
    assert_eq!(r.status.code(), Some(2));
    let err = String::from_utf8_lossy(&r.stderr);
    assert!(err.contains(&*lone.to_string_lossy()), "{err}");
    // an incomplete set is refused with exit code 2
    let status = Command::new(bin())
        .args(["merge", &merged, &shard_files[0]])
        .output()
        .expect("run");
    assert_eq!(status.status.code(), Some(2));
    let _ = std::fs::remove_dir_all(&dir);
}

fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("read {}: {e}", p.display()))
}

#[test]
fn cli_fan_shards_merge_into_the_single_run_csv() {
    cli_round_trip(
        "fan",
        &[
            "--builtin",
            "dirac2d",
            "--set",
            "mass_mev=5",
            "--points",
            "31",
            "--cutoff",
            "120",
        ],
        4,
    );
}

#[test]
fn cli_dispersion_shards_merge_into_the_single_run_csv() {
    cli_round_trip(
        "dispersion",
        &["--builtin", "weyl", "--points", "23", "--cutoff", "100"],
        3,
    );
}

#[test]
fn cli_rejects_bad_shards() {
    let dir = scratch("bad");
    let d = dir.to_string_lossy().to_string();
    for spec in ["0/3", "4/3", "x", "2/100"] {
        let out = Command::new(bin())
            .args([
                "fan",
                "--builtin",
                "dirac2d",
                "--points",
                "5",
                "--shard",
                spec,
                "--out",
                &d,
            ])
            .output()
            .expect("run");
        assert_eq!(out.status.code(), Some(2), "--shard {spec}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("shard"), "{err}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
