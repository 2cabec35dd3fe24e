//! `mettle serve` over HTTP: a server started by each test on an ephemeral
//! loopback port, every endpoint, limit and bad input. Estimates are
//! checked against the command line's own output for the same rows (the
//! API's promise: the same JSON as `mettle predict --format json`);
//! statuses follow RFC 9110 (400, 401, 404, 408, 413, 500).
//! The model and tables are the bundled invented Fellhaven data.

mod common;
#[path = "../benches/support/server.rs"]
mod server;

use std::io::{Read, Write};
use std::net::TcpStream;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Duration;

use serde_json::Value;
use server::{agent, root, Server};

const BIN: &str = env!("CARGO_BIN_EXE_mettle");

fn model() -> PathBuf {
    root().join("models/fellhaven_welds.json")
}

fn new_welds() -> PathBuf {
    root().join("datasets/fellhaven_new_welds.csv")
}

fn start(extra: &[&str]) -> Server {
    Server::start(Path::new(BIN), &[&model()], extra)
}

/// Status and body of a request.
fn call(method: &str, url: &str, body: Option<(&str, &[u8])>, auth: Option<&str>) -> (u16, String) {
    let a = agent();
    let r = match (method, body) {
        ("GET", _) => {
            let mut q = a.get(url);
            if let Some(t) = auth {
                q = q.header("Authorization", &format!("Bearer {t}"));
            }
            q.call()
        }
        (_, b) => {
            let (kind, bytes) = b.unwrap_or(("application/json", b""));
            let mut q = a.post(url).header("Content-Type", kind);
            if let Some(t) = auth {
                q = q.header("Authorization", &format!("Bearer {t}"));
            }
            q.send(bytes)
        }
    };
    let mut r = r.expect("HTTP exchange");
    let status = r.status().as_u16();
    let text = r
        .body_mut()
        .with_config()
        .limit(64 << 20)
        .read_to_string()
        .expect("body");
    (status, text)
}

fn json(text: &str) -> Value {
    serde_json::from_str(text).unwrap_or_else(|e| panic!("not JSON ({e}): {text}"))
}

/// `mettle ARGS…`: stdout, stderr, success.
fn cli(args: &[&str]) -> (String, String, bool) {
    let o = Command::new(BIN).args(args).output().expect("run mettle");
    (
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
        o.status.success(),
    )
}

/// A raw request over TCP (paths a client library would tidy up are sent
/// as written): the status line's code and the whole answer.
fn raw(port: u16, request: &str) -> (u16, String) {
    let mut s = TcpStream::connect(("127.0.0.1", port)).expect("connect");
    s.set_read_timeout(Some(Duration::from_secs(30)))
        .expect("timeout");
    s.write_all(request.as_bytes()).expect("send");
    let mut out = String::new();
    let _ = s.read_to_string(&mut out);
    let code = out
        .split_whitespace()
        .nth(1)
        .and_then(|c| c.parse().ok())
        .unwrap_or(0);
    (code, out)
}

/// A POST to the demo model's predict whose Content-Length states 21 MB,
/// its body not sent: the status and the answer's body.
fn oversized(port: u16, kind: &str) -> (u16, String) {
    let (code, answer) = raw(
        port,
        &format!(
            "POST /api/models/fellhaven_welds/predict HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\
             Content-Type: {kind}\r\nContent-Length: {}\r\n\r\nPK\x03\x04",
            21 * 1_048_576
        ),
    );
    let body = answer
        .split_once("\r\n\r\n")
        .map(|(_, b)| b.to_string())
        .unwrap_or_default();
    (code, body)
}

#[test]
fn page_is_whole_and_loads_nothing_from_elsewhere() {
    let s = start(&[]);
    let (code, page) = call("GET", &format!("{}/", s.url), None, None);
    assert_eq!(code, 200);
    assert!(page.contains("not test results"), "caution on the page");
    for outside in ["http://", "https://", "src=\"", "<link"] {
        assert!(!page.contains(outside), "the page refers to '{outside}'");
    }
    let r = agent().get(&format!("{}/", s.url)).call().expect("get");
    let csp = r
        .headers()
        .get("content-security-policy")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    assert!(
        csp.contains("default-src 'none'") && csp.contains("connect-src 'self'"),
        "{csp}"
    );
}

