//! Saving a file so that a crash, a full disk or a pulled plug never leaves it half written
//! and never costs the last good backup: write a temporary file beside it, flush and sync it,
//! link the old file to a temporary backup name (no copy, so no space needed), rename the new
//! one over the old, then the backup link over the old backup, and sync the folder. Reading a
//! supply file opens it without blocking and reads it only if it is a plain file.

use std::fs::{self, File, OpenOptions};
use std::io::{self, Read, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// The backup kept of `path`'s previous version: `name.toml.bak`, which the library does not
/// list as a supply.
pub fn backup_path(path: &Path) -> PathBuf {
    let mut name = path.file_name().unwrap_or_default().to_os_string();
    name.push(".bak");
    path.with_file_name(name)
}

/// The steps of a save, in order; tests inject a failure at each through the hook of
/// [`write_atomic_with`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    /// Writing the temporary file (the hook runs with half of it written, as a full disk would
    /// stop it).
    WriteTemp,
    /// Flushing the temporary file to the disk.
    SyncTemp,
    /// Giving the old file a second, temporary backup name (or copying it there).
    Backup,
    /// Renaming the new file over the old one: the moment the save happens.
    Rename,
    /// Renaming the temporary backup over the old backup.
    BackupRename,
    /// Syncing the folder so the renames survive a crash.
    SyncFolder,
}

impl Step {
    /// Every step, in the order a save takes them.
    pub const ALL: [Step; 6] = [
        Step::WriteTemp,
        Step::SyncTemp,
        Step::Backup,
        Step::Rename,
        Step::BackupRename,
        Step::SyncFolder,
    ];
}

/// A name for a temporary file beside `path`, hidden (so never listed) and unique within this
/// process as well as across processes.
fn temp_beside(path: &Path, what: &str) -> PathBuf {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    let mut name = std::ffi::OsString::from(".");
    name.push(path.file_name().unwrap_or_default());
    name.push(format!(".{what}-{}-{n}", std::process::id()));
    path.with_file_name(name)
}

/// Why an entry that is not a plain file is not read, from its own metadata (links not
/// followed); `None` for a plain file.
pub fn not_a_file(path: &Path, meta: &fs::Metadata) -> Option<String> {
    let kind = meta.file_type();
    if kind.is_file() {
        return None;
    }
    if kind.is_symlink() {
        let target = fs::read_link(path)
            .map(|t| t.display().to_string())
            .unwrap_or_else(|_| "?".into());
        return Some(if fs::metadata(path).is_err() {
            format!("a symbolic link to {target}, which does not exist: not read")
        } else {
            format!(
                "a symbolic link to {target}: only plain files in the library are read as \
                 supplies (copy it in with `railcheck import`)"
            )
        });
    }
    Some(format!("{}, not a file: not read", kind_words(&kind)))
}

fn kind_words(kind: &fs::FileType) -> &'static str {
    if kind.is_dir() {
        return "a folder";
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if kind.is_fifo() {
            return "a named pipe (FIFO)";
        }
        if kind.is_socket() {
            return "a socket";
        }
        if kind.is_block_device() || kind.is_char_device() {
            return "a device";
        }
    }
    "a special file"
}

fn refused(why: String) -> io::Error {
    io::Error::new(io::ErrorKind::InvalidInput, why)
}

/// Reads `path` if it is a plain file, never blocking on a named pipe or a device. A symbolic
/// link is followed only when `follow_link` (a path the technician typed), never for an entry
/// of the library's folder.
pub fn read_plain(path: &Path, follow_link: bool) -> io::Result<Vec<u8>> {
    let meta = if follow_link {
        fs::metadata(path)?
    } else {
        fs::symlink_metadata(path)?
    };
    if let Some(why) = not_a_file(path, &meta) {
        return Err(refused(why));
    }
    let mut options = OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        // Checked above, but the entry may be swapped between the check and the open: a pipe
        // opened without O_NONBLOCK waits for a writer for ever, and a link must not be
        // followed out of the library.
        let mut flags = libc::O_NONBLOCK;
        if !follow_link {
            flags |= libc::O_NOFOLLOW;
        }
        options.custom_flags(flags);
    }
    let mut f = options.open(path)?;
    let meta = f.metadata()?;
    if let Some(why) = not_a_file(path, &meta) {
        return Err(refused(why));
    }
    let mut bytes = Vec::with_capacity(meta.len() as usize);
    f.read_to_end(&mut bytes)?;
    Ok(bytes)
}

