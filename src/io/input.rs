//! Reading input files with bounded resources: at most a given number of
//! bytes (a scenario 1 MiB, a state or start profile 16 MiB, a map shard
//! 1 GiB), valid UTF-8, and from a pipe or FIFO only while data arrive
//! within [`READ_TIMEOUT`] (a FIFO nobody writes to does not hang the run).

use std::io::Read as _;
use std::path::Path;
use std::sync::mpsc;
use std::time::Duration;

/// Largest scenario file read.
pub const SCENARIO_MAX_BYTES: u64 = 1 << 20;
/// Largest state, side or start profile file read.
pub const TABLE_MAX_BYTES: u64 = 16 << 20;
/// Largest map shard file read.
pub const SHARD_MAX_BYTES: u64 = 1 << 30;
/// How long a read from a pipe or FIFO may wait for its data.
pub const READ_TIMEOUT: Duration = Duration::from_secs(10);

/// Human-readable size (`1 MiB`).
fn size(bytes: u64) -> String {
    if bytes >= 1 << 30 {
        format!("{} GiB", bytes >> 30)
    } else if bytes >= 1 << 20 {
        format!("{} MiB", bytes >> 20)
    } else {
        format!("{} KiB", bytes >> 10)
    }
}

/// The text of `path`, at most `limit` bytes. Errors are one line naming
/// the limit or the reason (the caller adds the path).
pub fn read_text(path: &Path, limit: u64) -> Result<String, String> {
    let meta = std::fs::metadata(path).map_err(|e| e.to_string())?;
    if meta.is_dir() {
        return Err("is a directory, not a file".into());
    }
    if meta.is_file() && meta.len() > limit {
        return Err(format!(
            "{} bytes, more than the {} an input may have",
            meta.len(),
            size(limit)
        ));
    }
    let read = move |path: std::path::PathBuf| -> Result<Vec<u8>, String> {
        let f = std::fs::File::open(&path).map_err(|e| e.to_string())?;
        let mut buf = Vec::new();
        f.take(limit + 1)
            .read_to_end(&mut buf)
            .map_err(|e| e.to_string())?;
        Ok(buf)
    };
    let bytes = if meta.is_file() {
        read(path.to_path_buf())?
    } else {
        // a pipe, FIFO or device: read in a helper thread so that a writer
        // that never comes cannot hang the run (the thread is left behind
        // blocked; the process exits with the error)
        let (tx, rx) = mpsc::channel();
        let p = path.to_path_buf();
        std::thread::spawn(move || {
            let _ = tx.send(read(p));
        });
        rx.recv_timeout(READ_TIMEOUT).map_err(|_| {
            format!(
                "no data within {} s (a pipe or FIFO nobody writes to?)",
                READ_TIMEOUT.as_secs()
            )
        })??
    };
    if bytes.len() as u64 > limit {
        return Err(format!(
            "more than the {} an input may have (a device or an endless stream?)",
            size(limit)
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        format!(
            "not UTF-8 text (invalid byte at offset {})",
            e.utf8_error().valid_up_to()
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limits_and_devices() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.toml");
        std::fs::write(&p, "x = 1\n").unwrap();
        assert_eq!(read_text(&p, 100).unwrap(), "x = 1\n");
        assert!(read_text(&p, 3).unwrap_err().contains("more than"));
        assert!(
            read_text(dir.path(), 100)
                .unwrap_err()
                .contains("directory")
        );
        #[cfg(unix)]
        {
            let e = read_text(Path::new("/dev/zero"), 1 << 10).unwrap_err();
            assert!(e.contains("more than the 1 KiB"), "{e}");
        }
        std::fs::write(&p, [0x66, 0xff, 0x66]).unwrap();
        assert!(read_text(&p, 100).unwrap_err().contains("offset 1"));
    }
}
