//! What stands between a request and the API: the access token, the body
//! and time limits, a JSON 404 for every other path, and a 500 (the server
//! serving on) for a panic in a handler.

use std::collections::HashMap;
use std::sync::Arc;

use axum::extract::{DefaultBodyLimit, Query, Request, State};
use axum::http::header;
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::Router;
use sha2::{Digest, Sha256};
use tower_http::catch_panic::CatchPanicLayer;

use super::reply::Reply;
use super::AppState;

/// `routes` behind every guard.
pub fn harden(routes: Router<Arc<AppState>>, state: Arc<AppState>) -> Router {
    routes
        .fallback(not_found)
        .layer(DefaultBodyLimit::max(state.limits.max_body))
        .layer(middleware::from_fn_with_state(state.clone(), declared_size))
        .layer(middleware::from_fn_with_state(state.clone(), time_limit))
        .layer(middleware::from_fn_with_state(state.clone(), token))
        .layer(CatchPanicLayer::custom(panicked))
        .with_state(state)
}

async fn not_found(req: Request) -> Reply {
    // the path is not echoed: nothing here is read from disk by name
    let _ = req;
    Reply::not_found("nothing here: the page is at / and the API under /api/ (docs/serve.md)")
}

fn panicked(_: Box<dyn std::any::Any + Send + 'static>) -> Response {
    Reply::internal("the server met an internal fault answering this request; it goes on serving")
        .into_response()
}

/// SHA-256 of a token: tokens are compared by their digests, so the time
/// a comparison takes says nothing about the token.
pub fn digest(token: &str) -> [u8; 32] {
    Sha256::digest(token.as_bytes()).into()
}

async fn token(State(s): State<Arc<AppState>>, req: Request, next: Next) -> Response {
    let Some(want) = s.token else {
        return next.run(req).await;
    };
    let bearer = req
        .headers()
        .get(header::AUTHORIZATION)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.strip_prefix("Bearer "))
        .map(str::to_string);
    let query = Query::<HashMap<String, String>>::try_from_uri(req.uri())
        .ok()
        .and_then(|q| q.0.get("token").cloned());
    let ok = bearer.into_iter().chain(query).any(|t| digest(&t) == want);
    if ok {
        next.run(req).await
    } else {
        Reply::unauthorised().into_response()
    }
}

/// A body whose Content-Length already says it is over the limit is
/// refused before a byte of it is read (413); a body of no stated length is
/// cut off at the limit as it arrives ([`DefaultBodyLimit`]).
async fn declared_size(State(s): State<Arc<AppState>>, req: Request, next: Next) -> Response {
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.trim().parse::<u64>().ok());
    match declared {
        Some(n) if n > s.limits.max_body as u64 => {
            Reply::body_too_large(s.limits.max_body).into_response()
        }
        _ => next.run(req).await,
    }
}

async fn time_limit(State(s): State<Arc<AppState>>, req: Request, next: Next) -> Response {
    match tokio::time::timeout(s.limits.timeout, next.run(req)).await {
        Ok(r) => r,
        Err(_) => Reply::timed_out(s.limits.timeout.as_millis() as u64).into_response(),
    }
}
