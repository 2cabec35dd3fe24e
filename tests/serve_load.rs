//! A short load run against `mettle serve` on loopback: 32 clients, 320
//! requests of 100 rows each (the full 2 000-request run is
//! `cargo bench --bench serve_load`, figures in docs/serve.md). Zero errors
//! and the server's memory flat after the warm-up are checked; no time is
//! asserted (the suite never times itself, DEVELOPERS.md). Every answer
//! must hold 100 estimates. The rows are the bundled invented Fellhaven
//! data.

#[path = "../benches/support/server.rs"]
mod server;

use std::path::Path;

use server::{fellhaven_rows_body, load, root, Server};

#[test]
fn thirty_two_clients_get_every_answer_and_memory_stays_flat() {
    let s = Server::start(
        Path::new(env!("CARGO_BIN_EXE_mettle")),
        &[&root().join("models/fellhaven_welds.json")],
        &[],
    );
    let body = fellhaven_rows_body(100);
    let r = load(
        &s,
        "/api/models/fellhaven_welds/predict",
        &body,
        100,
        32,
        320,
        64,
    );
    eprintln!("{r:?}");
    assert_eq!(r.errors, 0, "{r:?}");
    // flat: the end within 25 % (and 32 MB) of the resident memory after
    // the warm-up (common practice, no source: a leak of one answer's
    // buffers per request would grow it by several MB per 100 requests)
    assert!(
        r.rss_end_mb <= 1.25 * r.rss_after_warmup_mb + 32.0,
        "memory grew: {r:?}"
    );
    assert!(
        r.rss_max_mb <= 1.5 * r.rss_after_warmup_mb + 64.0,
        "memory peaked: {r:?}"
    );
}
