//! Where the bytes go: stdout, or a file written atomically (temp file + rename) that never
//! replaces the spec and keeps an existing file unless forced.

use crate::error::{Error, Result};
use std::io::Write;
use std::path::Path;

/// Write `bytes` to `path` atomically. `spec` is the input, which is never overwritten.
pub fn write_file(path: &Path, bytes: &[u8], force: bool, spec: &Path) -> Result<()> {
    let same = |a: &Path, b: &Path| match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    };
    if same(path, spec) {
        return Err(Error::OutputIsSpec {
            path: path.to_path_buf(),
        });
    }
    if path.exists() && !force {
        return Err(Error::OutputExists {
            path: path.to_path_buf(),
        });
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let io = |source| Error::WriteOutput {
        path: path.to_path_buf(),
        source,
    };
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(io(e));
    }
    Ok(())
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
        write_file(&out, b"one", false, &spec).unwrap();
        assert!(matches!(
            write_file(&out, b"two", false, &spec),
            Err(Error::OutputExists { .. })
        ));
        assert_eq!(std::fs::read(&out).unwrap(), b"one");
        write_file(&out, b"two", true, &spec).unwrap();
        assert_eq!(std::fs::read(&out).unwrap(), b"two");
        assert!(matches!(
            write_file(&spec, b"x", true, &spec),
            Err(Error::OutputIsSpec { .. })
        ));
        assert_eq!(
            std::fs::read_dir(&dir).unwrap().count(),
            2,
            "no temp file left behind"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
