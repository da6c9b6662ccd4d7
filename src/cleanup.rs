//! Temporary files and folders of a run, removed if the run is interrupted. Every output is
//! written to a hidden temporary file beside its destination and renamed into place when
//! complete; streaming spills pieces to a temporary folder. Each is registered here while it
//! exists, and a handler for SIGINT and SIGTERM (Ctrl-C, `kill`) removes what is registered
//! before the process exits with code 130. SIGKILL cannot be caught: after `kill -9` a hidden
//! `.tmp` file may stay beside the destination (the destination itself is never partial).

use std::path::{Path, PathBuf};
use std::sync::{Mutex, Once};

static REGISTERED: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static HANDLER: Once = Once::new();

/// Registers a temporary file or folder; installs the signal handler on first use.
pub fn register(path: &Path) {
    HANDLER.call_once(|| {
        // If a handler cannot be installed (another library took the signal), runs still work;
        // only the clean-up on interruption is lost.
        let _ = ctrlc::set_handler(|| {
            remove_registered();
            std::process::exit(130);
        });
    });
    if let Ok(mut paths) = REGISTERED.lock() {
        paths.push(path.to_path_buf());
    }
}

/// Forgets a path that was renamed into place or removed.
pub fn forget(path: &Path) {
    if let Ok(mut paths) = REGISTERED.lock() {
        paths.retain(|p| p != path);
    }
}

/// Removes every registered path (files and folders).
pub fn remove_registered() {
    if let Ok(paths) = REGISTERED.lock() {
        for path in paths.iter() {
            if path.is_dir() {
                let _ = std::fs::remove_dir_all(path);
            } else {
                let _ = std::fs::remove_file(path);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn registered_paths_are_removed_and_forgotten_ones_kept() {
        let dir = tempfile::tempdir().unwrap();
        let (a, b) = (dir.path().join("a.tmp"), dir.path().join("b.tmp"));
        std::fs::write(&a, "x").unwrap();
        std::fs::write(&b, "y").unwrap();
        register(&a);
        register(&b);
        forget(&b);
        remove_registered();
        assert!(!a.exists() && b.exists());
        forget(&a);
    }
}
