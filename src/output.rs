//! Where the bytes go: stdout, or a file written atomically (a temporary file persisted
//! without clobbering) that never replaces an input and keeps an existing file unless forced.

use crate::error::{Error, Result};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Refuse an output that is one of the command's inputs (the spec, a times file), compared
/// by canonical path, so `./spec.toml`, `dir/../spec.toml` and a symlink to it all count.
pub fn check_not_input(path: &Path, inputs: &[&Path]) -> Result<()> {
    let Ok(out) = path.canonicalize() else {
        return Ok(()); // a path that does not exist yet is no input
    };
    for input in inputs {
        if input.canonicalize().is_ok_and(|i| i == out) {
            return Err(Error::OutputIsInput {
                path: path.to_path_buf(),
                input: input.to_path_buf(),
            });
        }
    }
    Ok(())
}

/// Where a command's bytes go: standard output, or a file that may replace an existing one
/// only when forced. Every command writes through [`Target::guard`] and [`Target::write`].
#[derive(Debug, Clone, Default)]
pub struct Target {
    pub path: Option<PathBuf>,
    pub force: bool,
}

impl Target {
    /// Refuse, before any work, an output that is an input or exists without `force`.
    pub fn guard(&self, inputs: &[&Path]) -> Result<()> {
        let Some(path) = &self.path else {
            return Ok(());
        };
        check_not_input(path, inputs)?;
        if path.exists() && !self.force {
            return Err(Error::OutputExists { path: path.clone() });
        }
        Ok(())
    }

    /// Write `bytes` where the target says, after the guard.
    pub fn write(&self, bytes: &[u8], inputs: &[&Path]) -> Result<()> {
        match &self.path {
            Some(path) => write_file(path, bytes, self.force, inputs),
            None => write_stdout(bytes),
        }
    }
}

/// Write `bytes` to `path` atomically: a temporary file in the same directory, synced, then
/// persisted over the path (replacing it only when `force`; without it the persist itself
/// refuses an existing file, so a file made meanwhile is never clobbered). `inputs` (the
/// spec, a times file) are never overwritten, whatever the flags.
pub fn write_file(path: &Path, bytes: &[u8], force: bool, inputs: &[&Path]) -> Result<()> {
    check_not_input(path, inputs)?;
    if path.exists() && !force {
        return Err(Error::OutputExists {
            path: path.to_path_buf(),
        });
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let io = |cause| Error::WriteOutput {
        path: path.to_path_buf(),
        cause,
    };
    let mut tmp = tempfile::NamedTempFile::new_in(dir).map_err(io)?;
    tmp.write_all(bytes).map_err(io)?;
    tmp.as_file().sync_all().map_err(io)?;
    let persisted = if force {
        tmp.persist(path)
    } else {
        tmp.persist_noclobber(path)
    };
    match persisted {
        Ok(_) => Ok(()),
        Err(e) if e.error.kind() == std::io::ErrorKind::AlreadyExists => Err(Error::OutputExists {
            path: path.to_path_buf(),
        }),
        Err(e) => Err(io(e.error)),
    }
}

/// Write `bytes` to standard output. A closed pipe (`| head`) is not an error; any other
/// failure (a full disk behind a redirect) is.
pub fn write_stdout(bytes: &[u8]) -> Result<()> {
    let mut out = std::io::stdout().lock();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(Error::WriteOutput {
            path: "standard output".into(),
            cause: e,
        }),
        _ => Ok(()),
    }
}

/// Read an input file (`what` names it in messages: "spec", "times file") as UTF-8 text.
pub fn read_input(path: &Path, what: &'static str) -> Result<String> {
    let read = if is_stdin(path) {
        let mut bytes = Vec::new();
        std::io::Read::read_to_end(&mut std::io::stdin(), &mut bytes).map(|_| bytes)
    } else {
        std::fs::read(path)
    };
    let bytes = read.map_err(|cause| Error::ReadInput {
        what,
        path: path.to_path_buf(),
        cause,
    })?;
    String::from_utf8(bytes).map_err(|e| {
        let good = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = good.iter().filter(|&&b| b == b'\n').count() + 1;
        let line_start = good.iter().rposition(|&b| b == b'\n').map_or(0, |p| p + 1);
        let column = String::from_utf8_lossy(&good[line_start..]).chars().count() + 1;
        Error::NotUtf8 {
            what,
            path: path.to_path_buf(),
            line,
            column,
        }
    })
}

/// `-` stands for standard input.
pub fn is_stdin(path: &Path) -> bool {
    path == Path::new("-")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_existing_and_spec() {
        let dir = std::env::temp_dir().join(format!("clockprep-out-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let spec = dir.join("spec.toml");
        std::fs::write(&spec, "x").unwrap();
        let out = dir.join("sheet.txt");
        write_file(&out, b"one", false, &[&spec]).unwrap();
        assert!(matches!(
            write_file(&out, b"two", false, &[&spec]),
            Err(Error::OutputExists { .. })
        ));
        assert_eq!(std::fs::read(&out).unwrap(), b"one");
        write_file(&out, b"two", true, &[&spec]).unwrap();
        assert_eq!(std::fs::read(&out).unwrap(), b"two");
        assert!(matches!(
            write_file(&spec, b"x", true, &[&spec]),
            Err(Error::OutputIsInput { .. })
        ));
        assert_eq!(
            std::fs::read_dir(&dir).unwrap().count(),
            2,
            "no temp file left behind"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
