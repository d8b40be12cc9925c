//! Saving a file so that a crash, a full disk or a pulled plug never leaves it half written:
//! write a temporary file beside it, flush and sync it, keep the old file as one backup, rename
//! the new one over it, sync the folder.

use std::fs::{self, File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// The backup kept of `path`'s previous version: `name.toml.bak`, which the library does not
/// list as a supply.
pub fn backup_path(path: &Path) -> PathBuf {
    let mut name = path.file_name().unwrap_or_default().to_os_string();
    name.push(".bak");
    path.with_file_name(name)
}

/// Writes `bytes` to `path` atomically. `before_rename` runs after the temporary file is
/// written and synced and before anything else is touched: tests inject a failure there.
pub fn write_atomic(
    path: &Path,
    bytes: &[u8],
    before_rename: &dyn Fn() -> io::Result<()>,
) -> io::Result<()> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let mut tmp_name = std::ffi::OsString::from(".");
    tmp_name.push(path.file_name().unwrap_or_default());
    tmp_name.push(format!(".tmp-{}", std::process::id()));
    let tmp = dir.join(tmp_name);
    let result = (|| {
        let mut f = OpenOptions::new().write(true).create_new(true).open(&tmp)?;
        f.write_all(bytes)?;
        f.flush()?;
        f.sync_all()?;
        drop(f);
        before_rename()?;
        if path.exists() {
            let backup = backup_path(path);
            fs::copy(path, &backup)?;
            File::open(&backup)?.sync_all()?;
        }
        fs::rename(&tmp, path)?;
        // The rename is only durable once the folder's entry is on disk.
        if let Ok(d) = File::open(dir) {
            let _ = d.sync_all();
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
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