/// Writes `bytes` to `path` atomically, keeping the previous version as `path.bak`.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> io::Result<()> {
    write_atomic_with(path, bytes, &|_| Ok(()))
}

/// [`write_atomic`] with a hook run at each [`Step`]; an error from the hook is taken as that
/// step failing (tests inject full disks and power cuts there).
///
/// A failure before the rename leaves the old file and the old backup exactly as they were. A
/// failure after it (the backup rename, the folder sync) is not an error: the new version is
/// in place and whole, and the previous one is whole beside it (as the backup, or if the
/// backup rename failed, under a hidden temporary name with the old backup untouched).
pub fn write_atomic_with(
    path: &Path,
    bytes: &[u8],
    hook: &dyn Fn(Step) -> io::Result<()>,
) -> io::Result<()> {
    write_atomic_inner(path, bytes, hook, true)
}

fn write_atomic_inner(
    path: &Path,
    bytes: &[u8],
    hook: &dyn Fn(Step) -> io::Result<()>,
    link_backup: bool,
) -> io::Result<()> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    // Renaming over a symbolic link would replace the link with a file and leave its target
    // stale; railcheck refuses instead (documented in README).
    let exists = match fs::symlink_metadata(path) {
        Ok(meta) if meta.file_type().is_symlink() => {
            return Err(refused(format!(
                "{} is a symbolic link; railcheck does not replace a link with a file (write \
                 to its target instead)",
                path.display()
            )));
        }
        Ok(meta) if !meta.is_file() => {
            return Err(refused(format!(
                "{} is {}, not a file",
                path.display(),
                kind_words(&meta.file_type())
            )));
        }
        Ok(_) => true,
        Err(e) if e.kind() == io::ErrorKind::NotFound => false,
        Err(e) => return Err(e),
    };
    let tmp = temp_beside(path, "tmp");
    let bak_tmp = temp_beside(path, "bak-tmp");
    let before_rename = (|| {
        let mut f = OpenOptions::new().write(true).create_new(true).open(&tmp)?;
        let half = bytes.len() / 2;
        f.write_all(&bytes[..half])?;
        hook(Step::WriteTemp)?;
        f.write_all(&bytes[half..])?;
        f.flush()?;
        hook(Step::SyncTemp)?;
        f.sync_all()?;
        drop(f);
        if exists {
            make_backup(path, &bak_tmp, hook, link_backup)?;
        }
        hook(Step::Rename)?;
        fs::rename(&tmp, path)
    })();
    if let Err(e) = before_rename {
        let _ = fs::remove_file(&tmp);
        let _ = fs::remove_file(&bak_tmp);
        return Err(e);
    }
    // Saved. The old version now lives only under the temporary backup name; putting it in
    // the backup's place may fail, but then it stays there rather than being deleted.
    if exists {
        let _ = hook(Step::BackupRename).and_then(|_| fs::rename(&bak_tmp, backup_path(path)));
    }
    // The rename is only durable once the folder's entry is on disk; some file systems refuse
    // to sync a folder, and by now either name points at a whole file.
    let _ = hook(Step::SyncFolder).and_then(|_| File::open(dir)?.sync_all());
    Ok(())
}

