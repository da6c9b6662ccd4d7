//! Writing files so that a failure never leaves half of one: every output of a run is written
//! to a temporary file beside its destination and renamed into place with the others at the
//! end; interrupted runs remove their temporary files (`cleanup`).

use crate::error::{Error, Result};
use crate::format::Rounding;
use polars::prelude::*;
use std::io::Write;
use std::path::Path;

/// The outputs of one run, each written to a temporary file beside its destination, then
/// renamed into place together by `commit` once every one of them is complete. Dropped before
/// `commit`, it leaves nothing behind (and an earlier output stays as it was).
#[derive(Default)]
pub struct Staging {
    files: Vec<(tempfile::NamedTempFile, std::path::PathBuf)>,
}

impl Staging {
    pub fn new() -> Staging {
        Staging::default()
    }

    /// Text to `path`.
    pub fn text(&mut self, path: &Path, text: &str) -> Result<()> {
        let mut temp = temp_beside(path)?;
        temp.write_all(text.as_bytes())
            .map_err(|e| Error::io(path.display(), "write the output", e))?;
        self.file(temp, path);
        Ok(())
    }

    /// The frame as csv to `path`, without holding the whole text in memory.
    pub fn csv(
        &mut self,
        path: &Path,
        frame: &dyn crate::csv_writer::CellTable,
        rounding: Rounding,
        guard: bool,
    ) -> Result<()> {
        let temp = temp_beside(path)?;
        let mut buffered = std::io::BufWriter::with_capacity(1 << 20, temp);
        crate::csv_writer::write_csv(frame, rounding, true, guard, &mut buffered)?;
        let temp = buffered
            .into_inner()
            .map_err(|e| Error::io(path.display(), "write the output", e.into_error()))?;
        self.file(temp, path);
        Ok(())
    }

    /// The frame as Parquet (typed columns, full precision) to `path`.
    pub fn parquet(&mut self, path: &Path, frame: &DataFrame) -> Result<()> {
        let temp = temp_beside(path)?;
        let mut frame = frame.clone();
        ParquetWriter::new(temp.as_file())
            .finish(&mut frame)
            .map_err(Error::engine("writing Parquet"))?;
        self.file(temp, path);
        Ok(())
    }

    /// A temporary file written elsewhere (the streaming csv), to be renamed to `path`.
    pub fn file(&mut self, temp: tempfile::NamedTempFile, path: &Path) {
        self.files.push((temp, path.to_path_buf()));
    }

    /// Renames every output into place, in the order staged; returns the paths written.
    pub fn commit(self) -> Result<Vec<std::path::PathBuf>> {
        let mut written = Vec::with_capacity(self.files.len());
        for (temp, path) in self.files {
            persist_atomically(temp, &path)?;
            written.push(path);
        }
        Ok(written)
    }
}

/// Writes `text` to `path` through a temporary file in the same folder and a rename, so a
/// failure never leaves a half-written file and an earlier output stays intact.
pub fn write_atomically(path: &Path, text: &str) -> Result<()> {
    let mut staging = Staging::new();
    staging.text(path, text)?;
    staging.commit().map(|_| ())
}

/// A temporary file in the folder of `path` (so the final rename stays on one file system).
pub fn temp_beside(path: &Path) -> Result<tempfile::NamedTempFile> {
    if path.is_dir() {
        return Err(Error::io(
            path.display(),
            "write the output",
            std::io::Error::other("this path is a folder; give a file name"),
        ));
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    crate::cleanup::create_registered(
        || tempfile::NamedTempFile::new_in(&dir),
        tempfile::NamedTempFile::path,
    )
    .map_err(|e| Error::io(dir.display(), "create a temporary file in", e))
}

/// Moves a finished temporary file (created in the target's folder) over `path`.
pub fn persist_atomically(temp: tempfile::NamedTempFile, path: &Path) -> Result<()> {
    // A temporary file is private (0600); the finished output gets the usual 0644, or the
    // permissions of the file it replaces.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(path)
            .map(|m| m.permissions().mode())
            .unwrap_or(0o644);
        let _ = temp
            .as_file()
            .set_permissions(std::fs::Permissions::from_mode(mode));
    }
    temp.as_file()
        .sync_all()
        .map_err(|e| Error::io(path.display(), "write the output", e))?;
    let temp_path = temp.path().to_path_buf();
    crate::cleanup::settle(&temp_path, || temp.persist(path)).map_err(|e| {
        Error::io(
            path.display(),
            "move the finished output into place",
            e.error,
        )
    })?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn atomic_write_replaces_and_refuses_folders() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("out.csv");
        write_atomically(&path, "a\n").unwrap();
        write_atomically(&path, "b\n").unwrap();
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "b\n");
        assert!(write_atomically(dir.path(), "x").is_err());
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            1,
            "no temporary file left behind"
        );
    }
}
