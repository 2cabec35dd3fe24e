//! A `mettle serve` started for a test or bench on an ephemeral loopback
//! port, and a load run against it (32 clients and the like). Shared by
//! tests/serve*.rs and benches/serve_load.rs.

#![allow(dead_code)] // each user takes a different subset

use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

/// A running server: its process, its address and what it has printed.
pub struct Server {
    child: Child,
    /// `http://127.0.0.1:PORT`, no trailing slash.
    pub url: String,
    /// The port.
    pub port: u16,
    /// Standard error so far.
    pub stderr: Arc<Mutex<String>>,
}

/// The repository root.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

impl Server {
    /// `mettle serve --models MODELS --listen 127.0.0.1:0 EXTRA…`, waiting
    /// (at most 60 s) until it says where it listens.
    pub fn start(bin: &Path, models: &[&Path], extra: &[&str]) -> Server {
        let mut cmd = Command::new(bin);
        cmd.arg("serve").arg("--models");
        for m in models {
            cmd.arg(m);
        }
        if !extra.contains(&"--listen") {
            cmd.args(["--listen", "127.0.0.1:0"]);
        }
        cmd.args(extra)
            .stdin(Stdio::null())
            .stdout(Stdio::null())
            .stderr(Stdio::piped());
        let mut child = cmd.spawn().expect("start mettle serve");
        let err = child.stderr.take().expect("stderr piped");
        let stderr = Arc::new(Mutex::new(String::new()));
        let (tx, rx) = std::sync::mpsc::channel();
        let sink = stderr.clone();
        std::thread::spawn(move || {
            for line in BufReader::new(err).lines().map_while(Result::ok) {
                // the line is kept before the address is announced, so a
                // caller that reads stderr once started sees every line
                // printed up to the address
                {
                    let mut s = sink.lock().expect("stderr lock");
                    s.push_str(&line);
                    s.push('\n');
                }
                if let Some(rest) = line.split("listening on http://").nth(1) {
                    let addr = rest.split('/').next().unwrap_or_default().to_string();
                    let _ = tx.send(addr);
                }
            }
        });
        let addr = match rx.recv_timeout(Duration::from_secs(60)) {
            Ok(a) => a,
            Err(_) => {
                let _ = child.kill();
                let _ = child.wait();
                panic!(
                    "mettle serve did not start: {}",
                    stderr.lock().expect("lock")
                );
            }
        };
        let port = addr
            .rsplit(':')
            .next()
            .and_then(|p| p.parse().ok())
            .expect("port");
        Server {
            child,
            url: format!("http://127.0.0.1:{port}"),
            port,
            stderr,
        }
    }

    /// The server's process id.
    pub fn pid(&self) -> u32 {
        self.child.id()
    }

