//! Where files come from: a folder on disk, or files embedded in the binary (the demo).
//! Reference catalogs and the demo read through `FileSource`, so the same loading and
//! validation code serves both, and error messages name the file the user can open.

use crate::error::{Error, Result};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

pub trait FileSource: Sync {
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
    /// Reads a file named by the catalog; it must lie inside the catalog's folder, so that a
    /// catalog from someone else cannot make levelfield read (and quote) files elsewhere.
    fn read(&self, relative: &str) -> Result<Vec<u8>> {
        if !stays_inside(&self.root, relative) {
            return Err(Error::bad_input(
                crate::error::Location::file(self.label(CATALOG_FILE)),
                format!("the catalog names \"{relative}\", which is outside the catalog's folder"),
                "paths relative to the folder of datapackage.json, inside it",
                "copy the file into the catalog's folder and name it there",
            ));
        }
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

/// The most bytes any one file may hold (`--max-input-mb`), for every file read: input, recipe,
/// manifest, catalog, reference table and alias file.
static READ_LIMIT: AtomicU64 = AtomicU64::new(DEFAULT_LIMIT_MB << 20);
pub const DEFAULT_LIMIT_MB: u64 = 4096;

/// Sets the limit of every later read, in megabytes.
pub fn set_read_limit_mb(mb: u64) {
    READ_LIMIT.store(mb.saturating_mul(1 << 20), Ordering::Relaxed);
}

pub fn read_limit() -> u64 {
    READ_LIMIT.load(Ordering::Relaxed)
}

/// Files of at least this many bytes turn transparent huge pages off (see [`fit_pages_to_input`]).
const SMALL_PAGES_FROM: u64 = 8 << 20;

/// Turns transparent huge pages off for the rest of the process once a file of `len` bytes, at
/// least [`SMALL_PAGES_FROM`], is read. Where the system grants huge pages on request the
/// allocator asks for them, and each first touch then zeroes 2 MiB whether it is used or not.
/// Measured in paired runs (README, performance): at 1M rows (26 MB) the run took 0.86x the
/// wall time without them and less memory; a 200-row table took 1.15x the time without them
/// (its fixed costs touch a few large buffers once). The threshold between the two measured
/// sizes is a choice. Best effort: an error is ignored.
fn fit_pages_to_input(len: u64) {
    if len < SMALL_PAGES_FROM {
        return;
    }
    #[cfg(target_os = "linux")]
    // SAFETY: PR_SET_THP_DISABLE takes plain integers and touches no memory of ours.
    unsafe {
        libc::prctl(libc::PR_SET_THP_DISABLE, 1, 0, 0, 0);
    }
}

/// Reads a file: the one reader of every file levelfield opens. Only a regular file is read
/// (a folder, a device such as /dev/zero, a pipe or a socket is refused before anything is
/// read), and never more than the read limit, even when the file grows while it is read.
pub fn read_file(path: &Path) -> Result<Vec<u8>> {
    let label = path.display().to_string();
    let metadata = std::fs::metadata(path).map_err(|e| Error::io(&label, "read the file", e))?;
    if metadata.is_dir() {
        return Err(Error::io(
            &label,
            "read a folder as a table",
            std::io::Error::other("this path is a folder; give the path of a file inside it"),
        ));
    }
    if !metadata.is_file() {
        return Err(Error::io(
            &label,
            "read the file",
            std::io::Error::other(
                "this is not a regular file (a device, a pipe or a socket, which could be read without end); save the table to a file, or pass - to read standard input",
            ),
        ));
    }
    let limit = read_limit();
    if metadata.len() > limit {
        return Err(too_large(&label, limit));
    }
    fit_pages_to_input(metadata.len());
    let file = std::fs::File::open(path).map_err(|e| Error::io(&label, "open", e))?;
    let mut bytes = Vec::with_capacity(metadata.len() as usize);
    file.take(limit + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| Error::io(&label, "read the file", e))?;
    if bytes.len() as u64 > limit {
        return Err(too_large(&label, limit));
    }
    Ok(bytes)
}

/// Standard input, within the read limit.
pub fn read_stdin() -> Result<Vec<u8>> {
    let limit = read_limit();
    let mut bytes = Vec::new();
    std::io::stdin()
        .take(limit + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| Error::io("standard input", "read", e))?;
    if bytes.len() as u64 > limit {
        return Err(too_large("standard input", limit));
    }
    Ok(bytes)
}

fn too_large(label: &str, limit: u64) -> Error {
    Error::usage(
        format!("{label} is larger than {} MB (--max-input-mb)", limit >> 20),
        "raise --max-input-mb if the machine has the memory, or split the table (--streaming reads large CSV files in pieces)",
    )
}

/// Whether `relative` (a path from a catalog or a recipe) stays inside `root`: relative, with no
/// `..` that climbs out, and, once links are followed, still under `root`.
pub fn stays_inside(root: &Path, relative: &str) -> bool {
    let path = Path::new(relative);
    if path.is_absolute() || path.has_root() {
        return false;
    }
    let mut depth: i64 = 0;
    for part in path.components() {
        match part {
            std::path::Component::ParentDir => depth -= 1,
            std::path::Component::Normal(_) => depth += 1,
            std::path::Component::CurDir => {}
            _ => return false,
        }
        if depth < 0 {
            return false;
        }
    }
    match (root.canonicalize(), root.join(path).canonicalize()) {
        (Ok(root), Ok(full)) => full.starts_with(root),
        // Not there (yet): the words of the path decided.
        _ => true,
    }
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

/// The sha256 of `bytes` in lowercase hex, as the methods note lists every file read.
pub fn sha256_hex(bytes: &[u8]) -> String {
    <sha2::Sha256 as sha2::Digest>::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

pub fn normalize(path: &std::path::Path) -> std::path::PathBuf {
    use std::path::Component;
    let mut out = std::path::PathBuf::new();
    for part in path.components() {
        match part {
            Component::CurDir => {}
            Component::ParentDir
                if matches!(out.components().next_back(), Some(Component::Normal(_))) =>
            {
                out.pop();
            }
            other => out.push(other.as_os_str()),
        }
    }
    if out.as_os_str().is_empty() {
        out.push(".");
    }
    out
}

/// The catalog file of a reference folder.
pub const CATALOG_FILE: &str = "datapackage.json";