/// Writes `bytes` to `path`, which must not exist yet, never replacing anything: a temporary
/// file beside it is written and synced, then linked to `path` (a hard link is refused when
/// the name is taken, so of two writers racing for one name only one gets it; the other has
/// `AlreadyExists`). Where links are not supported the file is created with `create_new`,
/// which refuses a taken name too, and written in place.
pub fn write_new(path: &Path, bytes: &[u8]) -> io::Result<()> {
    let tmp = temp_beside(path, "new");
    let staged = (|| {
        let mut f = OpenOptions::new().write(true).create_new(true).open(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()
    })();
    let linked = staged.and_then(|_| fs::hard_link(&tmp, path));
    let _ = fs::remove_file(&tmp);
    match linked {
        Ok(()) => {}
        Err(e) if e.kind() == io::ErrorKind::AlreadyExists => return Err(e),
        Err(_) => {
            let mut f = OpenOptions::new().write(true).create_new(true).open(path)?;
            let written = f.write_all(bytes).and_then(|_| f.sync_all());
            if let Err(e) = written {
                drop(f);
                let _ = fs::remove_file(path);
                return Err(e);
            }
        }
    }
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let _ = File::open(dir).and_then(|d| d.sync_all());
    Ok(())
}

/// Gives the old file at `path` the name `bak_tmp`: a hard link (no bytes copied, so a full
/// disk cannot cut it short), or where links are not supported, a synced copy.
fn make_backup(
    path: &Path,
    bak_tmp: &Path,
    hook: &dyn Fn(Step) -> io::Result<()>,
    link_backup: bool,
) -> io::Result<()> {
    if link_backup && fs::hard_link(path, bak_tmp).is_ok() {
        return hook(Step::Backup);
    }
    let mut from = File::open(path)?;
    let mut to = OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(bak_tmp)?;
    io::copy(&mut from, &mut to)?;
    hook(Step::Backup)?;
    to.sync_all()
}

/// A cheap fingerprint of a file's bytes (FNV-1a, 64 bit) to notice that someone else
/// changed it since it was read.
pub fn fingerprint(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in bytes {
        h ^= b as u64;
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h ^ (bytes.len() as u64).rotate_left(32)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dir(tag: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("railcheck-store-{tag}-{}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(&d).unwrap();
        d
    }

    /// A new file is written whole; a taken name is refused and left as it was, and no
    /// temporary file stays behind either way.
    #[test]
    fn write_new_never_replaces_a_file() {
        let d = dir("new");
        let path = d.join("r.html");
        write_new(&path, b"first").unwrap();
        assert_eq!(fs::read(&path).unwrap(), b"first");
        let err = write_new(&path, b"second").unwrap_err();
        assert_eq!(err.kind(), io::ErrorKind::AlreadyExists);
        assert_eq!(fs::read(&path).unwrap(), b"first");
        let names: Vec<_> = fs::read_dir(&d)
            .unwrap()
            .flatten()
            .map(|e| e.file_name())
            .collect();
        assert_eq!(names, vec![std::ffi::OsString::from("r.html")]);
        let _ = fs::remove_dir_all(&d);
    }

    /// The copying backup (for file systems without hard links) keeps the old backup whole
    /// when the copy fails half-way, as on a full disk.
    #[test]
    fn a_failed_backup_copy_keeps_the_old_backup() {
        let d = dir("copy");
        let path = d.join("a.toml");
        fs::write(&path, "old\n").unwrap();
        fs::write(backup_path(&path), "older\n").unwrap();
        let full = |s: Step| {
            if s == Step::Backup {
                Err(io::Error::from_raw_os_error(28))
            } else {
                Ok(())
            }
        };
        let err = write_atomic_inner(&path, b"new\n", &full, false).unwrap_err();
        assert_eq!(err.raw_os_error(), Some(28));
        assert_eq!(fs::read_to_string(&path).unwrap(), "old\n");
        assert_eq!(fs::read_to_string(backup_path(&path)).unwrap(), "older\n");
        let names: Vec<String> = fs::read_dir(&d)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        assert_eq!(names.len(), 2, "temporaries left: {names:?}");
        // Without the failure the copy becomes the backup.
        write_atomic_inner(&path, b"new\n", &|_| Ok(()), false).unwrap();
        assert_eq!(fs::read_to_string(&path).unwrap(), "new\n");
        assert_eq!(fs::read_to_string(backup_path(&path)).unwrap(), "old\n");
    }
}
