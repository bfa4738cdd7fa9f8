//! Writing files: every output is checked before any work, and written whole or not at all (to
//! a temporary file beside it, then renamed into place), so a failure, a full disk or Ctrl-C
//! never leaves a partial file or truncates yesterday's report.

use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::sync::Mutex;

use crate::error::{Error, Result};

/// The path that means standard input or output.
pub const STANDARD: &str = "-";

/// Whether `path` is `-`, standard input or output.
pub fn is_standard(path: &Path) -> bool {
    path == Path::new(STANDARD)
}

/// Temporary files being written now, removed if the run is interrupted.
static IN_PROGRESS: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// The folder a file goes into ("." for a bare file name).
fn folder_of(path: &Path) -> &Path {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

/// Checks, before any work, that `path` can be written: it is not a folder, its folder exists
/// and takes a new file (tried with a file that is removed at once). `flag` names the flag in
/// the error, a usage error (exit 2). Standard output always can.
pub fn check_writable(path: &Path, flag: &str) -> Result<()> {
    if is_standard(path) {
        return Ok(());
    }
    let folder = folder_of(path);
    let problem = if path.is_dir() {
        Some("it is a folder; name a file".to_string())
    } else if !folder.exists() {
        Some(format!("the folder {} does not exist", folder.display()))
    } else {
        folder_problem(folder)
    };
    match problem {
        Some(p) => Err(Error::setting(
            flag,
            format!("cannot write {}: {p}", path.display()),
        )),
        None => Ok(()),
    }
}

/// Checks that files can be made in `folder`, or that it can be made where it is missing (its
/// nearest existing parent takes new entries).
pub fn check_folder(folder: &Path, flag: &str) -> Result<()> {
    match folder_problem(folder) {
        Some(p) => Err(Error::setting(
            flag,
            format!("cannot write in {}: {p}", folder.display()),
        )),
        None => Ok(()),
    }
}

/// Why no file can be made in `folder` (or in its nearest existing parent), if so.
fn folder_problem(folder: &Path) -> Option<String> {
    let mut existing = folder;
    while !existing.exists() {
        existing = match existing.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
    }
    if !existing.is_dir() {
        return Some(format!("{} is not a folder", existing.display()));
    }
    let probe = existing.join(format!(".acquest-check-{}", std::process::id()));
    match std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&probe)
    {
        Ok(_) => {
            let _ = std::fs::remove_file(&probe);
            None
        }
        Err(e) => Some(format!("{} takes no new file ({e})", existing.display())),
    }
}

/// Writes a file whole or not at all: `fill` writes into a temporary file in the same folder,
/// which is flushed to disk and renamed over `path`; on any failure the temporary file is
/// removed and `path` is left as it was.
pub fn write_whole(
    path: &Path,
    fill: impl FnOnce(&mut std::io::BufWriter<std::fs::File>) -> std::io::Result<()>,
) -> std::io::Result<()> {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let temporary = folder_of(path).join(format!(".{name}.{}.partial", std::process::id()));
    lock().push(temporary.clone());
    let written = (|| {
        let file = std::fs::File::create(&temporary)?;
        let mut writer = std::io::BufWriter::new(file);
        fill(&mut writer)?;
        let file = writer.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        std::fs::rename(&temporary, path)
    })();
    if written.is_err() {
        let _ = std::fs::remove_file(&temporary);
    }
    lock().retain(|p| p != &temporary);
    written
}

/// Writes `contents` to `path` whole or not at all (see [`write_whole`]).
pub fn write_text(path: &Path, contents: &str) -> std::io::Result<()> {
    write_whole(path, |w| w.write_all(contents.as_bytes()))
}

fn lock() -> std::sync::MutexGuard<'static, Vec<PathBuf>> {
    IN_PROGRESS.lock().unwrap_or_else(|e| e.into_inner())
}

/// Standard input, copied whole into a temporary file in the working folder, so that it can be
/// read as any data file; [`release`] removes it (as does Ctrl-C).
pub fn hold_standard_input() -> std::io::Result<PathBuf> {
    let path = PathBuf::from(format!(".acquest-standard-input-{}", std::process::id()));
    lock().push(path.clone());
    let copied = std::fs::File::create(&path).and_then(|mut file| {
        std::io::copy(&mut std::io::stdin().lock(), &mut file)?;
        file.flush()
    });
    if let Err(e) = copied {
        release(&path);
        return Err(e);
    }
    Ok(path)
}

/// A text file read whole; `-` reads standard input.
pub fn read_text(path: &Path) -> std::io::Result<String> {
    if is_standard(path) {
        let mut text = String::new();
        std::io::Read::read_to_string(&mut std::io::stdin().lock(), &mut text)?;
        Ok(text)
    } else {
        std::fs::read_to_string(path)
    }
}

/// Removes a file held by [`hold_standard_input`].
pub fn release(path: &Path) {
    let _ = std::fs::remove_file(path);
    lock().retain(|p| p != path);
}

/// Removes the temporary files being written now: called when the run is interrupted, so that
/// Ctrl-C leaves no partial file behind.
pub fn remove_partial_files() {
    for path in lock().drain(..) {
        let _ = std::fs::remove_file(path);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_failed_write_leaves_the_old_file_and_no_partial_one() {
        let dir = std::env::temp_dir().join(format!("acquest-files-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("report.json");
        write_text(&path, "yesterday").unwrap();
        let failed = write_whole(&path, |w| {
            w.write_all(b"half of tod")?;
            Err(std::io::Error::other("disk full"))
        });
        assert!(failed.is_err());
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "yesterday");
        let left: Vec<_> = std::fs::read_dir(&dir).unwrap().collect();
        assert_eq!(left.len(), 1, "only the report itself");
        write_text(&path, "today").unwrap();
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "today");
        assert!(check_writable(&path, "--json").is_ok());
        assert!(check_writable(&dir, "--json").is_err(), "a folder");
        assert!(check_writable(&dir.join("no/such/x.json"), "--json").is_err());
        assert!(
            check_folder(&dir.join("no/such"), "--out").is_ok(),
            "can be made"
        );
        assert!(
            check_writable(&path.join("x.json"), "--json").is_err(),
            "under a file"
        );
        assert_eq!(
            std::fs::read_dir(&dir).unwrap().count(),
            1,
            "probes removed"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
