//! Temporary files and folders of a run, removed if the run is interrupted. Every output is
//! written to a hidden temporary file beside its destination and renamed into place when
//! complete; streaming keeps its ranks' inputs in a temporary folder. Each is registered here
//! while it exists, and a handler for SIGINT and SIGTERM (Ctrl-C, `kill`) removes what is
//! registered before the process exits with code 130. The handler is installed before the first
//! path is made, and making a path or renaming it into place holds the registry, so no moment
//! is left where a signal finds a temporary path that the registry does not know (before this,
//! about one `kill` in ten that landed just as the output was created left it behind). SIGKILL
//! cannot be caught: after `kill -9` a hidden `.tmp` file may stay beside the destination (the
//! destination itself is never partial).

use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, Once};

static REGISTERED: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static HANDLER: Once = Once::new();

/// The registry, even after a panic elsewhere poisoned its lock (a list of paths stays valid).
fn registry() -> MutexGuard<'static, Vec<PathBuf>> {
    REGISTERED
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner())
}

/// Installs the handler for SIGINT and SIGTERM once. It takes the registry's lock, so a signal
/// that arrives while a temporary path is being made or renamed waits until the registry says
/// where things are.
fn install_handler() {
    HANDLER.call_once(|| {
        // If a handler cannot be installed (another library took the signal), runs still work;
        // only the clean-up on interruption is lost.
        let _ = ctrlc::set_handler(|| {
            // The registry stays held until the process is gone: a thread making a temporary
            // path after the removal would otherwise leave it behind.
            let paths = registry();
            remove_all(&paths, Path::new("/"));
            std::process::exit(130);
        });
    });
}

/// Waits while an interruption's clean-up runs: the handler holds the registry until the
/// process exits, so a run that ends (perhaps failing, its folder gone) does not exit first
/// and leave half of it.
pub fn wait_for_interruption() {
    drop(registry());
}

/// Makes a temporary file or folder with `make` and registers the path `path_of` gives. The
/// handler is installed first and the registry held while `make` runs, so an interruption at
/// any moment either comes before the path exists or removes it.
pub fn create_registered<T>(
    make: impl FnOnce() -> std::io::Result<T>,
    path_of: impl Fn(&T) -> &Path,
) -> std::io::Result<T> {
    install_handler();
    let mut paths = registry();
    let made = make()?;
    paths.push(path_of(&made).to_path_buf());
    Ok(made)
}

/// Runs `finish` (the rename of `path` into place) with the registry held, and forgets `path`
/// if it succeeded: an interruption waits for the rename, so it never finds the path forgotten
/// but still there.
pub fn settle<T, E>(path: &Path, finish: impl FnOnce() -> Result<T, E>) -> Result<T, E> {
    let mut paths = registry();
    let finished = finish()?;
    paths.retain(|p| p != path);
    Ok(finished)
}

/// Removes the registered paths under `root` (a test removes only its own).
#[cfg(test)]
fn remove_registered_within(root: &Path) {
    remove_all(&registry(), root);
}

/// Removes `paths` under `root`. A folder is first renamed, then removed: other threads of the
/// run may still be making files in it by its path (a streamed run's rank buckets), and a file
/// made while it is being emptied would leave it behind; under its new name no file is made.
fn remove_all(paths: &[PathBuf], root: &Path) {
    for path in paths.iter().filter(|p| p.starts_with(root)) {
        if path.is_dir() {
            let mut doomed = path.clone().into_os_string();
            doomed.push(".removing");
            let doomed = PathBuf::from(doomed);
            match std::fs::rename(path, &doomed) {
                Ok(()) => {
                    let _ = std::fs::remove_dir_all(&doomed);
                }
                Err(_) => {
                    let _ = std::fs::remove_dir_all(path);
                }
            }
        } else {
            let _ = std::fs::remove_file(path);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn make(path: &Path) -> PathBuf {
        create_registered(
            || std::fs::write(path, "x").map(|_| path.to_path_buf()),
            PathBuf::as_path,
        )
        .unwrap()
    }

    #[test]
    fn registered_paths_are_removed_and_settled_ones_kept() {
        let dir = tempfile::tempdir().unwrap();
        let (a, b, c) = (
            make(&dir.path().join("a.tmp")),
            make(&dir.path().join("b.tmp")),
            make(&dir.path().join("c.tmp")),
        );
        let done = dir.path().join("b.csv");
        settle(&b, || std::fs::rename(&b, &done)).unwrap();
        // A rename that failed leaves its path registered, so an interruption still removes it.
        let failed: Result<(), &str> = settle(&c, || Err("refused"));
        assert!(failed.is_err());
        assert!(a.exists() && c.exists());
        remove_registered_within(dir.path());
        assert!(!a.exists() && !c.exists() && done.exists());
        assert!(
            registry().iter().all(|p| p != &b),
            "a settled path is forgotten"
        );
        settle(&a, || Ok::<_, ()>(())).unwrap();
        settle(&c, || Ok::<_, ()>(())).unwrap();
    }

    #[test]
    fn a_folder_is_removed_while_another_thread_still_writes_into_it() {
        let dir = tempfile::tempdir().unwrap();
        let folder = dir.path().join("buckets");
        std::fs::create_dir(&folder).unwrap();
        let writing = folder.clone();
        // Files keep appearing until the folder is gone (as a run's threads go on until exit).
        let writer = std::thread::spawn(move || {
            (0..200_000).all(|i| std::fs::write(writing.join(format!("f{i}")), "x").is_ok())
        });
        std::thread::sleep(std::time::Duration::from_millis(5));
        remove_all(std::slice::from_ref(&folder), dir.path());
        let stopped = !writer.join().unwrap();
        assert!(stopped, "the writer never saw the folder go");
        assert!(!folder.exists(), "the folder was left behind");
    }

    #[test]
    fn a_failed_creation_registers_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let missing = dir.path().join("no-such-folder").join("x.tmp");
        let made = create_registered(
            || std::fs::write(&missing, "x").map(|_| missing.clone()),
            PathBuf::as_path,
        );
        assert!(made.is_err());
        assert!(registry().iter().all(|p| p != &missing));
    }
}
