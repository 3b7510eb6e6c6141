//! JSON records -> the column table `ladderfan plot` draws: a sweep (`fan`, `dispersion`:
//! `values` and `tracks`), an optics fan (`points` with `transitions`) or a density of
//! states (`dos`). Columns follow the CSV names (`field_<unit>`, `kz_<unit>`,
//! `energy_<unit>`, `track`, `landau_index`, ...), so the same drawing code serves both.

use super::common::{bad_flag, CliResult};
use super::plot::Table;
use serde_json::Value;

fn unit(v: &Value, key: &str) -> String {
    v.pointer(&format!("/units/{key}"))
        .and_then(Value::as_str)
        .unwrap_or("")
        .replace(['^', '-', '/', ' '], "")
}

fn col(q: &str, u: &str) -> String {
    if u.is_empty() {
        q.to_string()
    } else {
        format!("{q}_{u}")
    }
}

fn num(v: &Value) -> String {
    v.as_f64().map(|x| format!("{x:e}")).unwrap_or_default()
}

fn sweep(v: &Value, values: &[Value], tracks: &[Value]) -> Table {
    let kz = v.get("swept").and_then(Value::as_str) == Some("kz");
    let x = if kz {
        col("kz", &unit(v, "wavenumber"))
    } else {
        col("field", &unit(v, "field"))
    };
    let header = vec![
        x,
        "track".into(),
        "landau_index".into(),
        col("energy", &unit(v, "energy")),
    ];
    let mut rows = Vec::new();
    for t in tracks {
        let label = t
            .get("label")
            .and_then(Value::as_str)
            .unwrap_or("")
            .to_string();
        let n = t.get("n").map(num).unwrap_or_default();
        let es = t
            .get("energies")
            .and_then(Value::as_array)
            .cloned()
            .unwrap_or_default();
        for (xv, e) in values.iter().zip(&es) {
            if e.is_number() {
                rows.push(vec![num(xv), label.clone(), n.clone(), num(e)]);
            }
        }
    }
    Table { header, rows }
}

fn optics(v: &Value, points: &[Value]) -> Table {
    let header = vec![
        col("field", &unit(v, "field")),
        "transition".into(),
        col("energy", &unit(v, "energy")),
        "relative_strength".into(),
    ];
    let mut rows = Vec::new();
    for p in points {
        let b = p.get("field").map(num).unwrap_or_default();
        for t in p
            .get("transitions")
            .and_then(Value::as_array)
            .into_iter()
            .flatten()
        {
            let name = format!(
                "{}→{}",
                t.get("from").and_then(Value::as_str).unwrap_or("?"),
                t.get("to").and_then(Value::as_str).unwrap_or("?")
            );
            let e = t.get("energy").map(num).unwrap_or_default();
            let s = t.get("relative_strength").map(num).unwrap_or_default();
            rows.push(vec![b.clone(), name, e, s]);
        }
    }
    Table { header, rows }
}

/// The table of a JSON record.
pub(crate) fn table_from_json(path: &std::path::Path, text: &str) -> CliResult<Table> {
    let v: Value = serde_json::from_str(text).map_err(|e| {
        bad_flag(
            "FILE",
            format!("{} is not JSON ladderfan can read: {e}", path.display()),
        )
    })?;
    let arr = |k: &str| v.get(k).and_then(Value::as_array).cloned();
    if let (Some(values), Some(tracks)) = (arr("values"), arr("tracks")) {
        return Ok(sweep(&v, &values, &tracks));
    }
    if let Some(points) = arr("points") {
        return Ok(optics(&v, &points));
    }
    if let Some(dos) = arr("dos") {
        let e = col("energy", &unit(&v, "energy"));
        let rows = dos
            .iter()
            .filter_map(|p| {
                let p = p.as_array()?;
                Some(vec![num(p.first()?), num(p.get(1)?)])
            })
            .collect();
        return Ok(Table {
            header: vec![e, "dos".into()],
            rows,
        });
    }
    Err(bad_flag(
        "FILE",
        format!(
            "{} holds no sweep (values, tracks), optics fan (points) or DOS (dos) record; \
             re-draw the CSV file written beside it instead",
            path.display()
        ),
    ))
}
