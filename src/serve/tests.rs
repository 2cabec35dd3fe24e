//! A panic in a handler: the client gets a 500 with a JSON message and the
//! server answers the next request (RFC 9110 §15.6.1, 500 Internal Server
//! Error). Needs a route that panics, so it is built here rather than
//! through the binary.

use std::path::PathBuf;
use std::time::Duration;

use axum::routing::get;

use super::*;

#[test]
fn a_panic_in_a_handler_is_a_500_and_the_server_serves_on() {
    let model = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("models/fellhaven_welds.json");
    let cfg = Config {
        models: vec![model],
        listen: "127.0.0.1:0".parse().expect("address"),
        token: None,
        limits: Limits {
            max_body: 1 << 20,
            max_rows: 100,
            timeout: Duration::from_secs(30),
        },
        open: false,
    };
    let registry = Registry::load(&cfg.models).expect("model");
    let state = Arc::new(AppState {
        models: RwLock::new(Arc::new(registry)),
        sources: cfg.models.clone(),
        limits: cfg.limits.clone(),
        token: None,
        page: page::html(),
    });
    let routes = api::routes().route(
        "/boom",
        get(|| async {
            let v: Vec<String> = Vec::new();
            // an index out of bounds, as a bug would make it
            std::hint::black_box(&v)[3].clone()
        }),
    );
    let app = guard::harden(routes, state);
    let rt = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(1)
        .enable_all()
        .build()
        .expect("runtime");
    let listener = rt
        .block_on(tokio::net::TcpListener::bind(cfg.listen))
        .expect("bind");
    let addr = listener.local_addr().expect("address");
    rt.spawn(async move { axum::serve(listener, app).await });
    let agent: ureq::Agent = ureq::Agent::config_builder()
        .http_status_as_error(false)
        .build()
        .into();
    for _ in 0..2 {
        let mut r = agent
            .get(&format!("http://{addr}/boom"))
            .call()
            .expect("an answer, not a dropped connection");
        assert_eq!(r.status().as_u16(), 500);
        let body = r.body_mut().read_to_string().expect("body");
        let v: serde_json::Value = serde_json::from_str(&body).expect("JSON");
        assert!(
            v["error"]
                .as_str()
                .is_some_and(|m| m.contains("goes on serving")),
            "{body}"
        );
        let r = agent
            .get(&format!("http://{addr}/api/models"))
            .call()
            .expect("served on");
        assert_eq!(r.status().as_u16(), 200);
    }
}
