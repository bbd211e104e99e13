//! Printing HTML to PDF with headless Chromium, when it is installed (Debian package
//! `chromium`). The HTML is written to a fresh temporary folder with its own browser profile;
//! both are removed afterwards.

use crate::error::{Error, Result};
use std::path::{Path, PathBuf};
use std::process::Command;

/// Names tried on PATH, after the CLOCKPREP_CHROMIUM environment variable.
const NAMES: [&str; 4] = [
    "chromium",
    "chromium-browser",
    "google-chrome",
    "google-chrome-stable",
];

/// The browser to print with, if one is installed.
pub fn find_browser() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("CLOCKPREP_CHROMIUM") {
        let p = PathBuf::from(p);
        return p.is_file().then_some(p);
    }
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .flat_map(|dir| NAMES.iter().map(move |n| dir.join(n)))
        .find(|p| p.is_file())
}

/// Flags for a headless run on a machine without a display, sandbox or network: the sandbox
/// cannot start as root, and background networking only times out.
pub const HEADLESS: [&str; 7] = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
];

/// A folder under the system temp dir, removed when dropped.
struct TempDir(PathBuf);

impl TempDir {
    fn new() -> std::io::Result<TempDir> {
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_nanos());
        let dir =
            std::env::temp_dir().join(format!("clockprep-print-{}-{nanos}", std::process::id()));
        std::fs::create_dir_all(&dir)?;
        Ok(TempDir(dir))
    }
}

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Print `html` to PDF bytes with the browser at `browser`.
pub fn html_to_pdf(html: &[u8], browser: &Path) -> Result<Vec<u8>> {
    let fail = |reason: String| Error::Print { reason };
    let dir = TempDir::new().map_err(|e| fail(format!("cannot make a temporary folder: {e}")))?;
    let page = dir.0.join("cards.html");
    let pdf = dir.0.join("cards.pdf");
    std::fs::write(&page, html)
        .map_err(|e| fail(format!("cannot write {}: {e}", page.display())))?;
    let out = Command::new(browser)
        .args(HEADLESS)
        .arg("--no-pdf-header-footer")
        .arg(format!(
            "--user-data-dir={}",
            dir.0.join("profile").display()
        ))
        .arg(format!("--print-to-pdf={}", pdf.display()))
        .arg(&page)
        .output()
        .map_err(|e| fail(format!("cannot run {}: {e}", browser.display())))?;
    match std::fs::read(&pdf) {
        Ok(bytes) if bytes.starts_with(b"%PDF") => Ok(bytes),
        _ => Err(fail(format!(
            "{} wrote no PDF ({}): {}",
            browser.display(),
            out.status,
            String::from_utf8_lossy(&out.stderr)
                .lines()
                .last()
                .unwrap_or("")
        ))),
    }
}
