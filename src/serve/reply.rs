//! Answers other than a result: every refusal is JSON naming what was
//! wrong and, for a limit, which limit and its value.

use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use serde_json::{json, Value};

/// An error answer: status and JSON body `{"error": ..., "limit"?: ..., "value"?: ...}`.
#[derive(Debug)]
pub struct Reply {
    /// HTTP status.
    pub status: StatusCode,
    /// The JSON body.
    pub body: Value,
}

impl Reply {
    fn new(status: StatusCode, message: impl Into<String>) -> Reply {
        Reply {
            status,
            body: json!({"error": message.into()}),
        }
    }

    fn limit(status: StatusCode, message: String, limit: &str, value: u64) -> Reply {
        Reply {
            status,
            body: json!({"error": message, "limit": limit, "value": value}),
        }
    }

    /// 400: the rows or settings sent cannot be used.
    pub fn bad_input(message: impl Into<String>) -> Reply {
        Reply::new(StatusCode::BAD_REQUEST, message)
    }

    /// 404: nothing here by that name.
    pub fn not_found(what: impl Into<String>) -> Reply {
        Reply::new(StatusCode::NOT_FOUND, what)
    }

    /// 401: the access token is missing or wrong.
    pub fn unauthorised() -> Reply {
        Reply::new(
            StatusCode::UNAUTHORIZED,
            "this server needs its access token: send 'Authorization: Bearer TOKEN' or add ?token=TOKEN to the page's address",
        )
    }

    /// 500: a fault of the server, not of the request.
    pub fn internal(message: impl Into<String>) -> Reply {
        Reply::new(StatusCode::INTERNAL_SERVER_ERROR, message)
    }

    /// 413: more rows than one request may carry.
    pub fn too_many_rows(rows: usize, max: usize) -> Reply {
        Reply::limit(
            StatusCode::PAYLOAD_TOO_LARGE,
            format!("the request holds {rows} rows; the limit (max_rows) is {max} rows per request: split the table"),
            "max_rows",
            max as u64,
        )
    }

    /// 413: a body over the size limit.
    pub fn body_too_large(max: usize) -> Reply {
        Reply::limit(
            StatusCode::PAYLOAD_TOO_LARGE,
            format!(
                "the request body is larger than the limit (max_body_bytes) of {max} bytes ({:.0} MB)",
                max as f64 / 1_048_576.0
            ),
            "max_body_bytes",
            max as u64,
        )
    }

    /// 408: the request took longer than allowed.
    pub fn timed_out(ms: u64) -> Reply {
        Reply::limit(
            StatusCode::REQUEST_TIMEOUT,
            format!("the request took longer than the limit (request_timeout_ms) of {ms} ms: send fewer rows or points"),
            "request_timeout_ms",
            ms,
        )
    }
}

impl IntoResponse for Reply {
    fn into_response(self) -> Response {
        (self.status, axum::Json(self.body)).into_response()
    }
}
