//! The JSON API and the page. Every answer is computed by the library;
//! the estimate files are the command line's, byte for byte
//! (`mettle::predict::EstimateWriter`).

use std::collections::HashMap;
use std::sync::Arc;

use axum::body::Bytes;
use axum::extract::rejection::BytesRejection;
use axum::extract::{Path, Query, State};
use axum::http::{header, HeaderMap, StatusCode};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::{Json, Router};
use mettle::curves::{base_row, sweep, transition, Axis, Sweep, TransitionOptions};
use mettle::data::cells::DEFAULT_DIGITS;
use mettle::predict::{EstimateFormat, EstimateWriter, CAUTION};
use mettle::screen::{ProcessLimits, Requirement, Screening};
use serde_json::{json, Value};

use super::registry::{Entry, Registry};
use super::reply::Reply;
use super::rows::{self, Rows};
use super::{AppState, Limits};

/// The routes (without the guards of [`super::guard`]).
pub fn routes() -> Router<Arc<AppState>> {
    Router::new()
        .route("/", get(page))
        .route("/api/models", get(models))
        .route("/api/models/{id}/predict", post(predict))
        .route("/api/models/{id}/requirements", post(requirements))
        .route("/api/models/{id}/sweep", post(sweep_one))
        .route("/api/models/{id}/transition", post(transition_curve))
        .route("/api/reload", post(reload))
}

async fn page(State(s): State<Arc<AppState>>) -> Response {
    (
        [
            (header::CONTENT_TYPE, "text/html; charset=utf-8"),
            // nothing is loaded from anywhere: the page carries its own
            // script and style, and talks only to this server
            (
                header::CONTENT_SECURITY_POLICY,
                "default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; \
                 connect-src 'self'; img-src 'self' data: blob:; form-action 'none'; frame-ancestors 'none'",
            ),
            (header::X_CONTENT_TYPE_OPTIONS, "nosniff"),
            (header::CACHE_CONTROL, "no-store"),
        ],
        s.page.clone(),
    )
        .into_response()
}

fn registry(s: &AppState) -> Arc<Registry> {
    // a poisoned lock only means a reload panicked: the last good
    // registry is still whole
    s.models
        .read()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
        .clone()
}

fn entry(s: &AppState, id: &str) -> Result<Arc<Entry>, Reply> {
    registry(s).get(id).ok_or_else(|| {
        let ids: Vec<String> = registry(s).entries.iter().map(|e| e.id.clone()).collect();
        Reply::not_found(format!(
            "no model '{id}' on this server; the models are: {}",
            ids.join(", ")
        ))
    })
}

async fn models(State(s): State<Arc<AppState>>) -> Json<Value> {
    let r = registry(&s);
    let l = &s.limits;
    Json(json!({
        "models": r.entries.iter().map(|e| e.info.clone()).collect::<Vec<_>>(),
        "limits": {"max_body_bytes": l.max_body, "max_rows": l.max_rows,
            "request_timeout_ms": l.timeout.as_millis() as u64},
        "caution": CAUTION,
    }))
}

/// Run CPU work off the async threads; a panic in it becomes a 500.
async fn blocking<T: Send + 'static>(
    f: impl FnOnce() -> Result<T, Reply> + Send + 'static,
) -> Result<T, Reply> {
    tokio::task::spawn_blocking(f)
        .await
        .unwrap_or_else(|e| Err(Reply::internal(format!("the computation failed: {e}"))))
}

fn body_bytes(body: Result<Bytes, BytesRejection>, limits: &Limits) -> Result<Bytes, Reply> {
    body.map_err(|e| {
        if e.status() == StatusCode::PAYLOAD_TOO_LARGE {
            Reply::body_too_large(limits.max_body)
        } else {
            Reply::bad_input(format!("request body: {}", e.body_text()))
        }
    })
}

