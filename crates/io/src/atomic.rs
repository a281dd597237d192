//! Atomic file replacement: readers see either the old file or the complete new one.

use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};

use crate::error::IoError;

/// Write `bytes` to `path` atomically.
///
/// The bytes go to a temporary file in the same directory as `path` (so that the final rename
/// stays on one file system), which is flushed and synced to disk and then renamed over `path`.
/// On any failure the temporary file is removed and `path` is left as it was.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), IoError> {
    let tmp = temp_path_for(path);
    let result = (|| {
        // `create_new` so that two writers never share one temporary file.
        let mut file = File::options()
            .write(true)
            .create_new(true)
            .open(&tmp)
            .map_err(io_err(&tmp, "create temporary file"))?;
        file.write_all(bytes)
            .map_err(io_err(&tmp, "write temporary file"))?;
        file.flush().map_err(io_err(&tmp, "flush temporary file"))?;
        file.sync_all()
            .map_err(io_err(&tmp, "sync temporary file"))?;
        drop(file);
        std::fs::rename(&tmp, path).map_err(io_err(path, "rename temporary file over target"))
    })();
    if result.is_err() {
        // Best effort: the temporary file may not exist if its creation was what failed.
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Map an `std::io::Error` to [`IoError::Io`] for `path` and `operation`.
fn io_err(path: &Path, operation: &'static str) -> impl FnOnce(std::io::Error) -> IoError {
    let path = path.to_path_buf();
    move |source| IoError::Io {
        path,
        operation,
        source,
    }
}

/// `dir/.name.tmp-<pid>-<counter>` next to `path`: hidden, unique within this process and
/// distinct between processes.
fn temp_path_for(path: &Path) -> PathBuf {
    use std::sync::atomic::{AtomicU64, Ordering};
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    let name = path
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp_name = format!(".{name}.tmp-{}-{n}", std::process::id());
    match path.parent() {
        Some(dir) => dir.join(tmp_name),
        None => PathBuf::from(tmp_name),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn temp_file_sits_in_target_directory_and_is_unique() {
        let a = temp_path_for(Path::new("/some/dir/out.vtu"));
        let b = temp_path_for(Path::new("/some/dir/out.vtu"));
        assert_eq!(a.parent(), Some(Path::new("/some/dir")));
        assert_ne!(a, b);
        let bare = temp_path_for(Path::new("out.vtu"));
        assert_eq!(bare.parent(), Some(Path::new("")));
    }
}
