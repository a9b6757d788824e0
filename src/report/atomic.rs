//! The one place output bytes reach the disk.
//!
//! Every file is first written in full to a hidden temporary sibling in the same directory
//! (same file system, so the rename is atomic) and renamed into place only once all files of the
//! batch are staged. A failure at any point removes what was staged, so a reader never sees a
//! half-written or mismatched set of outputs.

use super::ReportError;
use std::fs::{self, File};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Writes one file atomically into `dir` (created if missing) and returns its path.
pub fn write_atomic(dir: &Path, name: &str, bytes: &[u8]) -> Result<PathBuf, ReportError> {
    let mut paths = write_all_atomic(dir, &[(name, bytes)])?;
    Ok(paths.remove(0))
}

/// Writes several files into `dir` (created if missing): all are staged before any is renamed
/// into place. Returns the final paths in the order given.
pub fn write_all_atomic(dir: &Path, files: &[(&str, &[u8])]) -> Result<Vec<PathBuf>, ReportError> {
    fs::create_dir_all(dir).map_err(|source| ReportError::Io { path: dir.to_path_buf(), source })?;
    let mut staged: Vec<(PathBuf, PathBuf)> = Vec::with_capacity(files.len());
    for (name, bytes) in files {
        let final_path = dir.join(name);
        // The process id keeps two concurrent runs writing into one directory apart.
        let temp_path = dir.join(format!(".{name}.{}.tmp", std::process::id()));
        if let Err(source) = write_synced(&temp_path, bytes) {
            let _ = fs::remove_file(&temp_path);
            discard(&staged);
            return Err(ReportError::Io { path: final_path, source });
        }
        staged.push((temp_path, final_path));
    }
    for (done, (temp_path, final_path)) in staged.iter().enumerate() {
        if let Err(source) = fs::rename(temp_path, final_path) {
            discard(&staged[done..]);
            return Err(ReportError::Io { path: final_path.clone(), source });
        }
    }
    Ok(staged.into_iter().map(|(_, final_path)| final_path).collect())
}

/// Writes one file atomically by streaming it through `fill` (for outputs too large to hold
/// twice in memory); the file appears under its name only once `fill` has succeeded.
pub fn write_atomic_streamed(
    dir: &Path,
    name: &str,
    fill: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
) -> Result<PathBuf, ReportError> {
    fs::create_dir_all(dir).map_err(|source| ReportError::Io { path: dir.to_path_buf(), source })?;
    let final_path = dir.join(name);
    let temp_path = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut writer = std::io::BufWriter::new(File::create(&temp_path)?);
        fill(&mut writer)?;
        let file = writer.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        fs::rename(&temp_path, &final_path)
    })();
    result.map_err(|source| {
        let _ = fs::remove_file(&temp_path);
        ReportError::Io { path: final_path.clone(), source }
    })?;
    Ok(final_path)
}

fn write_synced(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut file = File::create(path)?;
    file.write_all(bytes)?;
    // Flush to disk before the rename, or a crash could leave a complete name over empty data.
    file.sync_all()
}

fn discard(staged: &[(PathBuf, PathBuf)]) {
    for (temp_path, _) in staged {
        let _ = fs::remove_file(temp_path);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn writes_all_files_and_leaves_no_temporaries() {
        let dir = std::env::temp_dir().join(format!("fadecast-atomic-{}", std::process::id()));
        let nested = dir.join("new").join("out");
        let paths = write_all_atomic(&nested, &[("a.csv", b"x,y\n"), ("b.svg", b"<svg/>")]).unwrap();
        assert_eq!(fs::read(&paths[0]).unwrap(), b"x,y\n");
        assert_eq!(fs::read(&paths[1]).unwrap(), b"<svg/>");
        let names: Vec<_> =
            fs::read_dir(&nested).unwrap().map(|entry| entry.unwrap().file_name().into_string().unwrap()).collect();
        assert_eq!(names.len(), 2, "only the two outputs remain: {names:?}");
        fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn failed_batch_leaves_nothing_behind() {
        let dir = std::env::temp_dir().join(format!("fadecast-atomic-fail-{}", std::process::id()));
        fs::create_dir_all(&dir).unwrap();
        // A name with a missing parent directory cannot be staged, after "a.csv" already was.
        let result = write_all_atomic(&dir, &[("a.csv", b"1"), ("missing/b.svg", b"2")]);
        assert!(result.is_err());
        assert_eq!(fs::read_dir(&dir).unwrap().count(), 0);
        fs::remove_dir_all(&dir).unwrap();
    }
}
