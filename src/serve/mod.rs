//! `clockprep serve`: a local web page over the library. The server is a thin layer: every
//! sheet on the page is computed by the same entry points and rendered by the same HTML
//! renderers as the CLI ([`compute`]); the form is read off the spec's text and edits are
//! applied back to it ([`form`]). Nothing in the library imports this stage.
//!
//! Safety of the server itself: it listens on loopback unless told otherwise, refuses requests
//! that name another host (DNS rebinding) or come from another origin ([`guard`]), caps a
//! request body at 1 MiB, runs at most one computation per core at a time with a time limit,
//! and lets no path in a request reach the file system: Save writes only the file the server
//! was started with ([`save`]).

pub mod compute;
pub mod form;
pub mod guard;
mod out;
pub mod page;
pub mod save;

use crate::error::Error;
use axum::extract::{DefaultBodyLimit, Request, State};
use axum::http::{header, HeaderMap, HeaderValue, Method, StatusCode};
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::{Json, Router};
use compute::{Computed, Located, Times};
use std::net::{IpAddr, SocketAddr};
use std::path::PathBuf;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};
use tokio::sync::Semaphore;

/// The largest request body accepted (the spec's own size limit is the same).
pub const BODY_LIMIT: usize = crate::spec::limits::INPUT_BYTES;
/// How long one recompute may take before the page is told to simplify the spec.
pub const COMPUTE_LIMIT: Duration = Duration::from_secs(30);
/// The port served when none is given.
pub const DEFAULT_PORT: u16 = 7413;

/// How `clockprep serve` was started.
#[derive(Debug, Clone)]
pub struct Options {
    /// The spec to edit; None starts from the bromate starter, with Save off.
    pub spec: Option<PathBuf>,
    pub port: u16,
    /// The address to listen on; loopback unless `--listen` was given.
    pub listen: IpAddr,
}

struct App {
    name: String,
    initial: String,
    token: String,
    file: Option<Mutex<save::SpecFile>>,
    workers: Arc<Semaphore>,
    hosts: guard::Hosts,
}

/// Start the server and serve until Ctrl-C (or SIGTERM). Prints the address to open.
pub fn serve(options: Options) -> Result<i32, Error> {
    let (name, initial, file) = match &options.spec {
        Some(path) => {
            let text = crate::output::read_input(path, "spec")?;
            let file = save::SpecFile::new(path.clone(), text.clone().into_bytes());
            (path.display().to_string(), text, Some(Mutex::new(file)))
        }
        None => {
            let text = crate::spec::starter::starter(&crate::spec::starter::StarterOptions {
                preset: "bromate-iodide".into(),
                volume_ml: 50,
                runs: 4,
                stations: 4,
                title: "New clock-reaction lab (edit this title)".into(),
            })
            .map_err(|message| Error::Starter { message })?;
            ("new-lab.toml".to_string(), text, None)
        }
    };
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .enable_all()
        .build()
        .map_err(|e| Error::Serve {
            reason: format!("cannot start the server's runtime: {e}"),
        })?;
    runtime.block_on(async move {
        let addr = SocketAddr::new(options.listen, options.port);
        let listener = tokio::net::TcpListener::bind(addr)
            .await
            .map_err(|e| Error::Serve {
                reason: format!("cannot listen on {addr}: {e}"),
            })?;
        let bound = listener.local_addr().map_err(|e| Error::Serve {
            reason: e.to_string(),
        })?;
        let cores = std::thread::available_parallelism().map_or(2, |n| n.get());
        let app = Arc::new(App {
            name,
            initial,
            token: guard::token(),
            file,
            workers: Arc::new(Semaphore::new(cores)),
            hosts: guard::Hosts {
                port: bound.port(),
                loopback_only: options.listen.is_loopback(),
            },
        });
        if !options.listen.is_loopback() {
            eprintln!("warning: serving on {bound}, reachable from other machines on this network; the page has no login, so anyone who can reach it can read and edit the spec (Save still needs this run's token)");
        }
        let shown = if bound.ip().is_unspecified() || bound.ip().is_loopback() {
            format!("http://127.0.0.1:{}/", bound.port())
        } else {
            format!("http://{bound}/")
        };
        println!("clockprep serve: open {shown} in a browser (Ctrl-C stops the server)");
        use std::io::Write;
        let _ = std::io::stdout().flush();
        axum::serve(listener, router(app))
            .with_graceful_shutdown(stopped())
            .await
            .map_err(|e| Error::Serve {
                reason: e.to_string(),
            })?;
        println!("clockprep serve: stopped");
        Ok(crate::cli::EXIT_OK)
    })
}