#[test]
fn models_are_described_without_paths() {
    let s = start(&[]);
    let (code, text) = call("GET", &format!("{}/api/models", s.url), None, None);
    assert_eq!(code, 200, "{text}");
    let v = json(&text);
    let m = &v["models"][0];
    assert_eq!(m["id"], "fellhaven_welds");
    assert_eq!(m["inputs"].as_array().map(Vec::len), Some(16));
    assert_eq!(m["targets"].as_array().map(Vec::len), Some(4));
    // the fingerprint is the SHA-256 of the model file's bytes
    use sha2::Digest;
    let bytes = std::fs::read(model()).expect("model");
    assert_eq!(
        m["fingerprint"],
        format!("{:x}", sha2::Sha256::digest(&bytes))
    );
    // ti_ppm is stored in wt% inside the model and shown in its declared ppm
    let ti = m["inputs"]
        .as_array()
        .and_then(|a| a.iter().find(|i| i["name"] == "ti_ppm"))
        .expect("ti_ppm");
    assert_eq!(ti["unit"], "ppm");
    assert!(ti["min"].as_f64().is_some_and(|x| x > 10.0), "{ti}");
    assert!(ti["base"].as_f64().is_some(), "{ti}");
    assert_eq!(m["transition"]["target"], "charpy_j");
    assert_eq!(m["transition"]["temperature_input"], "test_temp_c");
    assert!(
        !text.contains(&root().display().to_string()),
        "a path leaked: {text}"
    );
    assert!(!text.contains("models/"), "a path leaked: {text}");
    assert_eq!(v["limits"]["max_body_bytes"], 20 * 1_048_576);
}

#[test]
fn predict_gives_the_command_lines_bytes() {
    let s = start(&[]);
    let csv = std::fs::read(new_welds()).expect("table");
    let m = model().display().to_string();
    let input = new_welds().display().to_string();
    for (format, units) in [
        ("json", "internal"),
        ("csv", "internal"),
        ("json", "declared"),
    ] {
        // the server computes every error bar exactly: the command line's
        // --exact path (its default fast path agrees within 0.5 % of the sd)
        let (want, err, ok) = cli(&[
            "predict", "--model", &m, "--input", &input, "--format", format, "--units", units,
            "--exact",
        ]);
        assert!(ok, "{err}");
        let url = format!(
            "{}/api/models/fellhaven_welds/predict?format={format}&units={units}",
            s.url
        );
        let (code, got) = call("POST", &url, Some(("text/csv", &csv)), None);
        assert_eq!(code, 200, "{got}");
        assert_eq!(got, want, "format {format}, units {units}");
    }
    // the same rows as JSON objects give the same estimates
    let body = server::fellhaven_rows_body(8);
    let url = format!("{}/api/models/fellhaven_welds/predict", s.url);
    let (code, got) = call(
        "POST",
        &url,
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 200, "{got}");
    let (want, _, _) = cli(&[
        "predict", "--model", &m, "--input", &input, "--format", "json", "--exact",
    ]);
    assert_eq!(json(&got), json(&want));
    // and tab-separated text, as pasted from a spreadsheet
    let tsv = String::from_utf8(csv).expect("utf8").replace(',', "\t");
    let (code, got) = call("POST", &url, Some(("text/plain", tsv.as_bytes())), None);
    assert_eq!(code, 200, "{got}");
    assert_eq!(json(&got), json(&want));
}

/// The workbook the page's "Download workbook" button fetches: the bytes
/// `mettle predict --out FILE.xlsx` writes for the same rows, heats named
/// by the export's first column (the estimate writer's third format).
#[test]
fn predict_as_a_workbook_gives_the_command_lines_bytes() {
    let s = start(&[]);
    let input = root().join("datasets/fellhaven_new_welds_export.csv");
    let csv = std::fs::read(&input).expect("table");
    let dir = tempfile::tempdir().expect("tmp");
    let out = dir.path().join("est.xlsx");
    let (_, err, ok) = cli(&[
        "predict",
        "--model",
        &model().display().to_string(),
        "--input",
        &input.display().to_string(),
        "--out",
        &out.display().to_string(),
        "--exact",
    ]);
    assert!(ok, "{err}");
    let want = std::fs::read(&out).expect("workbook");
    let url = format!("{}/api/models/fellhaven_welds/predict?format=xlsx", s.url);
    let mut r = agent()
        .post(&url)
        .header("Content-Type", "text/csv")
        .send(&csv[..])
        .expect("HTTP exchange");
    assert_eq!(r.status().as_u16(), 200);
    let kind = r
        .headers()
        .get("content-type")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    assert!(kind.contains("spreadsheetml"), "{kind}");
    let got = r
        .body_mut()
        .with_config()
        .limit(64 << 20)
        .read_to_vec()
        .expect("body");
    assert_eq!(got, want);
}

