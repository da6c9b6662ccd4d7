//! Where files come from: a folder on disk, or files embedded in the binary (the demo).
//! Reference catalogs and the demo read through `FileSource`, so the same loading and
//! validation code serves both, and error messages name the file the user can open.

use crate::error::{Error, Result};
use std::path::{Path, PathBuf};

pub trait FileSource {
    /// The bytes of a file named relative to this source.
    fn read(&self, relative: &str) -> Result<Vec<u8>>;
    /// How to name the file in messages.
    fn label(&self, relative: &str) -> String;
}

/// A folder on disk.
pub struct DiskDir {
    pub root: PathBuf,
}

impl DiskDir {
    pub fn new(root: impl Into<PathBuf>) -> Self {
        DiskDir { root: root.into() }
    }
}

impl FileSource for DiskDir {
    fn read(&self, relative: &str) -> Result<Vec<u8>> {
        let path = self.root.join(relative);
        read_file(&path)
    }

    fn label(&self, relative: &str) -> String {
        self.root.join(relative).display().to_string()
    }
}

/// Files compiled into the binary, named as they are in the repository.
pub struct Embedded {
    pub prefix: &'static str,
    pub files: &'static [(&'static str, &'static str)],
}

impl FileSource for Embedded {
    fn read(&self, relative: &str) -> Result<Vec<u8>> {
        self.files
            .iter()
            .find(|(name, _)| *name == relative)
            .map(|(_, text)| text.as_bytes().to_vec())
            .ok_or_else(|| {
                Error::io(
                    self.label(relative),
                    "read the embedded file",
                    std::io::Error::new(std::io::ErrorKind::NotFound, "not embedded in this build"),
                )
            })
    }

    fn label(&self, relative: &str) -> String {
        format!("{}/{relative}", self.prefix)
    }
}

/// Reads a file, refusing directories with a message that says so.
pub fn read_file(path: &Path) -> Result<Vec<u8>> {
    if path.is_dir() {
        return Err(Error::io(
            path.display(),
            "read a folder as a table",
            std::io::Error::other("this path is a folder; give the path of a file inside it"),
        ));
    }
    std::fs::read(path).map_err(|e| Error::io(path.display(), "read the file", e))
}

/// The sha256 of a file read in blocks (for inputs too large to hold), as lowercase hex.
pub fn sha256_of_file(path: &Path) -> Result<String> {
    use sha2::{Digest, Sha256};
    use std::io::Read;
    let label = path.display().to_string();
    let mut file = std::fs::File::open(path).map_err(|e| Error::io(&label, "open", e))?;
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 20];
    loop {
        let n = file
            .read(&mut buffer)
            .map_err(|e| Error::io(&label, "read", e))?;
        if n == 0 {
            break;
        }
        hasher.update(&buffer[..n]);
    }
    Ok(hasher
        .finalize()
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect())
}