fn parse_json(bytes: &[u8]) -> Result<Value, Reply> {
    serde_json::from_slice(bytes)
        .map_err(|e| Reply::bad_input(format!("request body: not valid JSON: {e}")))
}

fn is_json(headers: &HeaderMap) -> bool {
    headers
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .is_some_and(|v| v.trim_start().starts_with("application/json"))
}

/// The rows of a JSON request: `rows` (objects), `row` (one object) or
/// `csv` (text, comma- or tab-separated), named by `source` when given.
fn rows_of(v: &Value, limits: &Limits) -> Result<Rows, Reply> {
    rows_of_sheet(v, limits, None)
}

/// As [`rows_of`], with the `sheet` query of the request (refused by the
/// reader: JSON rows are no workbook).
fn rows_of_sheet(v: &Value, limits: &Limits, sheet: Option<&str>) -> Result<Rows, Reply> {
    let name = rows::label(v.get("source").and_then(Value::as_str), "request rows");
    let csv = if let Some(t) = v.get("csv").and_then(Value::as_str) {
        rows::pasted_to_csv(t)
    } else if let Some(r) = v.get("rows").and_then(Value::as_array) {
        if r.len() > limits.max_rows {
            return Err(Reply::too_many_rows(r.len(), limits.max_rows));
        }
        rows::json_rows_to_csv(r)?
    } else if let Some(r) = v.get("row") {
        rows::json_rows_to_csv(std::slice::from_ref(r))?
    } else {
        return Err(Reply::bad_input(
            "request body: give the rows as \"rows\": [{column: value, ...}], \"row\": {...} or \"csv\": \"header\\nvalues\"",
        ));
    };
    rows::read(&csv, &name, sheet, limits.max_rows)
}

/// The rows of a body that is not JSON: a workbook's bytes (.xlsx, .xls;
/// its sheet `sheet`, or the first) or CSV / tab-separated text, named
/// `name` in every message.
fn rows_of_body(
    headers: &HeaderMap,
    bytes: &[u8],
    name: &str,
    sheet: Option<&str>,
    limits: &Limits,
) -> Result<Rows, Reply> {
    if let Some(ext) = rows::workbook_kind(headers, bytes, name)? {
        return rows::read_workbook(bytes, ext, name, sheet, limits.max_rows);
    }
    let text = std::str::from_utf8(bytes)
        .map_err(|_| Reply::bad_input("request body: the text is not UTF-8"))?;
    rows::read(&rows::pasted_to_csv(text), name, sheet, limits.max_rows)
}