/// The CLI's message for a bad table, without its `mettle: error: …: PATH: ` prefix.
fn cli_message(table: &str) -> String {
    let dir = tempfile::tempdir().expect("tmp");
    let p = dir.path().join("bad.csv");
    std::fs::write(&p, table).expect("write");
    let (_, err, ok) = cli(&[
        "predict",
        "--model",
        &model().display().to_string(),
        "--input",
        &p.display().to_string(),
    ]);
    assert!(!ok);
    let path = p.display().to_string();
    let at = err.find(&path).expect("the CLI names the file");
    err[at + path.len()..].trim().to_string()
}

#[test]
fn bad_input_gets_400_with_the_command_lines_messages() {
    let s = start(&[]);
    let url = format!("{}/api/models/fellhaven_welds/predict", s.url);
    let text = std::fs::read_to_string(new_welds()).expect("table");
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    // text in a number cell: row 2, column mn_wt
    let mut cells: Vec<&str> = lines[2].split(',').collect();
    cells[2] = "about1";
    let bad_cell = format!("{}\n{}\n{}\n", lines[0], lines[1], cells.join(","));
    // a wrong column name
    lines[0] = lines[0].replace("mn_wt", "manganese");
    let bad_name = format!("{}\n{}\n", lines[0], lines[1]);
    for table in [bad_cell, bad_name] {
        let want = cli_message(&table);
        let (code, got) = call("POST", &url, Some(("text/csv", table.as_bytes())), None);
        assert_eq!(code, 400, "{got}");
        let msg = json(&got)["error"].as_str().expect("error").to_string();
        assert!(msg.starts_with("request rows"), "{msg}");
        assert!(msg.ends_with(&want), "server: {msg}\ncli: {want}");
    }
    // the cell's message names the row and column
    let (_, got) = call(
        "POST",
        &format!("{url}?source=heats.csv"),
        Some((
            "text/csv",
            format!(
                "{}\n{}\n",
                text.lines().next().unwrap_or_default(),
                "0.07,0.34,x,2.59,0.19,0.09,0.05,0.013,236,30,296,79,1.41,160,0,-40"
            )
            .as_bytes(),
        )),
        None,
    );
    let msg = json(&got)["error"].as_str().expect("error").to_string();
    assert!(
        msg.starts_with("heats.csv: row 1 (line 2), column 'mn_wt'"),
        "{msg}"
    );
    // malformed JSON, a row that is not an object, text in a JSON number cell
    let mut one: Value = json(&server::fellhaven_rows_body(2));
    one["rows"][1]["c_wt"] = Value::from("lots");
    let one = one.to_string();
    for (body, part) in [
        ("{\"rows\": [", "not valid JSON"),
        ("{\"rows\": [3]}", "row 1 is not an object"),
        ("{\"nothing\": 1}", "give the rows"),
        (one.as_str(), "request rows: row 2 (line 3), column 'c_wt'"),
    ] {
        let (code, got) = call(
            "POST",
            &url,
            Some(("application/json", body.as_bytes())),
            None,
        );
        assert_eq!(code, 400, "{body}: {got}");
        assert!(
            json(&got)["error"]
                .as_str()
                .is_some_and(|m| m.contains(part)),
            "{body}: {got}"
        );
    }
    let (code, got) = call(
        "POST",
        &format!("{url}?format=xml"),
        Some(("text/csv", text.as_bytes())),
        None,
    );
    assert_eq!(code, 400, "{got}");
}

