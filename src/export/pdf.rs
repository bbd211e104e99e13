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
    let stderr_path = dir.0.join("browser-stderr.txt");
    let stderr_file = std::fs::File::create(&stderr_path)
        .map_err(|e| fail(format!("cannot write {}: {e}", stderr_path.display())))?;
    let mut child = Command::new(browser)
        .args(HEADLESS)
        .arg("--no-pdf-header-footer")
        .arg(format!(
            "--user-data-dir={}",
            dir.0.join("profile").display()
        ))
        .arg(format!("--print-to-pdf={}", pdf.display()))
        .arg(&page)
        .stdout(std::process::Stdio::null())
        .stderr(stderr_file)
        .spawn()
        .map_err(|e| fail(format!("cannot run {}: {e}", browser.display())))?;
    let timeout = print_timeout();
    let started = std::time::Instant::now();
    let status = loop {
        match child.try_wait() {
            Ok(Some(status)) => break status,
            Ok(None) if started.elapsed() >= timeout => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(fail(format!(
                    "{} did not finish printing within {} s and was stopped (set CLOCKPREP_PRINT_TIMEOUT to allow longer, in seconds)",
                    browser.display(),
                    timeout.as_secs()
                )));
            }
            Ok(None) => std::thread::sleep(std::time::Duration::from_millis(50)),
            Err(e) => return Err(fail(format!("cannot wait for {}: {e}", browser.display()))),
        }
    };
    match std::fs::read(&pdf) {
        Ok(bytes) if bytes.starts_with(b"%PDF") => Ok(bytes),
        _ => Err(fail(format!(
            "{} wrote no PDF ({status}): {}",
            browser.display(),
            std::fs::read_to_string(&stderr_path)
                .unwrap_or_default()
                .lines()
                .last()
                .unwrap_or("")
        ))),
    }
}

/// How long the browser may take to print: `CLOCKPREP_PRINT_TIMEOUT` seconds, default 60.
pub fn print_timeout() -> std::time::Duration {
    let secs = std::env::var("CLOCKPREP_PRINT_TIMEOUT")
        .ok()
        .and_then(|v| v.trim().parse::<u64>().ok())
        .filter(|&s| s > 0)
        .unwrap_or(DEFAULT_PRINT_TIMEOUT_S);
    std::time::Duration::from_secs(secs)
}

/// Default print timeout, s: a card set prints in a few seconds (common practice: a minute
/// leaves room for a cold start on a slow machine).
pub const DEFAULT_PRINT_TIMEOUT_S: u64 = 60;

#[cfg(test)]
mod tests {
    use super::*;

    #[cfg(unix)]
    #[test]
    fn a_browser_that_hangs_is_stopped_and_said_so() {
        // A stand-in "browser" that never prints: a shell script sleeping far past the limit.
        let dir = TempDir::new().unwrap();
        let fake = dir.0.join("hang.sh");
        std::fs::write(&fake, "#!/bin/sh\nsleep 30\n").unwrap();
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&fake, std::fs::Permissions::from_mode(0o755)).unwrap();
        std::env::set_var("CLOCKPREP_PRINT_TIMEOUT", "1");
        let started = std::time::Instant::now();
        let e = html_to_pdf(b"<html></html>", &fake).unwrap_err();
        std::env::remove_var("CLOCKPREP_PRINT_TIMEOUT");
        assert!(
            e.to_string().contains("did not finish printing within 1 s"),
            "{e}"
        );
        assert!(
            started.elapsed().as_secs() < 25,
            "the hung browser was not stopped"
        );
    }
}