/// `POST /api/models/{id}/predict[?format=json|csv|xlsx][&units=internal|declared][&id=COLUMN][&sheet=NAME][&source=NAME]`:
/// the rows' estimates as `mettle predict --format json|csv` (or `--out
/// FILE.xlsx`) writes them: the same layout, identifiers and bytes.
/// The body is JSON (`{"rows": [...]}`, `{"csv": "..."}` or an array of
/// rows), CSV / tab-separated text, or a workbook (.xlsx; by its
/// Content-Type or its first bytes) read as `--input FILE.xlsx [--sheet
/// NAME]` reads it.
async fn predict(
    State(s): State<Arc<AppState>>,
    Path(id): Path<String>,
    Query(q): Query<HashMap<String, String>>,
    headers: HeaderMap,
    body: Result<Bytes, BytesRejection>,
) -> Result<Response, Reply> {
    let format = match q.get("format").map(String::as_str) {
        None | Some("json") => EstimateFormat::Json,
        Some("csv") => EstimateFormat::Csv,
        Some("xlsx") => EstimateFormat::Xlsx,
        Some(f) => {
            return Err(Reply::bad_input(format!(
                "format={f}: expected json, csv or xlsx"
            )))
        }
    };
    let declared = match q.get("units").map(String::as_str) {
        None | Some("internal") => false,
        Some("declared") => true,
        Some(u) => {
            return Err(Reply::bad_input(format!(
                "units={u}: expected internal or declared"
            )))
        }
    };
    let e = entry(&s, &id)?;
    let bytes = body_bytes(body, &s.limits)?;
    let limits = s.limits.clone();
    let json_body = is_json(&headers);
    let name = rows::label(q.get("source").map(String::as_str), "request rows");
    let id_column = q.get("id").cloned();
    let sheet = q.get("sheet").cloned();
    let out = blocking(move || {
        let sheet = sheet.as_deref();
        let rows = if json_body {
            let v = parse_json(&bytes)?;
            match v {
                Value::Array(a) => rows_of_sheet(&json!({"rows": a}), &limits, sheet)?,
                v => rows_of_sheet(&v, &limits, sheet)?,
            }
        } else {
            rows_of_body(&headers, &bytes, &name, sheet, &limits)?
        };
        let layout = e
            .model
            .estimate_layout(
                Some(&rows.table),
                id_column.as_deref(),
                declared,
                DEFAULT_DIGITS,
            )
            .map_err(|x| rows.bad(&x))?;
        let est = e
            .model
            .estimate_batch(&rows.table, &layout)
            .map_err(|x| rows.bad(&x))?;
        let mut buf = Vec::new();
        let mut w = EstimateWriter::start(&mut buf, format, &layout)
            .map_err(|x| Reply::internal(x.to_string()))?;
        w.rows(&est).map_err(|x| Reply::internal(x.to_string()))?;
        w.finish().map_err(|x| Reply::internal(x.to_string()))?;
        Ok(buf)
    })
    .await?;
    let kind = match format {
        EstimateFormat::Csv => "text/csv; charset=utf-8",
        EstimateFormat::Json => "application/json",
        EstimateFormat::Xlsx => rows::XLSX_TYPE,
    };
    Ok(([(header::CONTENT_TYPE, kind)], out).into_response())
}

/// `POST /api/models/{id}/requirements`: the probability that each row
/// meets each requirement (`screen`'s syntax) and all of them. The body is
/// JSON (`require` and the rows as for predict), or the rows alone — CSV
/// text or a workbook — with `?require=REQ` (repeated) and optional
/// `&sheet=NAME&source=NAME` in the query.
async fn requirements(
    State(s): State<Arc<AppState>>,
    Path(id): Path<String>,
    Query(q): Query<Vec<(String, String)>>,
    headers: HeaderMap,
    body: Result<Bytes, BytesRejection>,
) -> Result<Json<Value>, Reply> {
    let e = entry(&s, &id)?;
    let bytes = body_bytes(body, &s.limits)?;
    let limits = s.limits.clone();
    let json_body = is_json(&headers);
    blocking(move || {
        let (v, body_rows) = if json_body {
            (parse_json(&bytes)?, None)
        } else {
            let query = |k: &str| q.iter().find(|(n, _)| n == k).map(|(_, x)| x.as_str());
            let name = rows::label(query("source"), "request rows");
            let rows = rows_of_body(&headers, &bytes, &name, query("sheet"), &limits)?;
            let require: Vec<&str> = q
                .iter()
                .filter(|(n, _)| n == "require")
                .map(|(_, x)| x.as_str())
                .collect();
            (json!({ "require": require }), Some(rows))
        };
        let texts: Vec<String> = match v.get("require") {
            Some(Value::Array(a)) => a
                .iter()
                .map(|x| x.as_str().map(str::to_string))
                .collect::<Option<_>>()
                .ok_or_else(|| {
                    Reply::bad_input("require: a list of texts such as \"uts_mpa>=620\"")
                })?,
            _ => {
                return Err(Reply::bad_input(
                    "require: a list of texts such as \"uts_mpa>=620\"",
                ))
            }
        };
        let reqs: Vec<Requirement> = texts
            .iter()
            .filter(|t| !t.trim().is_empty())
            .map(|t| Requirement::parse(t))
            .collect::<mettle::Result<_>>()
            .map_err(|x| Reply::bad_input(x.to_string()))?;
        let rows = match body_rows {
            Some(r) => r,
            None => rows_of(&v, &limits)?,
        };
        // declared units converted, a column in a guessed unit refused, as predict does
        e.model.unit_check(&rows.table).map_err(|x| rows.bad(&x))?;
        let models = std::slice::from_ref(&e.model);
        let screening = Screening::new(models, reqs, None, ProcessLimits::default())
            .map_err(|x| Reply::bad_input(x.to_string()))?;
        let cands = screening.evaluate(&rows.table).map_err(|x| rows.bad(&x))?;
        let out: Vec<Value> = cands
            .iter()
            .map(|c| {
                json!({"row": c.row + 1, "requirements": c.requirements,
                    "joint_probability": c.joint_probability,
                    "joint_probability_se": c.joint_mc_error, "in_domain": c.in_domain,
                    "notes": c.notes})
            })
            .collect();
        Ok(Json(
            json!({"rows": out, "joint": screening.joint_basis().name(),
            "joint_statement": screening.joint_statement(), "caution": CAUTION}),
        ))
    })
    .await
}

