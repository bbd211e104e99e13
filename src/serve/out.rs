//! Print-ready pages and downloads: the page posts its spec, the server answers with the bytes
//! the CLI would write (the same exporters), named after the spec.

use super::compute::Located;
use super::App;
use crate::error::{Error, SpecSource};
use crate::export::cards::{self, Paper, Per};
use crate::export::{self, Format, SummaryFormat};
use axum::extract::{Path, State};
use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use axum::Form;
use std::sync::Arc;

#[derive(Debug, serde::Deserialize)]
pub struct OutRequest {
    spec: String,
    #[serde(default)]
    times_name: String,
    #[serde(default)]
    times_csv: String,
    #[serde(default)]
    paper: Option<String>,
    #[serde(default)]
    per: Option<String>,
}

/// A finished output: its bytes, type, and whether it opens in the browser or downloads.
struct Bytes {
    body: Vec<u8>,
    mime: &'static str,
    inline: bool,
}

fn format_of(ext: &str) -> Option<Format> {
    Some(match ext {
        "txt" => Format::Text,
        "csv" => Format::Csv,
        "json" => Format::Json,
        "md" => Format::Markdown,
        "html" | "pdf" => Format::Html,
        _ => return None,
    })
}

fn summary_of(ext: &str) -> Option<SummaryFormat> {
    Some(match ext {
        "txt" => SummaryFormat::Text,
        "json" => SummaryFormat::Json,
        "md" => SummaryFormat::Markdown,
        "html" | "pdf" => SummaryFormat::Html,
        "toml" => SummaryFormat::Toml,
        _ => return None,
    })
}

fn mime(ext: &str) -> &'static str {
    match ext {
        "csv" => "text/csv; charset=utf-8",
        "json" => "application/json",
        "md" | "txt" | "toml" => "text/plain; charset=utf-8",
        "html" => "text/html; charset=utf-8",
        "pdf" => "application/pdf",
        "xlsx" => "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        _ => "application/octet-stream",
    }
}

/// The bytes of one output, by the CLI's own functions; None for a name not offered.
fn build(name: &str, source: SpecSource, req: &OutRequest) -> Option<Result<Vec<u8>, Error>> {
    let (stem, ext) = name.rsplit_once('.')?;
    let paper = match req.paper.as_deref() {
        Some("letter") => Paper::Letter,
        _ => Paper::A4,
    };
    let times = || SpecSource::new(req.times_name.clone(), req.times_csv.clone());
    Some(match (stem, ext) {
        ("spec", "toml") => Ok(source.text.as_bytes().to_vec()),
        ("mixing", e) => {
            let f = format_of(e)?;
            crate::plan(source).map(|r| export::export(&r, f))
        }
        ("stocks", e) => {
            let f = format_of(e)?;
            crate::stocks(source).map(|s| export::export_stocks(&s, f))
        }
        ("forecast", e) => {
            let f = format_of(e)?;
            crate::forecast_only(source).map(|s| export::export_forecast(&s, f))
        }
        ("design", e) => {
            let f = summary_of(e)?;
            crate::design(source).map(|s| export::export_design(&s, f))
        }
        ("tune", e) => {
            let f = summary_of(e)?;
            crate::tune(source).map(|s| export::export_tune(&s, f))
        }
        ("fit", e) => {
            let f = summary_of(e)?;
            if req.times_csv.is_empty() {
                return Some(Err(Error::Serve {
                    reason: "upload the pilot times on the Pilot fit tab first".into(),
                }));
            }
            crate::fit(source, times(), None).map(|s| export::export_fit(&s, f))
        }
        ("cards", "html" | "pdf") => {
            let per = match req.per.as_deref() {
                Some("run") => Per::Run,
                _ => Per::Station,
            };
            crate::plan(source).map(|r| cards::cards(&r, per, paper))
        }
        ("labels", "html" | "pdf") => {
            crate::stocks(source).map(|s| export::labels::labels(&s, paper))
        }
        ("workbook", "xlsx") => workbook(source, req),
        _ => return None,
    })
}

