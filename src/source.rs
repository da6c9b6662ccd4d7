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

/// Files of at least this many bytes ask for large pages instead (see [`fit_pages_to_input`]).
const LARGE_PAGES_FROM: u64 = 128 << 20;

/// What the binary does when a file of [`LARGE_PAGES_FROM`] bytes or more is read: its
/// allocator's way of asking the system for large pages (the library has no allocator of its own).
static LARGE_INPUT_HOOK: std::sync::OnceLock<fn()> = std::sync::OnceLock::new();

/// Whether large pages were asked for: small pages are then never forced for the process.
static LARGE_PAGES: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Sets what is done, once, when a file of [`LARGE_PAGES_FROM`] bytes or more is read (the
/// binary asks its allocator for large pages). A second call is ignored.
pub fn on_large_input(hook: fn()) {
    let _ = LARGE_INPUT_HOOK.set(hook);
}

/// Fits the process's memory pages to the size of the file it is about to read, measured in
/// paired runs on one machine (README, performance):
/// - under [`SMALL_PAGES_FROM`] (8 MiB), nothing changes: a 200-row table took 1.15x the time
///   with huge pages off (its fixed costs touch a few large buffers once);
/// - from 8 MiB, transparent huge pages are turned off for the rest of the process: where the
///   system grants them to every mapping, each first touch zeroes 2 MiB whether it is used or
///   not (1M rows, 26 MB: 0.86x the wall time without them);
/// - from [`LARGE_PAGES_FROM`] (128 MiB), the hook set by [`on_large_input`] asks for large
///   pages instead, and they stay allowed: a table of that size faults in gigabytes, and at 4 KiB
///   a page the kernel's page faults were half of a 10M-row run (260 MB: 0.79x the wall time
///   with large pages, paired; 5M rows, 130 MB: 0.95x; 1M rows: 1.09x, so not below).
///
/// The thresholds between the measured sizes are a choice. Best effort: an error is ignored.
fn fit_pages_to_input(len: u64) {
    use std::sync::atomic::Ordering;
    if len >= LARGE_PAGES_FROM {
        if !LARGE_PAGES.swap(true, Ordering::Relaxed) {
            if let Some(hook) = LARGE_INPUT_HOOK.get() {
                hook();
            }
        }
        return;
    }
    if len < SMALL_PAGES_FROM || LARGE_PAGES.load(Ordering::Relaxed) {
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

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};

    static LARGE_PAGE_REQUESTS: AtomicUsize = AtomicUsize::new(0);

    fn count_request() {
        LARGE_PAGE_REQUESTS.fetch_add(1, Ordering::Relaxed);
    }

    #[test]
    fn a_large_file_asks_for_large_pages_once_and_small_pages_are_not_forced_after_it() {
        on_large_input(count_request);
        fit_pages_to_input(SMALL_PAGES_FROM - 1);
        fit_pages_to_input(LARGE_PAGES_FROM - 1);
        assert_eq!(LARGE_PAGE_REQUESTS.load(Ordering::Relaxed), 0);
        fit_pages_to_input(LARGE_PAGES_FROM);
        fit_pages_to_input(4 * LARGE_PAGES_FROM);
        assert_eq!(LARGE_PAGE_REQUESTS.load(Ordering::Relaxed), 1);
        // The 8 MiB file read before the large one turned huge pages off; one read after it
        // must not (the large file's pages are asked for as large ones).
        #[cfg(target_os = "linux")]
        {
            // SAFETY: PR_SET/GET_THP_DISABLE take plain integers.
            unsafe { libc::prctl(libc::PR_SET_THP_DISABLE, 0, 0, 0, 0) };
            fit_pages_to_input(SMALL_PAGES_FROM);
            let disabled = unsafe { libc::prctl(libc::PR_GET_THP_DISABLE, 0, 0, 0, 0) };
            assert_eq!(disabled, 0, "huge pages were turned off after a large file");
        }
    }
}