    /// Send a signal by name (TERM, INT) and wait (at most 30 s) for the
    /// exit; the exit status and everything printed on standard error.
    pub fn signal_and_wait(mut self, sig: &str) -> (std::process::ExitStatus, String) {
        let ok = Command::new("kill")
            .arg(format!("-{sig}"))
            .arg(self.child.id().to_string())
            .status()
            .expect("run kill");
        assert!(ok.success(), "kill -{sig} failed");
        let t0 = Instant::now();
        loop {
            if let Some(status) = self.child.try_wait().expect("wait") {
                // the reader thread finishes with the pipe
                std::thread::sleep(Duration::from_millis(100));
                let s = self.stderr.lock().expect("lock").clone();
                return (status, s);
            }
            assert!(
                t0.elapsed() < Duration::from_secs(30),
                "the server did not stop within 30 s of SIG{sig}"
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// Resident memory of process `pid`, MB (`VmRSS` of /proc/PID/status).
pub fn rss_mb(pid: u32) -> Option<f64> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    let line = status.lines().find(|l| l.starts_with("VmRSS:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// An HTTP client that hands back 4xx and 5xx answers rather than errors.
pub fn agent() -> ureq::Agent {
    ureq::Agent::config_builder()
        .http_status_as_error(false)
        .timeout_global(Some(Duration::from_secs(120)))
        .build()
        .into()
}

/// What a load run measured.
#[derive(Debug)]
pub struct LoadReport {
    /// Requests sent.
    pub requests: usize,
    /// Answers other than 200 with the expected row count, and transport errors.
    pub errors: usize,
    /// Wall time of the run.
    pub seconds: f64,
    /// Latency quantiles, ms.
    pub p50_ms: f64,
    /// 99th percentile, ms.
    pub p99_ms: f64,
    /// Server resident memory after the warm-up share and at the end, MB.
    pub rss_after_warmup_mb: f64,
    /// At the end.
    pub rss_end_mb: f64,
    /// Largest seen during the run (sampled every request by client 0).
    pub rss_max_mb: f64,
}

/// `requests` POSTs of `body` (JSON rows expecting `rows_each` estimates
/// in the answer's `rows`)
/// to `path`, spread over `clients` threads; the first `warmup` requests
/// (not timed) fill the server's caches and allocator arenas first.
pub fn load(
    server: &Server,
    path: &str,
    body: &str,
    rows_each: usize,
    clients: usize,
    requests: usize,
    warmup: usize,
) -> LoadReport {
    let url = format!("{}{path}", server.url);
    let run = |n: usize, sample: bool| -> (Vec<f64>, usize, f64, f64) {
        let next = Arc::new(std::sync::atomic::AtomicUsize::new(0));
        let t0 = Instant::now();
        let mut handles = Vec::new();
        for c in 0..clients {
            let (url, body, next) = (url.clone(), body.to_string(), next.clone());
            let pid = server.pid();
            handles.push(std::thread::spawn(move || {
                let agent = agent();
                let mut lat = Vec::new();
                let mut errors = 0;
                let mut rss_max: f64 = 0.0;
                while next.fetch_add(1, std::sync::atomic::Ordering::Relaxed) < n {
                    let t = Instant::now();
                    let ok = match agent
                        .post(&url)
                        .header("Content-Type", "application/json")
                        .send(body.as_bytes())
                    {
                        Ok(mut r) => {
                            r.status() == 200
                                && r.body_mut()
                                    .read_to_string()
                                    .ok()
                                    .and_then(|t| {
                                        serde_json::from_str::<serde_json::Value>(&t).ok()
                                    })
                                    .and_then(|v| v["rows"].as_array().map(Vec::len))
                                    == Some(rows_each)
                        }
                        Err(_) => false,
                    };
                    lat.push(t.elapsed().as_secs_f64() * 1000.0);
                    if !ok {
                        errors += 1;
                    }
                    if sample && c == 0 {
                        rss_max = rss_max.max(rss_mb(pid).unwrap_or(0.0));
                    }
                }
                (lat, errors, rss_max)
            }));
        }
        let mut lat = Vec::new();
        let mut errors = 0;
        let mut rss_max: f64 = 0.0;
        for h in handles {
            let (l, e, m) = h.join().expect("client thread");
            lat.extend(l);
            errors += e;
            rss_max = rss_max.max(m);
        }
        (lat, errors, t0.elapsed().as_secs_f64(), rss_max)
    };
    let (_, warm_errors, _, _) = run(warmup, false);
    let rss_after_warmup_mb = rss_mb(server.pid()).unwrap_or(f64::NAN);
    let (mut lat, errors, seconds, rss_max_mb) = run(requests, true);
    let rss_end_mb = rss_mb(server.pid()).unwrap_or(f64::NAN);
    lat.sort_by(f64::total_cmp);
    let q = |p: f64| lat[((lat.len() as f64 - 1.0) * p).round() as usize];
    LoadReport {
        requests,
        errors: errors + warm_errors,
        seconds,
        p50_ms: q(0.50),
        p99_ms: q(0.99),
        rss_after_warmup_mb,
        rss_end_mb,
        rss_max_mb,
    }
}

/// A JSON body of `n` rows: the rows of the bundled new-welds table
/// (invented Fellhaven data) repeated, as `{"rows": [...]}`.
pub fn fellhaven_rows_body(n: usize) -> String {
    let text = std::fs::read_to_string(root().join("datasets/fellhaven_new_welds.csv"))
        .expect("bundled table");
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    let objects: Vec<serde_json::Value> = (0..n)
        .map(|i| {
            let r = &rows[i % rows.len()];
            let m: serde_json::Map<String, serde_json::Value> = header
                .iter()
                .zip(r)
                .map(|(h, v)| {
                    let x = v
                        .parse::<f64>()
                        .map(serde_json::Value::from)
                        .unwrap_or_else(|_| serde_json::Value::from(*v));
                    (h.to_string(), x)
                })
                .collect();
            serde_json::Value::Object(m)
        })
        .collect();
    serde_json::json!({ "rows": objects }).to_string()
}