#[test]
fn limits_answer_413_and_408_naming_the_limit() {
    let s = start(&["--max-rows", "5", "--timeout", "1"]);
    let url = format!("{}/api/models/fellhaven_welds/predict", s.url);
    // body over 20 MB (RFC 9110 §15.5.14, 413 Content Too Large): refused
    // by its stated length, before the body is read (a client still
    // sending when the answer comes could see its connection reset, so the
    // request is written by hand and its body left unsent)
    let (code, got) = oversized(s.port, "text/csv");
    assert_eq!(code, 413, "{got}");
    assert_eq!(json(&got)["limit"], "max_body_bytes");
    // rows over the limit, as JSON and as CSV
    let body = server::fellhaven_rows_body(6);
    let (code, got) = call(
        "POST",
        &url,
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 413, "{got}");
    assert_eq!(json(&got)["limit"], "max_rows");
    assert_eq!(json(&got)["value"], 5);
    let text = std::fs::read_to_string(new_welds()).expect("table");
    let (code, got) = call("POST", &url, Some(("text/csv", text.as_bytes())), None);
    assert_eq!(code, 413, "{got}");
    assert_eq!(json(&got)["limit"], "max_rows");
    // five rows are fine
    let body = server::fellhaven_rows_body(5);
    let (code, got) = call(
        "POST",
        &url,
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 200, "{got}");
    // a body that never finishes arriving: 408 after the time limit
    // (RFC 9110 §15.5.9, 408 Request Timeout)
    let (code, answer) = raw(
        s.port,
        "POST /api/models/fellhaven_welds/predict HTTP/1.1\r\nHost: x\r\nContent-Type: text/csv\r\nContent-Length: 1000\r\n\r\nc_wt\n",
    );
    assert_eq!(code, 408, "{answer}");
    assert!(answer.contains("request_timeout_ms"), "{answer}");
    // and the server serves on
    let (code, _) = call("GET", &format!("{}/api/models", s.url), None, None);
    assert_eq!(code, 200);
}

#[test]
fn no_path_traversal() {
    let s = start(&[]);
    for path in [
        "/../../../../etc/passwd",
        "/%2e%2e/%2e%2e/%2e%2e/etc/passwd",
        "/..%2f..%2f..%2fetc%2fpasswd",
        "//etc/passwd",
        "/etc/passwd",
        "/api/models/..%2F..%2Fmodels%2Ffellhaven_welds",
        "/api/../../Cargo.toml",
        "/models/fellhaven_welds.json",
        "/%2Fetc%2Fpasswd",
    ] {
        let (code, answer) = raw(
            s.port,
            &format!("GET {path} HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n"),
        );
        assert!(code == 404 || code == 400, "{path}: {answer}");
        assert!(
            !answer.contains("root:") && !answer.contains("[package]"),
            "{path}: {answer}"
        );
    }
    for id in [
        "..%2Fmodels%2Ffellhaven_welds",
        "%2Fetc%2Fpasswd",
        "fellhaven_welds.json",
        "nothing",
    ] {
        let (code, answer) = raw(
            s.port,
            &format!("POST /api/models/{id}/predict HTTP/1.1\r\nHost: x\r\nConnection: close\r\nContent-Type: application/json\r\nContent-Length: 2\r\n\r\n{{}}"),
        );
        assert_eq!(code, 404, "{id}: {answer}");
        assert!(answer.contains("no model"), "{id}: {answer}");
    }
}

#[test]
fn token_is_needed_on_every_request() {
    let s = start(&["--token", "s3cret-T"]);
    let models = format!("{}/api/models", s.url);
    // RFC 9110 §15.5.2, 401 Unauthorized
    assert_eq!(call("GET", &models, None, None).0, 401);
    assert_eq!(call("GET", &models, None, Some("wrong")).0, 401);
    assert_eq!(call("GET", &format!("{}/", s.url), None, None).0, 401);
    assert_eq!(
        call("GET", &format!("{}/nothing", s.url), None, None).0,
        401
    );
    let body = server::fellhaven_rows_body(1);
    let url = format!("{}/api/models/fellhaven_welds/predict", s.url);
    assert_eq!(
        call(
            "POST",
            &url,
            Some(("application/json", body.as_bytes())),
            None
        )
        .0,
        401
    );
    assert_eq!(
        call("POST", &format!("{}/api/reload", s.url), None, None).0,
        401
    );
    assert_eq!(call("GET", &models, None, Some("s3cret-T")).0, 200);
    assert_eq!(
        call("GET", &format!("{models}?token=s3cret-T"), None, None).0,
        200
    );
    assert_eq!(
        call("GET", &format!("{}/?token=s3cret-T", s.url), None, None).0,
        200
    );
    assert_eq!(
        call(
            "POST",
            &url,
            Some(("application/json", body.as_bytes())),
            Some("s3cret-T")
        )
        .0,
        200
    );
}