/// Every sheet of the spec as one workbook: mixing, stocks and forecast, and the design and
/// tune sheets where the spec has them.
fn workbook(source: SpecSource, req: &OutRequest) -> Result<Vec<u8>, Error> {
    let (plan, stocks) = crate::plan_with_stocks(source.clone())?;
    let mut pages = vec![("Mixing", plan.page()), ("Stocks", stocks.page())];
    let light = crate::spec::load_for(source.clone(), crate::spec::Purpose::Forecast)?;
    if light.prior.is_some() {
        pages.push(("Forecast", crate::forecast_only(source.clone())?.page()));
        if let Ok(t) = crate::tune(source.clone()) {
            pages.push(("Tune", t.page()));
        }
        if !req.times_csv.is_empty() {
            let times = SpecSource::new(req.times_name.clone(), req.times_csv.clone());
            if let Ok(f) = crate::fit(source.clone(), times, None) {
                pages.push(("Fit", f.page()));
            }
        }
    }
    if light.design.is_some() {
        if let Ok(d) = crate::design(source) {
            pages.push(("Design", d.page()));
        }
    }
    let named: Vec<(&str, &crate::report::page::Page)> =
        pages.iter().map(|(n, p)| (*n, p)).collect();
    Ok(export::xlsx::workbook(&named))
}

fn print_pdf(html: &[u8]) -> Result<Vec<u8>, Error> {
    let browser = crate::export::pdf::find_browser().ok_or(Error::NoBrowser)?;
    crate::export::pdf::html_to_pdf(html, &browser)
}

fn file_stem(spec_name: &str) -> String {
    let base = spec_name.rsplit('/').next().unwrap_or(spec_name);
    let stem = base.strip_suffix(".toml").unwrap_or(base);
    let clean: String = stem
        .chars()
        .filter(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
        .collect();
    if clean.is_empty() {
        "clockprep".into()
    } else {
        clean
    }
}

pub async fn out(
    State(app): State<Arc<App>>,
    Path(file): Path<String>,
    Form(req): Form<OutRequest>,
) -> Response {
    let name = app.name.clone();
    let ext = file.rsplit_once('.').map_or("", |(_, e)| e).to_string();
    let work = {
        let file = file.clone();
        let ext = ext.clone();
        move || -> Option<Result<Bytes, Error>> {
            let source = SpecSource::new(name, req.spec.clone());
            let bytes = build(&file, source, &req)?;
            Some(bytes.and_then(|b| {
                if ext == "pdf" {
                    print_pdf(&b).map(|body| Bytes {
                        body,
                        mime: mime("pdf"),
                        inline: false,
                    })
                } else {
                    Ok(Bytes {
                        body: b,
                        mime: mime(&ext),
                        inline: ext == "html",
                    })
                }
            }))
        }
    };
    let result = match super::on_worker(&app, work).await {
        Ok(r) => r,
        Err(e) => return e,
    };
    match result {
        None => super::refuse(
            StatusCode::NOT_FOUND,
            &format!("there is no output named '{file}'"),
        ),
        Some(Err(e)) => {
            let status = match e {
                Error::NoBrowser => StatusCode::SERVICE_UNAVAILABLE,
                _ => StatusCode::UNPROCESSABLE_ENTITY,
            };
            let text = Located::of(&e, None).report;
            (
                status,
                [(header::CONTENT_TYPE, "text/plain; charset=utf-8")],
                format!("clockprep: nothing was made.\n\n{text}"),
            )
                .into_response()
        }
        Some(Ok(b)) => {
            let disposition = format!(
                "{}; filename=\"{}-{}\"",
                if b.inline { "inline" } else { "attachment" },
                file_stem(&app.name),
                file
            );
            let mut res = (StatusCode::OK, b.body).into_response();
            let h = res.headers_mut();
            h.insert(header::CONTENT_TYPE, HeaderValue::from_static(b.mime));
            if let Ok(v) = HeaderValue::from_str(&disposition) {
                h.insert(header::CONTENT_DISPOSITION, v);
            }
            // A printed sheet runs no script and loads nothing.
            h.insert(
                header::CONTENT_SECURITY_POLICY,
                HeaderValue::from_static(
                    "default-src 'none'; style-src 'unsafe-inline'; img-src data:; frame-ancestors 'none'",
                ),
            );
            res
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn downloads_are_named_after_the_spec() {
        assert_eq!(
            file_stem("plans/maple-hollow-bromate.toml"),
            "maple-hollow-bromate"
        );
        assert_eq!(file_stem("\"; evil"), "evil");
        assert_eq!(file_stem(""), "clockprep");
    }
}