/// A sweep as JSON: per point the varied value, each target's centre,
/// mean, sd and 68 % / 95 % bands (internal units), the verdict and notes.
fn sweep_json(e: &Entry, s: &Sweep) -> Value {
    let units: Vec<Option<&str>> = e
        .model
        .target_columns(false)
        .iter()
        .map(|c| c.unit.map(|u| u.symbol()))
        .collect();
    let points: Vec<Value> = s
        .points
        .iter()
        .map(|p| {
            let bands: Vec<Value> = p
                .bands
                .iter()
                .map(|b| {
                    json!({"centre": b.median, "mean": b.mean, "sd": b.sd, "lo68": b.lo68,
                        "hi68": b.hi68, "lo95": b.lo95, "hi95": b.hi95, "impossible": b.impossible})
                })
                .collect();
            json!({"x": p.at[0], "bands": bands, "in_domain": p.verdict.in_domain,
                "notes": p.notes})
        })
        .collect();
    json!({"input": s.axes[0].name, "targets": s.targets, "units": units, "points": points,
        "base_notes": s.base_notes, "caution": CAUTION})
}

fn number(v: &Value, key: &str) -> Result<Option<f64>, Reply> {
    match v.get(key) {
        None | Some(Value::Null) => Ok(None),
        Some(x) => x
            .as_f64()
            .filter(|x| x.is_finite())
            .map(Some)
            .ok_or_else(|| Reply::bad_input(format!("{key}: expected a number, got {x}"))),
    }
}

fn steps(v: &Value, default: usize, max: usize) -> Result<usize, Reply> {
    let n = number(v, "steps")?.unwrap_or(default as f64);
    if n.fract() != 0.0 || n < 2.0 || n > max as f64 {
        return Err(Reply::bad_input(format!(
            "steps = {n}: expected a whole number from 2 to {max}"
        )));
    }
    Ok(n as usize)
}

/// `POST /api/models/{id}/sweep`: vary `input` from `from` to `to` with the
/// other inputs of `row` held.
async fn sweep_one(
    State(s): State<Arc<AppState>>,
    Path(id): Path<String>,
    body: Result<Bytes, BytesRejection>,
) -> Result<Json<Value>, Reply> {
    let e = entry(&s, &id)?;
    let bytes = body_bytes(body, &s.limits)?;
    let limits = s.limits.clone();
    blocking(move || {
        let v = parse_json(&bytes)?;
        let input = v
            .get("input")
            .and_then(Value::as_str)
            .ok_or_else(|| Reply::bad_input("input: the name of the input to vary"))?
            .to_string();
        let (Some(from), Some(to)) = (number(&v, "from")?, number(&v, "to")?) else {
            return Err(Reply::bad_input("from, to: the range of the varied input"));
        };
        let axis = Axis {
            name: input,
            from,
            to,
            steps: steps(&v, 41, 401)?,
        };
        let rows = rows_of(&v, &limits)?;
        let base = base_row(&e.model, Some(&rows.table), &[]).map_err(|x| rows.bad(&x))?;
        let sw = sweep(&e.model, base, &[axis]).map_err(|x| rows.bad(&x))?;
        Ok(Json(sweep_json(&e, &sw)))
    })
    .await
}

