//! The full load run of `mettle serve` (issue: 32 concurrent clients on
//! loopback, 2 000 requests of 100 rows each): throughput, p50 and p99
//! latency, errors, and the server's resident memory after the warm-up,
//! at its largest and at the end. Run by hand (`cargo bench --bench
//! serve_load`); the figures are in docs/serve.md. The short version runs
//! in `make test` (tests/serve_load.rs).
//!
//! Options: --clients N (32), --requests N (2000), --rows N (100).

#[path = "support/server.rs"]
mod server;

use std::path::PathBuf;

use server::{fellhaven_rows_body, load, root, Server};

fn arg(args: &[String], name: &str, default: usize) -> usize {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let clients = arg(&args, "--clients", 32);
    let requests = arg(&args, "--requests", 2000);
    let rows = arg(&args, "--rows", 100);
    let bin = PathBuf::from(env!("CARGO_BIN_EXE_mettle"));
    let s = Server::start(&bin, &[&root().join("models/fellhaven_welds.json")], &[]);
    let body = fellhaven_rows_body(rows);
    let r = load(
        &s,
        "/api/models/fellhaven_welds/predict",
        &body,
        rows,
        clients,
        requests,
        2 * clients,
    );
    println!(
        "{} clients, {} requests of {} rows: {:.1} s, {:.1} requests/s ({:.0} rows/s), p50 {:.1} ms, p99 {:.1} ms, errors {}",
        clients,
        r.requests,
        rows,
        r.seconds,
        r.requests as f64 / r.seconds,
        (r.requests * rows) as f64 / r.seconds,
        r.p50_ms,
        r.p99_ms,
        r.errors
    );
    println!(
        "server resident memory: {:.1} MB after the warm-up, {:.1} MB at most, {:.1} MB at the end",
        r.rss_after_warmup_mb, r.rss_max_mb, r.rss_end_mb
    );
    assert_eq!(r.errors, 0);
}