async fn stopped() {
    let ctrl_c = tokio::signal::ctrl_c();
    #[cfg(unix)]
    {
        let mut term =
            match tokio::signal::unix::signal(tokio::signal::unix::SignalKind::terminate()) {
                Ok(t) => t,
                Err(_) => {
                    let _ = ctrl_c.await;
                    return;
                }
            };
        tokio::select! {
            _ = ctrl_c => {}
            _ = term.recv() => {}
        }
    }
    #[cfg(not(unix))]
    {
        let _ = ctrl_c.await;
    }
}

fn router(app: Arc<App>) -> Router {
    Router::new()
        .route("/", get(index))
        .route("/assets/page.css", get(css))
        .route("/assets/page.js", get(js))
        .route("/api/compute", post(api_compute))
        .route("/api/edit", post(api_edit))
        .route("/api/apply", post(api_apply))
        .route("/api/save", post(api_save))
        .route("/out/{file}", post(out::out))
        .layer(middleware::from_fn_with_state(app.clone(), guarded))
        .layer(DefaultBodyLimit::max(BODY_LIMIT))
        .with_state(app)
}

fn refuse(status: StatusCode, why: &str) -> Response {
    (status, format!("clockprep serve: {why}\n")).into_response()
}

/// Host and Origin checks before any handler; security headers on every answer.
async fn guarded(State(app): State<Arc<App>>, req: Request, next: Next) -> Response {
    let headers = req.headers();
    let host = headers
        .get(header::HOST)
        .and_then(|h| h.to_str().ok())
        .unwrap_or("");
    if !app.hosts.allows(host) {
        return refuse(
            StatusCode::MISDIRECTED_REQUEST,
            "this server answers only to the address it printed at start (the Host header names another)",
        );
    }
    if req.method() != Method::GET && req.method() != Method::HEAD {
        let foreign_origin = headers
            .get(header::ORIGIN)
            .and_then(|o| o.to_str().ok())
            .is_some_and(|o| !app.hosts.allows_origin(o));
        let cross_site = headers
            .get("sec-fetch-site")
            .is_some_and(|s| s.as_bytes() == b"cross-site");
        if foreign_origin || cross_site {
            return refuse(
                StatusCode::FORBIDDEN,
                "requests from pages of other sites are refused",
            );
        }
    }
    let mut res = next.run(req).await;
    let h = res.headers_mut();
    h.insert(
        header::X_CONTENT_TYPE_OPTIONS,
        HeaderValue::from_static("nosniff"),
    );
    h.insert(
        header::REFERRER_POLICY,
        HeaderValue::from_static("no-referrer"),
    );
    h.insert(header::CACHE_CONTROL, HeaderValue::from_static("no-store"));
    h.entry(header::CONTENT_SECURITY_POLICY).or_insert(HeaderValue::from_static(
        "default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data:; form-action 'self'; frame-ancestors 'none'; base-uri 'none'",
    ));
    res
}

async fn index(State(app): State<Arc<App>>) -> Response {
    let html = page::shell(&app.name, &app.initial, &app.token, app.file.is_some());
    ([(header::CONTENT_TYPE, "text/html; charset=utf-8")], html).into_response()
}

async fn css() -> Response {
    (
        [(header::CONTENT_TYPE, "text/css; charset=utf-8")],
        page::CSS,
    )
        .into_response()
}

async fn js() -> Response {
    (
        [(header::CONTENT_TYPE, "text/javascript; charset=utf-8")],
        page::JS,
    )
        .into_response()
}

/// What the page sends to recompute.
#[derive(Debug, serde::Deserialize)]
pub struct ComputeRequest {
    pub text: String,
    #[serde(default)]
    pub times: Option<Times>,
}

#[derive(Debug, serde::Deserialize)]
pub struct EditRequest {
    pub text: String,
    #[serde(default)]
    pub times: Option<Times>,
    pub edits: Vec<form::Edit>,
}

#[derive(Debug, serde::Deserialize)]
pub struct ApplyRequest {
    pub text: String,
    #[serde(default)]
    pub times: Option<Times>,
    /// `tune`, `design` or `fit`.
    pub kind: String,
}

/// The page's answer: the text (changed by an edit or an applied suggestion), the form read
/// off it, the sheets, and what an applied suggestion changed.
#[derive(Debug, serde::Serialize)]
pub struct Reply {
    pub text: String,
    /// None when the text is not TOML (the page keeps its form).
    pub form_html: Option<String>,
    pub computed: Computed,
    pub changed: Option<String>,
    /// Time the server spent, ms.
    pub server_ms: f64,
}

/// The whole answer for a text, on this thread (the server calls it on a worker; the
/// benchmark calls it directly).
pub fn reply(name: &str, text: String, times: Option<&Times>) -> Reply {
    let start = Instant::now();
    let computed = compute::compute(name, &text, times);
    finish(text, computed, None, start)
}

fn finish(text: String, computed: Computed, changed: Option<String>, start: Instant) -> Reply {
    let form_html = form::read(&text)
        .ok()
        .map(|f| page::form(&f, computed.error.as_ref()));
    Reply {
        text,
        form_html,
        computed,
        changed,
        server_ms: start.elapsed().as_secs_f64() * 1e3,
    }
}