/// `POST /api/models/{id}/transition`: the impact-energy transition curve
/// of `row` with its crossings, as `mettle transition --json` summarises
/// it, plus the curve.
async fn transition_curve(
    State(s): State<Arc<AppState>>,
    Path(id): Path<String>,
    body: Result<Bytes, BytesRejection>,
) -> Result<Json<Value>, Reply> {
    let e = entry(&s, &id)?;
    let bytes = body_bytes(body, &s.limits)?;
    let limits = s.limits.clone();
    blocking(move || {
        let v = parse_json(&bytes)?;
        let axes = e.info.get("transition").cloned().unwrap_or(Value::Null);
        let text = |k: &str| {
            v.get(k)
                .or_else(|| axes.get(k))
                .and_then(Value::as_str)
                .map(str::to_string)
        };
        let temperature_input = text("temperature_input").ok_or_else(|| {
            Reply::bad_input("temperature_input: the model has no test-temperature input; name one")
        })?;
        let inp = e.model.inputs.iter().find(|i| i.name == temperature_input);
        let from = number(&v, "from")?.or(inp.map(|i| i.min));
        let to = number(&v, "to")?.or(inp.map(|i| i.max));
        let (Some(from), Some(to)) = (from, to) else {
            return Err(Reply::bad_input("from, to: the temperature range (°C)"));
        };
        let energies = match v.get("energies") {
            None | Some(Value::Null) => vec![27.0, 40.0],
            Some(Value::Array(a)) => a
                .iter()
                .map(Value::as_f64)
                .collect::<Option<_>>()
                .ok_or_else(|| Reply::bad_input("energies: a list of energies (J)"))?,
            Some(_) => return Err(Reply::bad_input("energies: a list of energies (J)")),
        };
        let requirement = text("require")
            .filter(|r| !r.trim().is_empty())
            .map(|r| mettle::curves::Requirement::parse(&r))
            .transpose()
            .map_err(|x| Reply::bad_input(x.to_string()))?;
        let o = TransitionOptions {
            temperature_input,
            target: text("target"),
            from,
            to,
            steps: steps(&v, 161, 401)?,
            energies,
            requirement,
            samples: 4000,
            seed: 1,
        };
        let rows = rows_of(&v, &limits)?;
        let base = base_row(&e.model, Some(&rows.table), &[]).map_err(|x| rows.bad(&x))?;
        let t = transition(&e.model, base, &o).map_err(|x| rows.bad(&x))?;
        let mut out = t.summary_json(from, to);
        out["curve"] = sweep_json(&e, &t.curve);
        Ok(Json(out))
    })
    .await
}

/// `POST /api/reload`: read every model file again; the new set replaces
/// the old only when every file reads as a model.
async fn reload(State(s): State<Arc<AppState>>) -> Result<Json<Value>, Reply> {
    let sources = s.sources.clone();
    let fresh = blocking(move || {
        Registry::load(&sources).map_err(|e| Reply {
            status: StatusCode::CONFLICT,
            body: json!({"error": format!("reload refused; the models served are unchanged: {e:#}")}),
        })
    })
    .await?;
    let ids: Vec<String> = fresh.entries.iter().map(|e| e.id.clone()).collect();
    *s.models
        .write()
        .unwrap_or_else(std::sync::PoisonError::into_inner) = Arc::new(fresh);
    Ok(Json(json!({"reloaded": ids})))
}
