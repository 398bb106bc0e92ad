//! Publishing an output directory all at once.
//!
//! A command's outputs form one set: the directory `--out`. The set is
//! written into a fresh private staging directory beside it,
//! `.{name}.stage-{host}-{pid}-{random}` (created by `mkdir` under an
//! unpredictable name, so it cannot pre-exist as a planted file or
//! symbolic link; mode 0700 while it fills), every file created new and
//! synced. Then the staged directory replaces `--out` in one step: on
//! Linux one `renameat2(RENAME_EXCHANGE)` swaps the two directories (the
//! old set, now at the staging name, is removed afterwards); where the
//! file system cannot exchange, the old directory is first renamed aside to
//! `.{name}.old-{host}-{pid}-{random}` and the staged one renamed into
//! place. Readers therefore see the old set whole or the new set whole.
//!
//! Publishing holds a lock file `.{name}.lock` beside `--out` (created
//! with create-new semantics, holding host and process id; no `flock`), so
//! that two runs into one `--out` publish one after the other; a run
//! waits up to [`LOCK_WAIT`] for a live holder and then fails, naming it.
//! A lock, staging or set-aside directory left by a process that no
//! longer runs on this host (a kill -9, a power cut) is cleaned up by the
//! next run; a set-aside old set with no `--out` beside it (a crash between
//! the two renames of the fallback) is put back first.
//!
//! `--out` may only hold what icefold wrote there: the files of the set
//! being written, and those listed in the previous set's manifest
//! [`MANIFEST`]. Anything else is refused, never deleted.

use super::export::{ExportError, io_err};
use std::ffi::{OsStr, OsString};
use std::fs;
use std::io::Write as _;
use std::path::{Component, Path, PathBuf};
use std::time::{Duration, Instant};

/// The manifest of a published set: the names of its top-level entries,
/// one per line.
pub const MANIFEST: &str = ".icefold-set";

/// How long a run waits for another live run publishing into the same
/// `--out`.
pub const LOCK_WAIT: Duration = Duration::from_secs(60);

fn refused(what: String) -> ExportError {
    ExportError::Refused { what }
}

/// This host's name (the kernel's node name), for stale-owner checks.
pub(crate) fn host() -> String {
    #[cfg(unix)]
    {
        let u = rustix::system::uname();
        let name = u.nodename().to_string_lossy().into_owned();
        let clean: String = name
            .chars()
            .map(|c| {
                if c.is_ascii_alphanumeric() || c == '.' {
                    c
                } else {
                    '_'
                }
            })
            .collect();
        if !clean.is_empty() {
            return clean;
        }
    }
    "localhost".into()
}

/// The owner tag of this process: `{host}-{pid}`.
pub(crate) fn owner_tag() -> String {
    format!("{}-{}", host(), std::process::id())
}

/// Whether the owner `{host}-{pid}` is known to be gone: same host and no
/// such process (Linux: no /proc entry). Unknown (another host, no /proc)
/// counts as alive.
pub(crate) fn owner_gone(tag: &str) -> bool {
    let Some((h, pid)) = tag.rsplit_once('-') else {
        return false;
    };
    let Ok(pid) = pid.parse::<u32>() else {
        return false;
    };
    if h != host() || pid == std::process::id() {
        return false;
    }
    let proc_root = Path::new("/proc");
    proc_root.join("self").exists() && !proc_root.join(pid.to_string()).exists()
}

/// Parent directory and final name of `dir` (`.` when it has no parent).
fn split(dir: &Path) -> Result<(PathBuf, OsString), ExportError> {
    if dir.as_os_str().is_empty() {
        return Err(refused("--out is empty: give a directory".into()));
    }
    let name = match dir.components().next_back() {
        Some(Component::Normal(n)) => n.to_os_string(),
        _ => {
            return Err(refused(format!(
                "--out `{}` must end in a directory name (not `.`, `..` or `/`)",
                dir.display()
            )));
        }
    };
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    Ok((parent, name))
}

fn prefixed(name: &OsStr, what: &str) -> OsString {
    let mut s = OsString::from(".");
    s.push(name);
    s.push(format!(".{what}-"));
    s
}

/// The lock beside `--out`, removed when dropped.
struct Lock {
    path: PathBuf,
}

impl Drop for Lock {
    fn drop(&mut self) {
        let _ = fs::remove_file(&self.path);
    }
}