#[test]
fn requirements_sweep_and_transition_agree_with_the_command_line() {
    let s = start(&[]);
    let m = model().display().to_string();
    let input = new_welds().display().to_string();
    let text = std::fs::read_to_string(new_welds()).expect("table");
    // probabilities: those of `mettle screen` for the same rows
    let reqs = ["uts_mpa>=620", "charpy_j>=47@test_temp_c=-40"];
    let body = serde_json::json!({"csv": text, "require": reqs}).to_string();
    let (code, got) = call(
        "POST",
        &format!("{}/api/models/fellhaven_welds/requirements", s.url),
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 200, "{got}");
    let got = json(&got);
    let (want, err, ok) = cli(&[
        "screen",
        "--model",
        &m,
        "--input",
        &input,
        "--require",
        reqs[0],
        "--require",
        reqs[1],
        "--format",
        "json",
    ]);
    assert!(ok, "{err}");
    let want = json(&want);
    let cands = want["candidates"].as_array().expect("candidates");
    assert!(!cands.is_empty());
    for c in cands {
        let row = c["row"].as_u64().expect("row") as usize;
        let g = &got["rows"][row - 1];
        assert_eq!(g["row"].as_u64(), Some(row as u64));
        assert_eq!(g["joint_probability"], c["joint_probability"], "row {row}");
        assert_eq!(g["requirements"], c["requirements"], "row {row}");
    }
    // a requirement on an unknown target: 400 naming it
    let body = serde_json::json!({"csv": text, "require": ["hardness_hv>=200"]}).to_string();
    let (code, got) = call(
        "POST",
        &format!("{}/api/models/fellhaven_welds/requirements", s.url),
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 400, "{got}");
    assert!(got.contains("hardness_hv"), "{got}");

    // a sweep of ni_wt over the first new weld: `mettle sweep`'s curve
    let first: String = text.lines().take(2).collect::<Vec<_>>().join("\n");
    let body =
        serde_json::json!({"csv": first, "input": "ni_wt", "from": 0, "to": 3.5, "steps": 15})
            .to_string();
    let (code, got) = call(
        "POST",
        &format!("{}/api/models/fellhaven_welds/sweep", s.url),
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 200, "{got}");
    let got = json(&got);
    let (want, err, ok) = cli(&[
        "sweep",
        "--model",
        &m,
        "--vary",
        "ni_wt=0:3.5:15",
        "--base",
        &input,
    ]);
    assert!(ok, "{err}");
    let mut lines = want.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let col = |n: &str| header.iter().position(|h| *h == n).expect("column");
    let points = got["points"].as_array().expect("points");
    assert_eq!(points.len(), 15);
    let k = got["targets"]
        .as_array()
        .and_then(|t| t.iter().position(|x| x == "uts_mpa"))
        .expect("uts");
    for (line, p) in lines.zip(points) {
        let cells: Vec<&str> = line.split(',').collect();
        let num = |n: &str| cells[col(n)].parse::<f64>().expect("number");
        assert_eq!(p["x"].as_f64(), Some(num("ni_wt")));
        assert_eq!(
            p["bands"][k]["centre"].as_f64(),
            Some(num("uts_mpa_centre"))
        );
        assert_eq!(p["bands"][k]["lo95"].as_f64(), Some(num("uts_mpa_lo95")));
        assert_eq!(
            p["in_domain"].as_bool(),
            Some(cells[col("in_domain")] == "true")
        );
    }
    // an input the model does not have
    let body = serde_json::json!({"csv": first, "input": "zr_wt", "from": 0, "to": 1}).to_string();
    let (code, got) = call(
        "POST",
        &format!("{}/api/models/fellhaven_welds/sweep", s.url),
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 400, "{got}");

    // the transition summary: `mettle transition --json`'s
    let body = serde_json::json!({"csv": first, "from": -80, "to": 20, "energies": [27, 47], "require": "47@-40"}).to_string();
    let (code, got) = call(
        "POST",
        &format!("{}/api/models/fellhaven_welds/transition", s.url),
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 200, "{got}");
    let mut got = json(&got);
    let (want, err, ok) = cli(&[
        "transition",
        "--model",
        &m,
        "--temperature-input",
        "test_temp_c",
        "--target",
        "charpy_j",
        "--base",
        &input,
        "--from",
        "-80",
        "--to",
        "20",
        "--energy",
        "27,47",
        "--require",
        "47@-40",
        "--json",
    ]);
    assert!(ok, "{err}");
    assert!(got["curve"]["points"]
        .as_array()
        .is_some_and(|p| p.len() == 161));
    got.as_object_mut().expect("object").remove("curve");
    assert_eq!(got, json(&want));
}

