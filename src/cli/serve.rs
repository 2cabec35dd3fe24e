//! `mettle serve`

use std::net::SocketAddr;
use std::path::PathBuf;
use std::time::Duration;

use clap::Args;

use crate::serve::{run as serve, Config, Limits};

/// Arguments of `mettle serve`.
#[derive(Args, Debug)]
#[command(
    about = "Serve a page for estimating heats in a browser, and its JSON API.",
    long_about = "Serve one page and a small JSON API from this binary: pick a model, type a heat into a \
form (each input with its unit and trained range, starting from the median training heat), paste \
rows from a spreadsheet or upload a CSV file or an Excel workbook (.xlsx, read as `mettle predict \
--input FILE.xlsx` reads it; heat numbers kept), and read each target's estimate with its 95 % interval, the \
noise and model parts, the domain verdict, the probability of meeting typed requirements (screen's \
syntax), a sweep of one input and, for an impact-energy model with a test-temperature input, the \
transition curve. Results download as CSV, JSON or an .xlsx workbook, the same files as `mettle \
predict` writes.\n\n\
The server listens on loopback (127.0.0.1:8470) unless --listen names another address, which \
prints a warning: the page carries no encryption. With --token every request must carry the token \
(header 'Authorization: Bearer TOKEN', or ?token=TOKEN in the page's address). Models are read once \
at start and never written; POST /api/reload reads them again and swaps them in only when every \
file reads. Ctrl-C or SIGTERM stops the server after answering the requests under way.\n\n\
The API is described in docs/serve.md.\n\n\
Estimates are not test results: qualification testing per the applicable code decides.",
    after_long_help = "Example:\n  mettle serve --models models/\n  mettle serve --models uts.json charpy.json --listen 127.0.0.1:9000 --open"
)]
pub struct ServeArgs {
    /// Model files, or folders whose *.json files are all models.
    #[arg(long, value_name = "DIR|FILE", required = true, num_args = 1..)]
    models: Vec<PathBuf>,
    /// Address and port to listen on (port 0: any free port, printed at start).
    #[arg(long, value_name = "ADDR:PORT", default_value = "127.0.0.1:8470")]
    listen: SocketAddr,
    /// Open the page in the desktop's browser.
    #[arg(long)]
    open: bool,
    /// Access token every request must carry.
    #[arg(long, value_name = "TOKEN")]
    token: Option<String>,
    /// Largest request body, MB.
    #[arg(long, value_name = "MB", default_value_t = 20,
          value_parser = clap::value_parser!(u64).range(1..=1024))]
    max_body_mb: u64,
    /// Most rows in one request.
    #[arg(long, value_name = "N", default_value_t = 10_000,
          value_parser = clap::value_parser!(u64).range(1..=10_000_000))]
    max_rows: u64,
    /// Longest time a request may take, body included, in seconds.
    #[arg(long, value_name = "SECONDS", default_value_t = 60.0)]
    timeout: f64,
}

pub fn run(a: ServeArgs) -> anyhow::Result<()> {
    if !(a.timeout.is_finite() && a.timeout > 0.0 && a.timeout <= 86_400.0) {
        return Err(super::UsageError(format!(
            "--timeout {}: expected seconds above 0, at most 86400",
            a.timeout
        ))
        .into());
    }
    if let Some(t) = &a.token {
        if t.trim().is_empty() || t.chars().any(char::is_control) {
            return Err(super::UsageError(
                "--token: expected a non-empty token without control characters".into(),
            )
            .into());
        }
    }
    serve(Config {
        models: a.models,
        listen: a.listen,
        token: a.token,
        limits: Limits {
            max_body: usize::try_from(a.max_body_mb * 1_048_576).unwrap_or(usize::MAX),
            max_rows: usize::try_from(a.max_rows).unwrap_or(usize::MAX),
            timeout: Duration::from_secs_f64(a.timeout),
        },
        open: a.open,
    })
}