fn lock(parent: &Path, name: &OsStr, dir: &Path) -> Result<Lock, ExportError> {
    let mut file = OsString::from(".");
    file.push(name);
    file.push(".lock");
    let path = parent.join(file);
    let start = Instant::now();
    // ICEFOLD_LOCK_WAIT (seconds) shortens the wait, for tests
    let wait = std::env::var("ICEFOLD_LOCK_WAIT")
        .ok()
        .and_then(|v| v.parse::<f64>().ok())
        .filter(|v| v.is_finite() && *v >= 0.0)
        .map_or(LOCK_WAIT, Duration::from_secs_f64);
    loop {
        match fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&path)
        {
            Ok(mut f) => {
                let _ = writeln!(f, "{}", owner_tag());
                return Ok(Lock { path });
            }
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                let holder = fs::read_to_string(&path).unwrap_or_default();
                let holder = holder.trim();
                if owner_gone(holder) {
                    // a stale lock of a process that no longer runs
                    let _ = fs::remove_file(&path);
                    continue;
                }
                if start.elapsed() >= wait {
                    return Err(refused(format!(
                        "--out `{}`: another icefold run ({}) is publishing into it; waited {} s (remove `{}` if that run is gone)",
                        dir.display(),
                        if holder.is_empty() { "unknown" } else { holder },
                        wait.as_secs_f64(),
                        path.display()
                    )));
                }
                std::thread::sleep(Duration::from_millis(50));
            }
            Err(e) => return Err(io_err(&path, e)),
        }
    }
}

/// Removes staging and set-aside directories of `name` left by processes
/// that no longer run; first puts back a set-aside old set when `--out`
/// itself is missing.
fn clean_stale(parent: &Path, name: &OsStr, dir: &Path) -> Result<(), ExportError> {
    let stage = prefixed(name, "stage");
    let old = prefixed(name, "old");
    let Ok(entries) = fs::read_dir(parent) else {
        return Ok(());
    };
    let mut stale: Vec<(PathBuf, bool)> = Vec::new();
    for e in entries.flatten() {
        let file = e.file_name();
        let s = file.to_string_lossy();
        for (p, is_old) in [(&stage, false), (&old, true)] {
            if let Some(rest) = s.strip_prefix(&*p.to_string_lossy()) {
                // {host}-{pid}-{random}
                if let Some((tag, _)) = rest.rsplit_once('-')
                    && owner_gone(tag)
                {
                    stale.push((e.path(), is_old));
                }
            }
        }
    }
    if fs::symlink_metadata(dir).is_err()
        && let Some((p, _)) = stale.iter().find(|(_, o)| *o)
    {
        // a crash between the two renames: the old set goes back
        fs::rename(p, dir).map_err(|e| io_err(dir, e))?;
    }
    for (p, _) in stale {
        if fs::symlink_metadata(&p).is_ok() {
            let _ = fs::remove_dir_all(&p);
        }
    }
    Ok(())
}

/// The top-level names the previous set at `dir` listed in its manifest.
fn previous_names(dir: &Path) -> Vec<OsString> {
    fs::read_to_string(dir.join(MANIFEST))
        .map(|t| t.lines().map(OsString::from).collect())
        .unwrap_or_default()
}

/// Refuses the first entry of `dir` that is neither the manifest, nor
/// listed in it, nor one of `names` (the set being written).
fn only_icefold_entries(dir: &Path, names: &[OsString]) -> Result<(), ExportError> {
    let previous = previous_names(dir);
    for e in fs::read_dir(dir).map_err(|e| io_err(dir, e))?.flatten() {
        let n = e.file_name();
        if n == MANIFEST || names.contains(&n) || previous.contains(&n) {
            continue;
        }
        return Err(refused(format!(
            "--out `{}` holds `{}`, which icefold did not write there; give a new or empty directory, or one an earlier run of icefold wrote",
            dir.display(),
            n.to_string_lossy()
        )));
    }
    Ok(())
}

/// Refuses an existing `--out` that is not a directory or holds an entry
/// icefold did not write.
fn check_existing(dir: &Path, names: &[OsString]) -> Result<bool, ExportError> {
    let meta = match fs::symlink_metadata(dir) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(false),
        Err(e) => return Err(io_err(dir, e)),
    };
    if !meta.is_dir() {
        return Err(refused(format!(
            "--out `{}` exists and is not a directory",
            dir.display()
        )));
    }
    only_icefold_entries(dir, names)?;
    Ok(true)
}

/// The checks of an existing `--out` that can be made before computing
/// (so that a long run is not refused only at the end): it must be a
/// directory, and if an earlier set's manifest is there, hold nothing that
/// manifest does not list. Map shard directories (no manifest) pass.
pub fn precheck(dir: &Path) -> Result<(), ExportError> {
    split(dir)?;
    let meta = match fs::symlink_metadata(dir) {
        Ok(m) => m,
        Err(_) => return Ok(()),
    };
    if meta.file_type().is_symlink() {
        return match fs::metadata(dir) {
            Ok(m) if m.is_dir() => Ok(()),
            _ => Err(refused(format!(
                "--out `{}` is a symbolic link to something that is not a directory",
                dir.display()
            ))),
        };
    }
    if !meta.is_dir() {
        return Err(refused(format!(
            "--out `{}` exists and is not a directory",
            dir.display()
        )));
    }
    if !dir.join(MANIFEST).exists() {
        return Ok(());
    }
    only_icefold_entries(dir, &[])
}