#[test]
fn reload_validates_first_and_a_replaced_file_waits_for_it() {
    let dir = tempfile::tempdir().expect("tmp");
    let m = dir.path().join("welds.json");
    std::fs::copy(model(), &m).expect("copy");
    let s = Server::start(Path::new(BIN), &[dir.path()], &[]);
    let models = format!("{}/api/models", s.url);
    let before = json(&call("GET", &models, None, None).1)["models"][0]["fingerprint"].clone();
    // a broken file on disk: the reload is refused, the old model serves on
    std::fs::write(&m, b"{\"format\": \"not a model\"").expect("write");
    let (code, got) = call("POST", &format!("{}/api/reload", s.url), None, None);
    assert_eq!(code, 409, "{got}");
    assert!(got.contains("unchanged"), "{got}");
    let body = server::fellhaven_rows_body(2);
    let url = format!("{}/api/models/welds/predict", s.url);
    assert_eq!(
        call(
            "POST",
            &url,
            Some(("application/json", body.as_bytes())),
            None
        )
        .0,
        200
    );
    // a valid replacement (the same model, written with other spacing):
    // not seen until the reload, seen after it
    let v: Value = serde_json::from_slice(&std::fs::read(model()).expect("model")).expect("json");
    std::fs::write(&m, serde_json::to_vec(&v).expect("compact")).expect("write");
    let still = json(&call("GET", &models, None, None).1)["models"][0]["fingerprint"].clone();
    assert_eq!(still, before);
    let (code, got) = call("POST", &format!("{}/api/reload", s.url), None, None);
    assert_eq!(code, 200, "{got}");
    let after = json(&call("GET", &models, None, None).1)["models"][0]["fingerprint"].clone();
    assert_ne!(after, before);
    assert_eq!(
        call(
            "POST",
            &url,
            Some(("application/json", body.as_bytes())),
            None
        )
        .0,
        200
    );
}

#[test]
fn stops_cleanly_on_sigterm_and_sigint() {
    for sig in ["TERM", "INT"] {
        let s = start(&[]);
        assert_eq!(
            call("GET", &format!("{}/api/models", s.url), None, None).0,
            200
        );
        let (status, err) = s.signal_and_wait(sig);
        assert!(status.success(), "SIG{sig}: {status:?} {err}");
        assert!(err.contains("mettle serve: stopped"), "{err}");
    }
}

#[test]
fn other_addresses_need_listen_and_warn() {
    let s = start(&[]);
    assert!(s
        .stderr
        .lock()
        .expect("lock")
        .contains("listening on http://127.0.0.1:"));
    assert!(!s.stderr.lock().expect("lock").contains("warning"));
    drop(s);
    // bound on every interface only because --listen says so; no traffic
    // is sent to it
    let s = start(&["--listen", "0.0.0.0:0"]);
    let err = s.stderr.lock().expect("lock").clone();
    assert!(err.contains("warning: listening on 0.0.0.0:"), "{err}");
    assert!(err.contains("with no --token"), "{err}");
    let (status, _) = s.signal_and_wait("TERM");
    assert!(status.success());
    // a model that does not load stops the start, naming the file
    let dir = tempfile::tempdir().expect("tmp");
    let bad = dir.path().join("bad.json");
    std::fs::write(&bad, "{}").expect("write");
    let (_, err, ok) = cli(&[
        "serve",
        "--models",
        &bad.display().to_string(),
        "--listen",
        "127.0.0.1:0",
    ]);
    assert!(!ok);
    assert!(err.contains("bad.json"), "{err}");
}

const XLSX: &str = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet";

/// The test's workbook: sheet `name` holding `csv`, after a cover sheet.
fn workbook(name: &str, csv: &str) -> Vec<u8> {
    common::workbook_bytes(
        name,
        csv,
        Some("INVENTED Fellhaven heats, not test results"),
    )
}

/// Status and bytes of a POST.
fn post_bytes(url: &str, kind: &str, body: &[u8]) -> (u16, Vec<u8>) {
    let mut r = agent()
        .post(url)
        .header("Content-Type", kind)
        .send(body)
        .expect("HTTP exchange");
    let status = r.status().as_u16();
    let got = r
        .body_mut()
        .with_config()
        .limit(64 << 20)
        .read_to_vec()
        .expect("body");
    (status, got)
}

