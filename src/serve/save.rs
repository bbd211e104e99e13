//! Saving the page's spec back to the file the server was started with: only when the file on
//! disk is still what the server read (or last wrote), atomically (a temporary file in the same
//! folder, then a rename), keeping the previous version beside it as `SPEC~`.

use std::io::Write;
use std::path::{Path, PathBuf};

/// The file the server was started with and its bytes as last read or written.
#[derive(Debug)]
pub struct SpecFile {
    pub path: PathBuf,
    pub known: Vec<u8>,
}

/// What a save did.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Saved {
    pub saved: bool,
    pub message: String,
    /// The page should offer its text as a download instead.
    pub download: bool,
}

/// `SPEC~` beside `SPEC`.
pub fn backup_path(path: &Path) -> PathBuf {
    let mut name = path.file_name().unwrap_or_default().to_os_string();
    name.push("~");
    path.with_file_name(name)
}

fn atomic_write(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let mut tmp = tempfile::NamedTempFile::new_in(dir)?;
    tmp.write_all(bytes)?;
    tmp.as_file().sync_all()?;
    tmp.persist(path).map_err(|e| e.error)?;
    Ok(())
}

impl SpecFile {
    pub fn new(path: PathBuf, known: Vec<u8>) -> SpecFile {
        SpecFile { path, known }
    }

    /// Write `text` over the file, unless it changed on disk since it was read.
    pub fn save(&mut self, text: &str) -> Saved {
        let shown = self.path.display();
        let now = match std::fs::read(&self.path) {
            Ok(b) => b,
            Err(e) => {
                return Saved {
                    saved: false,
                    message: format!("cannot read {shown} to check it before saving ({e}); nothing was written. Download the spec instead."),
                    download: true,
                }
            }
        };
        if now != self.known {
            return Saved {
                saved: false,
                message: format!("{shown} was changed on disk since this page read it; nothing was written, so neither version is lost. Download the page's spec and compare the two."),
                download: true,
            };
        }
        if now == text.as_bytes() {
            return Saved {
                saved: true,
                message: format!("{shown} already holds this spec; nothing to write."),
                download: false,
            };
        }
        let backup = backup_path(&self.path);
        let written =
            atomic_write(&backup, &now).and_then(|()| atomic_write(&self.path, text.as_bytes()));
        match written {
            Ok(()) => {
                self.known = text.as_bytes().to_vec();
                Saved {
                    saved: true,
                    message: format!(
                        "saved to {shown}; the previous version is in {}",
                        backup.display()
                    ),
                    download: false,
                }
            }
            Err(e) => Saved {
                saved: false,
                message: format!(
                    "cannot write {shown} ({e}); the file is as it was. Download the spec instead."
                ),
                download: true,
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_save_keeps_the_previous_version_and_refuses_an_outside_edit() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("lab.toml");
        std::fs::write(&path, "a = 1\n").unwrap();
        let mut f = SpecFile::new(path.clone(), b"a = 1\n".to_vec());
        let s = f.save("a = 2\n");
        assert!(s.saved, "{}", s.message);
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "a = 2\n");
        assert_eq!(
            std::fs::read_to_string(backup_path(&path)).unwrap(),
            "a = 1\n"
        );
        // Someone edits the file in an editor meanwhile: the page's save is refused.
        std::fs::write(&path, "a = 3\n").unwrap();
        let s = f.save("a = 4\n");
        assert!(!s.saved && s.download, "{}", s.message);
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "a = 3\n");
    }
}
