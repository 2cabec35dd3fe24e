//! `mettle serve`: one page and a small JSON API for estimating heats from
//! a browser, served by the binary itself (axum on tokio). The page and
//! its script are embedded; every estimate comes from the library, the
//! same code as `mettle predict`. See docs/serve.md.

mod api;
mod guard;
mod page;
mod registry;
mod reply;
mod rows;
#[cfg(test)]
mod tests;

use std::net::SocketAddr;
use std::path::PathBuf;
use std::sync::{Arc, RwLock};
use std::time::Duration;

use anyhow::Context;

use registry::Registry;

/// The limits every request is held to.
#[derive(Clone, Debug)]
pub struct Limits {
    /// Largest request body, bytes.
    pub max_body: usize,
    /// Most rows in one request.
    pub max_rows: usize,
    /// Longest time a request may take, body included.
    pub timeout: Duration,
}

/// How to serve.
#[derive(Clone, Debug)]
pub struct Config {
    /// Model files or folders of them.
    pub models: Vec<PathBuf>,
    /// Address to listen on.
    pub listen: SocketAddr,
    /// Access token every request must carry, if any.
    pub token: Option<String>,
    /// The limits.
    pub limits: Limits,
    /// Open the page in the desktop's browser.
    pub open: bool,
}

/// What every handler shares.
pub struct AppState {
    models: RwLock<Arc<Registry>>,
    sources: Vec<PathBuf>,
    limits: Limits,
    token: Option<[u8; 32]>,
    page: String,
}

fn app(models: Registry, cfg: &Config) -> axum::Router {
    let state = Arc::new(AppState {
        models: RwLock::new(Arc::new(models)),
        sources: cfg.models.clone(),
        limits: cfg.limits.clone(),
        token: cfg.token.as_deref().map(guard::digest),
        page: page::html(),
    });
    guard::harden(api::routes(), state)
}

/// Serve until SIGINT or SIGTERM; requests under way are answered first.
///
/// # Errors
/// A model that does not load, an address that cannot be bound.
pub fn run(cfg: Config) -> anyhow::Result<()> {
    let models = Registry::load(&cfg.models)?;
    let rt = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .context("starting the server's runtime")?;
    rt.block_on(async move {
        let listener = tokio::net::TcpListener::bind(cfg.listen)
            .await
            .with_context(|| format!("listening on {}", cfg.listen))?;
        let addr = listener.local_addr()?;
        if !addr.ip().is_loopback() {
            eprintln!(
                "warning: listening on {addr}, reachable from other machines{}; the page and API carry no encryption",
                if cfg.token.is_none() { " with no --token" } else { "" }
            );
        }
        // the handlers are in place before the address is announced: a
        // signal sent as soon as the server answers stops it cleanly
        let stop = Stop::install();
        let names: Vec<&str> = models.entries.iter().map(|e| e.id.as_str()).collect();
        eprintln!("mettle serve: {} model(s): {}", names.len(), names.join(", "));
        let url = format!("http://{addr}/");
        eprintln!("mettle serve: listening on {url} (Ctrl-C to stop)");
        eprintln!("{}", mettle::predict::CAUTION);
        if cfg.open {
            open_browser(&url, cfg.token.as_deref());
        }
        let app = app(models, &cfg);
        axum::serve(listener, app)
            .with_graceful_shutdown(stop.wait())
            .await
            .context("serving")?;
        eprintln!("mettle serve: stopped");
        Ok(())
    })
}

/// SIGINT (Ctrl-C) or SIGTERM, their handlers installed when this is made
/// (tokio's `ctrl_c()` installs its handler only when first polled, which
/// left a window after start-up in which a signal ended the process at once).
struct Stop {
    #[cfg(unix)]
    streams: Option<(tokio::signal::unix::Signal, tokio::signal::unix::Signal)>,
}

impl Stop {
    fn install() -> Stop {
        #[cfg(unix)]
        {
            use tokio::signal::unix::{signal, SignalKind};
            let streams = match (
                signal(SignalKind::interrupt()),
                signal(SignalKind::terminate()),
            ) {
                (Ok(i), Ok(t)) => Some((i, t)),
                _ => None,
            };
            Stop { streams }
        }
        #[cfg(not(unix))]
        Stop {}
    }

    async fn wait(self) {
        #[cfg(unix)]
        match self.streams {
            Some((mut int, mut term)) => {
                tokio::select! {
                    _ = int.recv() => {},
                    _ = term.recv() => {},
                }
            }
            None => {
                let _ = tokio::signal::ctrl_c().await;
            }
        }
        #[cfg(not(unix))]
        let _ = tokio::signal::ctrl_c().await;
        eprintln!("mettle serve: shutting down (answering requests under way)");
    }
}

fn open_browser(url: &str, token: Option<&str>) {
    let full = match token {
        Some(t) => format!("{url}?token={t}"),
        None => url.to_string(),
    };
    let opener = if cfg!(target_os = "macos") {
        "open"
    } else {
        "xdg-open"
    };
    if std::process::Command::new(opener)
        .arg(&full)
        .spawn()
        .is_err()
    {
        eprintln!("mettle serve: could not start a browser ({opener}); open {url} yourself");
    }
}