/// A workbook in, estimates and a workbook out. The reference for equality
/// is the command line's own `predict` on the same rows (mettle checked
/// against itself, not against an outside source: the API's promise is the
/// command line's output); the heats' identifiers are the workbook's first
/// column, as written by this test.
#[test]
fn a_workbook_upload_gives_the_command_lines_estimates_and_ids() {
    let s = start(&[]);
    let export = root().join("datasets/fellhaven_new_welds_export.csv");
    let csv = std::fs::read_to_string(&export).expect("table");
    let book = workbook("new heats", &csv);
    let dir = tempfile::tempdir().expect("tmp");
    let book_path = dir.path().join("heats.xlsx");
    std::fs::write(&book_path, &book).expect("write");
    let m = model().display().to_string();
    let bp = book_path.display().to_string();
    let (want, err, ok) = cli(&[
        "predict",
        "--model",
        &m,
        "--input",
        &bp,
        "--sheet",
        "new heats",
        "--format",
        "json",
        // the server computes every error bar exactly, as --exact does
        "--exact",
    ]);
    assert!(ok, "{err}");
    // the same rows as the export CSV: the same estimates
    let (from_csv, err, ok) = cli(&[
        "predict",
        "--model",
        &m,
        "--input",
        &export.display().to_string(),
        "--format",
        "json",
        "--exact",
    ]);
    assert!(ok, "{err}");
    assert_eq!(json(&want), json(&from_csv));
    let url = format!("{}/api/models/fellhaven_welds/predict", s.url);
    // by its Content-Type, and by its first bytes alone
    for kind in [XLSX, "application/octet-stream"] {
        let (code, got) = post_bytes(&format!("{url}?sheet=new%20heats"), kind, &book);
        let got = String::from_utf8(got).expect("utf8");
        assert_eq!(code, 200, "{kind}: {got}");
        assert_eq!(json(&got), json(&want), "{kind}");
    }
    // a CSV file sent under the older workbook type (as some systems label
    // .csv files) is read by its bytes, as text
    let (code, got) = post_bytes(&url, "application/vnd.ms-excel", csv.as_bytes());
    let got = String::from_utf8(got).expect("utf8");
    assert_eq!(code, 200, "{got}");
    assert_eq!(json(&got), json(&want));
    // the heats keep their identifiers: the export's first column
    let got = json(&want);
    let ids: Vec<&str> = got["rows"]
        .as_array()
        .expect("rows")
        .iter()
        .map(|r| r["id"].as_str().expect("id"))
        .collect();
    let written: Vec<&str> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().expect("weld"))
        .collect();
    assert_eq!(ids, written);
    assert_eq!(got["id_column"], "weld");
    // workbook out: the bytes `predict --out FILE.xlsx` writes
    let out = dir.path().join("est.xlsx");
    let (_, err, ok) = cli(&[
        "predict",
        "--model",
        &m,
        "--input",
        &bp,
        "--sheet",
        "new heats",
        "--out",
        &out.display().to_string(),
        "--exact",
    ]);
    assert!(ok, "{err}");
    let (code, got) = post_bytes(&format!("{url}?sheet=new%20heats&format=xlsx"), XLSX, &book);
    assert_eq!(code, 200);
    assert_eq!(got, std::fs::read(&out).expect("workbook"));
    // requirements from the workbook: those of the same rows sent as JSON
    let reqs = "require=uts_mpa%3E%3D620&require=charpy_j%3E%3D47%40test_temp_c%3D-40";
    let (code, got) = post_bytes(
        &format!(
            "{}/api/models/fellhaven_welds/requirements?sheet=new%20heats&{reqs}",
            s.url
        ),
        XLSX,
        &book,
    );
    let got = String::from_utf8(got).expect("utf8");
    assert_eq!(code, 200, "{got}");
    let body = serde_json::json!({"csv": csv,
        "require": ["uts_mpa>=620", "charpy_j>=47@test_temp_c=-40"]})
    .to_string();
    let (code, want) = call(
        "POST",
        &format!("{}/api/models/fellhaven_welds/requirements", s.url),
        Some(("application/json", body.as_bytes())),
        None,
    );
    assert_eq!(code, 200, "{want}");
    assert_eq!(json(&got)["rows"], json(&want)["rows"]);
}

/// The message `mettle predict --input FILE --sheet SHEET` gives, from the
/// end of FILE's name on.
fn cli_workbook_message(book: &[u8], sheet: &str) -> String {
    let dir = tempfile::tempdir().expect("tmp");
    let p = dir.path().join("heats.xlsx");
    std::fs::write(&p, book).expect("write");
    let (_, err, ok) = cli(&[
        "predict",
        "--model",
        &model().display().to_string(),
        "--input",
        &p.display().to_string(),
        "--sheet",
        sheet,
    ]);
    assert!(!ok);
    let path = p.display().to_string();
    let at = err.find(&path).expect("the CLI names the file");
    err[at + path.len()..].trim().to_string()
}