/// A file of the set: its path relative to `--out` and a writer that
/// fills the newly created file.
pub(crate) type Writer<'a> = Box<dyn FnOnce(&fs::File) -> Result<(), ExportError> + 'a>;

/// Publishes `files` (relative paths, each written by its writer) as the
/// whole content of `dir`. Returns the published paths under `dir`.
pub(crate) fn publish_dir(
    dir: &Path,
    files: Vec<(PathBuf, Writer<'_>)>,
) -> Result<Vec<PathBuf>, ExportError> {
    // an --out that is a symbolic link names the directory it points to
    let dir = match fs::symlink_metadata(dir) {
        Ok(m) if m.file_type().is_symlink() => fs::canonicalize(dir).map_err(|e| io_err(dir, e))?,
        _ => dir.to_path_buf(),
    };
    let (parent, name) = split(&dir)?;
    let mut names: Vec<OsString> = Vec::new();
    for (rel, _) in &files {
        let mut comps = rel.components();
        match comps.next() {
            Some(Component::Normal(first)) if comps.all(|c| matches!(c, Component::Normal(_))) => {
                if !names.iter().any(|n| n == first) {
                    names.push(first.to_os_string());
                }
            }
            _ => {
                return Err(refused(format!(
                    "output `{}` is not inside --out",
                    rel.display()
                )));
            }
        }
    }
    fs::create_dir_all(&parent).map_err(|e| io_err(&parent, e))?;
    let _lock = lock(&parent, &name, &dir)?;
    clean_stale(&parent, &name, &dir)?;
    let exists = check_existing(&dir, &names)?;

    // stage
    let mut prefix = prefixed(&name, "stage");
    prefix.push(owner_tag());
    prefix.push("-");
    let stage = tempfile::Builder::new()
        .prefix(&prefix)
        .rand_bytes(10)
        .tempdir_in(&parent)
        .map_err(|e| io_err(&parent, e))?;
    let root = stage.path().to_path_buf();
    let mut written = Vec::with_capacity(files.len());
    for (rel, write) in files {
        let path = root.join(&rel);
        if let Some(p) = path.parent()
            && p != root
        {
            fs::create_dir_all(p).map_err(|e| io_err(p, e))?;
        }
        let f = fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&path)
            .map_err(|e| io_err(&dir.join(&rel), e))?;
        write(&f)?;
        f.sync_all().map_err(|e| io_err(&dir.join(&rel), e))?;
        written.push(dir.join(&rel));
    }
    let manifest: String = names
        .iter()
        .map(|n| format!("{}\n", n.to_string_lossy()))
        .collect();
    let mpath = root.join(MANIFEST);
    let mut m = fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&mpath)
        .map_err(|e| io_err(&mpath, e))?;
    m.write_all(manifest.as_bytes())
        .and_then(|_| m.sync_all())
        .map_err(|e| io_err(&mpath, e))?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        fs::set_permissions(&root, fs::Permissions::from_mode(0o755))
            .map_err(|e| io_err(&root, e))?;
    }
    if let Ok(d) = fs::File::open(&root) {
        let _ = d.sync_all();
    }

    // publish
    let root = stage.keep();
    let result = if exists {
        swap(&root, &dir, &parent, &name)
    } else {
        fs::rename(&root, &dir).map_err(|e| io_err(&dir, e))
    };
    if let Err(e) = result {
        let _ = fs::remove_dir_all(&root);
        return Err(e);
    }
    if let Ok(d) = fs::File::open(&parent) {
        let _ = d.sync_all();
    }
    Ok(written)
}

/// Replaces the directory `dir` by `staged`; the old set is removed.
fn swap(staged: &Path, dir: &Path, parent: &Path, name: &OsStr) -> Result<(), ExportError> {
    #[cfg(any(target_os = "linux", target_os = "android"))]
    {
        use rustix::fs::{CWD, RenameFlags, renameat_with};
        if renameat_with(CWD, staged, CWD, dir, RenameFlags::EXCHANGE).is_ok() {
            // `staged` now holds the old set
            let _ = fs::remove_dir_all(staged);
            return Ok(());
        }
    }
    // no exchange: set the old directory aside, then rename
    let mut aside = prefixed(name, "old");
    aside.push(owner_tag());
    aside.push(format!("-{:08x}", rand_u32()));
    let aside = parent.join(aside);
    fs::rename(dir, &aside).map_err(|e| io_err(dir, e))?;
    if let Err(e) = fs::rename(staged, dir) {
        let _ = fs::rename(&aside, dir);
        return Err(io_err(dir, e));
    }
    let _ = fs::remove_dir_all(&aside);
    Ok(())
}

/// A few unpredictable bits (the set-aside name need only be unique).
fn rand_u32() -> u32 {
    use std::hash::{BuildHasher, Hasher};
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    h.write_u128(
        std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0),
    );
    h.finish() as u32
}