/// An edit applied to a text, then the answer for the new text.
pub fn reply_to_edit(name: &str, req: EditRequest) -> Reply {
    let start = Instant::now();
    match form::apply(&req.text, &req.edits) {
        Ok(text) => {
            let computed = compute::compute(name, &text, req.times.as_ref());
            finish(text, computed, None, start)
        }
        Err(e) => refused_edit(req.text, Located::plain(e.message, Some(e.path)), start),
    }
}

fn refused_edit(text: String, error: Located, start: Instant) -> Reply {
    finish(
        text,
        Computed {
            error: Some(error),
            panes: Vec::new(),
            suggestions: Vec::new(),
            flagged: false,
        },
        None,
        start,
    )
}

/// A sheet's suggestion applied: the server computes it from the text as the CLI would (the
/// page never sends the TOML to apply), merges it, and says what changed.
pub fn reply_to_apply(name: &str, req: ApplyRequest) -> Reply {
    let start = Instant::now();
    let before = compute::compute(name, &req.text, req.times.as_ref());
    let Some(s) = before.suggestions.iter().find(|s| s.kind == req.kind) else {
        let why = format!(
            "there is no '{}' suggestion to apply for this spec (the sheet makes none now)",
            req.kind
        );
        return refused_edit(req.text, Located::plain(why, None), start);
    };
    match form::apply_fragment(&req.text, &s.toml, compute::replaced_whole(&req.kind)) {
        Ok(text) => {
            let changed = page::changed(&req.text, &text);
            let computed = compute::compute(name, &text, req.times.as_ref());
            finish(text, computed, Some(changed), start)
        }
        Err(e) => refused_edit(req.text, Located::plain(e.message, None), start),
    }
}

/// Run a computation on a worker thread: at most one per core at once, within the limit.
async fn on_worker<T: Send + 'static>(
    app: &App,
    work: impl FnOnce() -> T + Send + 'static,
) -> Result<T, Response> {
    let permit = app
        .workers
        .clone()
        .acquire_owned()
        .await
        .map_err(|_| refuse(StatusCode::SERVICE_UNAVAILABLE, "the server is stopping"))?;
    let task = tokio::task::spawn_blocking(move || {
        let out = work();
        drop(permit);
        out
    });
    match tokio::time::timeout(COMPUTE_LIMIT, task).await {
        Ok(Ok(v)) => Ok(v),
        Ok(Err(_)) => Err(refuse(
            StatusCode::INTERNAL_SERVER_ERROR,
            "the computation failed; this is a clockprep bug, please report it with the spec",
        )),
        Err(_) => Err(refuse(
            StatusCode::SERVICE_UNAVAILABLE,
            &format!(
                "the computation took longer than {} s; make the spec smaller (fewer distinct runs or stocks)",
                COMPUTE_LIMIT.as_secs()
            ),
        )),
    }
}

fn json_reply(r: Result<Reply, Response>) -> Response {
    match r {
        Ok(r) => Json(r).into_response(),
        Err(e) => e,
    }
}

async fn api_compute(State(app): State<Arc<App>>, Json(req): Json<ComputeRequest>) -> Response {
    let name = app.name.clone();
    json_reply(on_worker(&app, move || reply(&name, req.text, req.times.as_ref())).await)
}

async fn api_edit(State(app): State<Arc<App>>, Json(req): Json<EditRequest>) -> Response {
    let name = app.name.clone();
    json_reply(on_worker(&app, move || reply_to_edit(&name, req)).await)
}

async fn api_apply(State(app): State<Arc<App>>, Json(req): Json<ApplyRequest>) -> Response {
    let name = app.name.clone();
    json_reply(on_worker(&app, move || reply_to_apply(&name, req)).await)
}

#[derive(Debug, serde::Deserialize)]
struct SaveRequest {
    text: String,
}

async fn api_save(
    State(app): State<Arc<App>>,
    headers: HeaderMap,
    Json(req): Json<SaveRequest>,
) -> Response {
    let token = headers
        .get("x-clockprep-token")
        .and_then(|t| t.to_str().ok())
        .unwrap_or("");
    if !guard::same_token(token, &app.token) {
        return refuse(
            StatusCode::FORBIDDEN,
            "Save needs the token of the page this server served; reload the page",
        );
    }
    let Some(file) = &app.file else {
        return Json(save::Saved {
            saved: false,
            message: "this server was started without a spec file, so there is nothing to save to; the spec is downloaded instead".into(),
            download: true,
        })
        .into_response();
    };
    let saved = match file.lock() {
        Ok(mut f) => f.save(&req.text),
        Err(_) => save::Saved {
            saved: false,
            message: "an earlier save failed midway; restart the server".into(),
            download: true,
        },
    };
    Json(saved).into_response()
}