#[test]
fn a_bad_workbook_gets_400_naming_sheet_row_and_column() {
    let s = start(&["--max-rows", "5"]);
    let url = format!(
        "{}/api/models/fellhaven_welds/predict?source=heats.xlsx",
        s.url
    );
    let csv = std::fs::read_to_string(root().join("datasets/fellhaven_new_welds_export.csv"))
        .expect("table");
    let lines: Vec<&str> = csv.lines().collect();
    // text in a number cell: row 2, column mn_wt
    let mut cells: Vec<&str> = lines[2].split(',').collect();
    cells[3] = "about1";
    let bad = workbook(
        "new heats",
        &format!("{}\n{}\n{}\n", lines[0], lines[1], cells.join(",")),
    );
    let want = cli_workbook_message(&bad, "new heats");
    assert!(
        want.starts_with(", sheet 'new heats': row 2 (line 3), column 'mn_wt'"),
        "{want}"
    );
    let (code, got) = post_bytes(&format!("{url}&sheet=new%20heats"), XLSX, &bad);
    let msg = json(&String::from_utf8_lossy(&got))["error"]
        .as_str()
        .expect("error")
        .to_string();
    assert_eq!(code, 400, "{msg}");
    assert_eq!(msg, format!("heats.xlsx{want}"));
    // a sheet the workbook lacks: its sheets listed, the nearest offered
    let want = cli_workbook_message(&bad, "New heats");
    let (code, got) = post_bytes(&format!("{url}&sheet=New%20heats"), XLSX, &bad);
    let msg = json(&String::from_utf8_lossy(&got))["error"]
        .as_str()
        .expect("error")
        .to_string();
    assert_eq!(code, 400, "{msg}");
    assert_eq!(msg, format!("heats.xlsx{want}"));
    assert!(msg.contains("did you mean 'new heats'") && msg.contains("cover, new heats"));
    // the first sheet by default: here a cover note with no data rows
    let (code, got) = post_bytes(&url, XLSX, &bad);
    assert_eq!(code, 400);
    assert!(
        String::from_utf8_lossy(&got).contains("sheet 'cover' has a header but no data rows"),
        "{}",
        String::from_utf8_lossy(&got)
    );
    // a damaged workbook: a zip's first bytes then noise; a real one cut short
    let good = workbook("new heats", &format!("{}\n{}\n", lines[0], lines[1]));
    let mut noise = b"PK\x03\x04".to_vec();
    noise.extend((0..4000u32).map(|i| (i.wrapping_mul(2_654_435_761) >> 24) as u8));
    for body in [noise, good[..good.len() / 2].to_vec()] {
        let (code, got) = post_bytes(&url, XLSX, &body);
        let text = String::from_utf8_lossy(&got).into_owned();
        assert_eq!(code, 400, "{text}");
        assert!(
            json(&text)["error"]
                .as_str()
                .is_some_and(|m| m.starts_with("heats.xlsx: cannot open the workbook")),
            "{text}"
        );
    }
    // declared a workbook, but text
    let (code, got) = post_bytes(&url, XLSX, csv.as_bytes());
    assert_eq!(code, 400);
    assert!(String::from_utf8_lossy(&got).contains("is not one"));
    // a sheet named for text rows: refused as the command line refuses it
    let two = format!("{}\n{}\n", lines[0], lines[1]);
    let (code, got) = post_bytes(&format!("{url}&sheet=welds"), "text/csv", two.as_bytes());
    assert_eq!(code, 400, "{}", String::from_utf8_lossy(&got));
    assert!(String::from_utf8_lossy(&got).contains("not a spreadsheet workbook"));
    // the limits hold for workbooks: 8 rows over --max-rows 5 (413), and
    // a body over 20 MB (413)
    let (code, got) = post_bytes(
        &format!("{url}&sheet=new%20heats"),
        XLSX,
        &workbook("new heats", &csv),
    );
    assert_eq!(code, 413, "{}", String::from_utf8_lossy(&got));
    assert_eq!(json(&String::from_utf8_lossy(&got))["limit"], "max_rows");
    let (code, got) = oversized(s.port, XLSX);
    assert_eq!(code, 413, "{got}");
    assert_eq!(json(&got)["limit"], "max_body_bytes");
    // and the server serves on
    let (code, _) = call("GET", &format!("{}/api/models", s.url), None, None);
    assert_eq!(code, 200);
}
