//! The personal library of serviced units: one TOML file per supply in a folder, each with its
//! visits. Plain, mergeable files that are never lost, never silently overwritten, and never
//! touched when railcheck cannot read them.

pub mod demo;
pub mod merge;
pub mod slug;
pub mod store;

use crate::supply::{Supply, SupplyError};
use crate::visit::Visit;
use std::fs::{self, File, OpenOptions};
use std::io;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// Why a library operation did not happen.
#[derive(Debug, thiserror::Error)]
pub enum LibraryError {
    // The OS error is part of the message and deliberately not a `source`: printed with its
    // chain (`{:#}`), it would otherwise appear twice.
    #[error("{path}: {error}")]
    Io { path: PathBuf, error: io::Error },
    #[error(
        "{path}: cannot save: {error}; nothing was written (the file and its backup are as \
         they were)"
    )]
    Write { path: PathBuf, error: io::Error },
    #[error("{path}: {error}")]
    Unreadable { path: PathBuf, error: String },
    #[error(
        "{0}: the file changed on disk since it was loaded (another program or railcheck \
         window?); reload it before saving, nothing was written"
    )]
    ChangedOnDisk(PathBuf),
    #[error(
        "{name:?} ({path}) changed on disk while this command ran; nothing was written, run it \
         again"
    )]
    ChangedWhileRunning { name: String, path: PathBuf },
    #[error(
        "{} supplies in the library are named {name:?}: {}; give the file instead",
        files.len(),
        files.iter().map(|f| f.display().to_string()).collect::<Vec<_>>().join(", ")
    )]
    Ambiguous { name: String, files: Vec<PathBuf> },
    #[error(
        "the library is busy: another railcheck has held {0} for {secs} s; nothing was written, \
         try again",
        secs = LOCK_WAIT.as_secs()
    )]
    Busy(PathBuf),
    #[error("the library already has a supply named {0:?}; import with --rename to keep both")]
    Duplicate(String),
    #[error("no supply named {0:?} in the library {1} (and no such file)")]
    NotFound(String, PathBuf),
    #[error("{0}")]
    Merge(String),
}

fn io_err(path: &Path) -> impl FnOnce(io::Error) -> LibraryError + '_ {
    move |error| LibraryError::Io {
        path: path.to_path_buf(),
        error,
    }
}

fn write_err(path: &Path) -> impl FnOnce(io::Error) -> LibraryError + '_ {
    move |error| LibraryError::Write {
        path: path.to_path_buf(),
        error,
    }
}

/// How long a save waits for another railcheck to finish its own (each holds the lock only
/// for one read-check-write-rename, milliseconds); a bound so a stopped process never hangs
/// the others.
pub const LOCK_WAIT: Duration = Duration::from_secs(10);

/// The folder of the screen's service records, inside the library folder.
pub const RECORDS_DIR: &str = "records";
/// How many records of one visit the screen writes before it asks for some to be moved (a
/// bound, so a full folder is an error rather than a long search).
const RECORD_SUFFIXES: usize = 999;

/// The per-library lock file; hidden, so never listed as a supply.
pub const LOCK_FILE: &str = ".lock";

/// Held while a save reads, checks, writes and renames; released when dropped.
#[derive(Debug)]
pub struct LibraryLock {
    _file: Option<File>,
}

/// A supply file as loaded: its text (kept so a save can preserve it) and what it says.
#[derive(Debug, Clone)]
pub struct Entry {
    pub file: PathBuf,
    pub state: EntryState,
}

#[derive(Debug, Clone)]
pub enum EntryState {
    Ok {
        supply: Box<Supply>,
        /// The bytes as read, and their fingerprint to notice a change on disk.
        text: String,
        fingerprint: u64,
    },
    /// Not valid TOML, a bad value, a newer format, not UTF-8: listed, never modified.
    Unreadable { error: String },
}

/// A supply in the library's trash.
#[derive(Debug, Clone, PartialEq)]
pub struct Trashed {
    pub file: PathBuf,
    pub name: String,
}

impl Entry {
    /// The supply, when the file could be read.
    pub fn supply(&self) -> Option<&Supply> {
        match &self.state {
            EntryState::Ok { supply, .. } => Some(supply),
            EntryState::Unreadable { .. } => None,
        }
    }

    /// The name to list it under: the supply's name, or the file name when unreadable.
    pub fn name(&self) -> String {
        match &self.state {
            EntryState::Ok { supply, .. } => supply.name.clone(),
            EntryState::Unreadable { .. } => self
                .file
                .file_name()
                .map(|f| f.to_string_lossy().into_owned())
                .unwrap_or_default(),
        }
    }
}

/// Reads one supply file named by the technician, never failing and never blocking: an
/// unreadable file, or anything but a plain file (a link is followed), becomes an
/// `Unreadable` entry.
pub fn read_entry(file: &Path) -> Entry {
    entry_from(file, store::read_plain(file, true))
}

/// Reads one entry of the library's folder: as [`read_entry`], but a symbolic link is not
/// followed (it is listed with its target, never read).
pub fn read_library_entry(file: &Path) -> Entry {
    entry_from(file, store::read_plain(file, false))
}

fn entry_from(file: &Path, read: io::Result<Vec<u8>>) -> Entry {
    let state = match read {
        Err(e) if e.kind() == io::ErrorKind::InvalidInput => EntryState::Unreadable {
            error: e.to_string(),
        },
        Err(e) => EntryState::Unreadable {
            error: format!("cannot read: {e}"),
        },
        Ok(bytes) => match String::from_utf8(bytes) {
            Err(_) => EntryState::Unreadable {
                error: "not UTF-8 text".into(),
            },
            Ok(text) => match Supply::from_toml_str(&text) {
                Ok(supply) => EntryState::Ok {
                    supply: Box::new(supply),
                    fingerprint: store::fingerprint(text.as_bytes()),
                    text,
                },
                Err(e) => EntryState::Unreadable {
                    error: e.to_string(),
                },
            },
        },
    };
    Entry {
        file: file.to_path_buf(),
        state,
    }
}

/// The supply without its visits: what a diagnosis depends on.
/// The supply and text of the library file `file` as it is now (under the caller's lock), or
/// why it cannot be read.
fn read_readable(file: &Path) -> Result<(Supply, String), LibraryError> {
    let fresh = read_library_entry(file);
    match fresh.state {
        EntryState::Ok { supply, text, .. } => Ok(((*supply).clone(), text)),
        EntryState::Unreadable { error } => Err(LibraryError::Unreadable {
            path: fresh.file,
            error,
        }),
    }
}

fn without_visits(s: &Supply) -> Supply {
    let mut s = s.clone();
    s.visits.clear();
    s
}

/// A library folder.
#[derive(Debug, Clone)]
pub struct Library {
    pub dir: PathBuf,
}

impl Library {
    /// The usual place: `supplies/` in the data folder the platform gives railcheck.
    pub fn default_dir() -> Option<PathBuf> {
        directories::ProjectDirs::from("", "", "railcheck").map(|d| d.data_dir().join("supplies"))
    }

    /// Opens the library at `dir`, creating it on first use, with the demo supplies unless
    /// `seed_demo` is false. An existing folder is never seeded.
    pub fn open(dir: &Path, seed_demo: bool) -> Result<Library, LibraryError> {
        let lib = Library {
            dir: dir.to_path_buf(),
        };
        if !dir.exists() {
            fs::create_dir_all(dir).map_err(io_err(dir))?;
            if seed_demo {
                let _lock = lib.lock()?;
                for (stem, text) in demo::supplies() {
                    let path = dir.join(format!("{stem}.toml"));
                    if fs::symlink_metadata(&path).is_err() {
                        store::write_atomic(&path, text.as_bytes()).map_err(write_err(&path))?;
                    }
                }
            }
        }
        Ok(lib)
    }

    /// Takes the library's save lock (an advisory lock on its `.lock` file), waiting at most
    /// [`LOCK_WAIT`] for another railcheck to finish its save. Every write into the library
    /// holds it, only for the read-check-write-rename.
    pub fn lock(&self) -> Result<LibraryLock, LibraryError> {
        let path = self.dir.join(LOCK_FILE);
        let file = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&path)
            .map_err(write_err(&path))?;
        let start = Instant::now();
        loop {
            match file.try_lock() {
                Ok(()) => return Ok(LibraryLock { _file: Some(file) }),
                Err(fs::TryLockError::WouldBlock) if start.elapsed() < LOCK_WAIT => {
                    std::thread::sleep(Duration::from_millis(2));
                }
                Err(fs::TryLockError::WouldBlock) => return Err(LibraryError::Busy(path)),
                // A file system without locks (some network shares): the fingerprint check
                // still refuses a file changed since loading, only not atomically.
                Err(fs::TryLockError::Error(e)) if e.kind() == io::ErrorKind::Unsupported => {
                    return Ok(LibraryLock { _file: None });
                }
                Err(fs::TryLockError::Error(e)) => return Err(write_err(&path)(e)),
            }
        }
    }

    /// The entries named `*.toml`, sorted by name, whatever they are (a pipe, a folder or a
    /// link is listed with the reason it is not read); hidden files, backups and temporaries
    /// are left out.
    pub fn files(&self) -> Result<Vec<PathBuf>, LibraryError> {
        let mut files: Vec<PathBuf> = fs::read_dir(&self.dir)
            .map_err(io_err(&self.dir))?
            .filter_map(|e| e.ok())
            .filter(|e| {
                let name = e.file_name();
                let name = name.to_string_lossy();
                !name.starts_with('.') && name.ends_with(".toml")
            })
            .map(|e| e.path())
            .collect();
        files.sort();
        Ok(files)
    }

    /// Every supply file, read; one bad file never stops the others.
    pub fn load(&self) -> Result<Vec<Entry>, LibraryError> {
        let mut entries: Vec<Entry> = self
            .files()?
            .iter()
            .map(|f| read_library_entry(f))
            .collect();
        entries.sort_by_key(|e| e.name().to_lowercase());
        Ok(entries)
    }

    /// A supply by a file path, a file name in the folder, or its name (case-insensitive);
    /// two supplies of one name are refused naming both files.
    pub fn find(&self, name_or_file: &str) -> Result<Entry, LibraryError> {
        let as_path = Path::new(name_or_file);
        if fs::symlink_metadata(as_path).is_ok_and(|m| !m.is_dir()) {
            return Ok(read_entry(as_path));
        }
        let in_dir = self.dir.join(name_or_file);
        if in_dir.parent() == Some(self.dir.as_path())
            && fs::symlink_metadata(&in_dir).is_ok_and(|m| !m.is_dir())
        {
            return Ok(read_library_entry(&in_dir));
        }
        let mut found: Vec<Entry> = self
            .load()?
            .into_iter()
            .filter(|e| {
                e.supply()
                    .is_some_and(|s| s.name.eq_ignore_ascii_case(name_or_file))
            })
            .collect();
        match found.len() {
            0 => Err(LibraryError::NotFound(
                name_or_file.to_string(),
                self.dir.clone(),
            )),
            1 => Ok(found.remove(0)),
            _ => Err(LibraryError::Ambiguous {
                name: name_or_file.to_string(),
                files: found.into_iter().map(|e| e.file).collect(),
            }),
        }
    }

    /// A new file name for a supply called `name`, inside the folder and not yet taken (a
    /// dangling link counts as taken).
    pub fn new_file_for(&self, name: &str) -> PathBuf {
        let file = slug::unique(&slug::slug(name), |f| {
            fs::symlink_metadata(self.dir.join(f)).is_ok()
        });
        self.dir.join(file)
    }

    /// The folder the screen writes service records into (`records`; the library lists only
    /// `*.toml` files, so nothing there is ever taken for a supply).
    pub fn records_dir(&self) -> PathBuf {
        self.dir.join(RECORDS_DIR)
    }

    /// Writes a service record as `records/<supply file stem>-<date>.html`, or with `-2`,
    /// `-3`, ... when that name is taken: an earlier record is never replaced. Returns the
    /// path written.
    pub fn write_record(
        &self,
        supply_file: &Path,
        date: &str,
        html: &str,
    ) -> Result<PathBuf, LibraryError> {
        let dir = self.records_dir();
        fs::create_dir_all(&dir).map_err(io_err(&dir))?;
        // The stem of a library file is already a slug; a file from elsewhere is made one, and
        // the date is the visit's YYYY-MM-DD, so the name cannot leave the folder.
        let stem = supply_file
            .file_stem()
            .map(|s| slug::slug(&s.to_string_lossy()))
            .unwrap_or_else(|| "supply".into());
        let base = format!("{stem}-{}", slug::slug(date));
        for n in 1..=RECORD_SUFFIXES {
            let name = if n == 1 {
                format!("{base}.html")
            } else {
                format!("{base}-{n}.html")
            };
            let path = dir.join(name);
            match store::write_new(&path, html.as_bytes()) {
                Ok(()) => return Ok(path),
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
                Err(e) => return Err(io_err(&path)(e)),
            }
        }
        Err(LibraryError::Io {
            path: dir.join(format!("{base}.html")),
            error: io::Error::new(
                io::ErrorKind::AlreadyExists,
                format!("{RECORD_SUFFIXES} records of this visit already exist; move some away"),
            ),
        })
    }

    /// The library's trash folder, where deleted supplies go (`.trash`).
    pub fn trash_dir(&self) -> PathBuf {
        self.dir.join(".trash")
    }

    /// Moves `file` into the trash (under a name of its own there, so an older deleted file
    /// of the same name is kept); returns where it went. Done under the lock.
    pub fn trash(&self, file: &Path) -> Result<PathBuf, LibraryError> {
        let _lock = self.lock()?;
        let trash = self.trash_dir();
        fs::create_dir_all(&trash).map_err(io_err(&trash))?;
        let name = file
            .file_name()
            .map(|f| f.to_string_lossy().into_owned())
            .unwrap_or_else(|| "supply.toml".into());
        let stem = name.trim_end_matches(".toml");
        let to = trash.join(slug::unique(stem, |f| {
            fs::symlink_metadata(trash.join(f)).is_ok()
        }));
        fs::rename(file, &to).map_err(io_err(file))?;
        Ok(to)
    }

    /// The supplies in the trash, newest first, each with its name (or its file name when
    /// unreadable).
    pub fn trashed(&self) -> Vec<Trashed> {
        let Ok(dir) = fs::read_dir(self.trash_dir()) else {
            return Vec::new();
        };
        let mut items: Vec<(std::time::SystemTime, Trashed)> = dir
            .flatten()
            .filter(|e| e.path().extension().is_some_and(|x| x == "toml"))
            .filter(|e| e.file_type().is_ok_and(|t| t.is_file()))
            .map(|e| {
                let file = e.path();
                let entry = read_library_entry(&file);
                let when = e
                    .metadata()
                    .and_then(|m| m.modified())
                    .unwrap_or(std::time::UNIX_EPOCH);
                (
                    when,
                    Trashed {
                        name: entry.name(),
                        file,
                    },
                )
            })
            .collect();
        items.sort_by(|a, b| b.0.cmp(&a.0).then_with(|| a.1.name.cmp(&b.1.name)));
        items.into_iter().map(|(_, t)| t).collect()
    }

    /// Moves a trashed file back into the library under a file name not taken there; returns
    /// its new path. Done under the lock.
    pub fn restore(&self, trashed: &Path) -> Result<PathBuf, LibraryError> {
        let _lock = self.lock()?;
        let name = read_library_entry(trashed).name();
        let to = self.new_file_for(name.trim_end_matches(".toml"));
        fs::rename(trashed, &to).map_err(io_err(trashed))?;
        Ok(to)
    }

    /// Saves `new` over the entry it was loaded as, keeping the file's comments and unknown
    /// keys, refusing if the file changed on disk since; returns the file as written.
    pub fn save(&self, entry: &Entry, new: &Supply) -> Result<Entry, LibraryError> {
        self.save_with(entry, new, &|_| Ok(()))
    }

    /// [`Library::save`] with a hook run at each step of the write (tests inject failures).
    /// The check that the file is unchanged and the write happen under the library's lock,
    /// so of two saves from the same loaded version one succeeds and the other is refused.
    pub fn save_with(
        &self,
        entry: &Entry,
        new: &Supply,
        hook: &dyn Fn(store::Step) -> io::Result<()>,
    ) -> Result<Entry, LibraryError> {
        let EntryState::Ok { supply, text, .. } = &entry.state else {
            return Err(LibraryError::Unreadable {
                path: entry.file.clone(),
                error: "an unreadable file is never overwritten".into(),
            });
        };
        self.write_checked(entry, new, supply, text, hook)
    }

    /// As [`Library::save`], but writing `new` into `base_text`, an earlier text of the same
    /// file whose supply was `base` (an undo back to it): the comments and layout of that
    /// text come back with its values, where a merge into the current text would add the
    /// returning keys bare. The file must still be as `entry` was read.
    pub fn save_restoring(
        &self,
        entry: &Entry,
        new: &Supply,
        base: &Supply,
        base_text: &str,
    ) -> Result<Entry, LibraryError> {
        self.write_checked(entry, new, base, base_text, &|_| Ok(()))
    }

    /// Writes `new` merged into `text` (whose supply is `old`) over `entry`'s file, under the
    /// lock and only if the file is still as `entry` was read.
    fn write_checked(
        &self,
        entry: &Entry,
        new: &Supply,
        old: &Supply,
        text: &str,
        hook: &dyn Fn(store::Step) -> io::Result<()>,
    ) -> Result<Entry, LibraryError> {
        new.validate().map_err(|e| LibraryError::Unreadable {
            path: entry.file.clone(),
            error: e.to_string(),
        })?;
        let EntryState::Ok { fingerprint, .. } = &entry.state else {
            return Err(LibraryError::Unreadable {
                path: entry.file.clone(),
                error: "an unreadable file is never overwritten".into(),
            });
        };
        let _lock = self.lock()?;
        // Read through a link so that saving over one is refused with its own reason below.
        let on_disk = store::read_plain(&entry.file, true).map_err(io_err(&entry.file))?;
        if store::fingerprint(&on_disk) != *fingerprint {
            return Err(LibraryError::ChangedOnDisk(entry.file.clone()));
        }
        write_merged(&entry.file, text, old, new, hook)
    }

    /// Records `visit` in the library file `file`, whose supply (less its visits) was
    /// `basis` when the visit's verdict was worked out. Done whole under the lock on the file
    /// as it is then, so visits recorded meanwhile by others are kept (appending commutes);
    /// if the supply's values changed meanwhile the verdict may be stale, and nothing is
    /// written.
    pub fn append_visit(
        &self,
        file: &Path,
        basis: &Supply,
        visit: Visit,
    ) -> Result<Entry, LibraryError> {
        let _lock = self.lock()?;
        let (supply, text) = read_readable(file)?;
        let (supply, text) = (&supply, &text);
        if without_visits(supply) != without_visits(basis) {
            return Err(LibraryError::ChangedWhileRunning {
                name: basis.name.clone(),
                path: file.to_path_buf(),
            });
        }
        let mut next = supply.clone();
        next.visits.push(visit);
        next.validate().map_err(|e| LibraryError::Unreadable {
            path: file.to_path_buf(),
            error: e.to_string(),
        })?;
        write_merged(file, text, supply, &next, &|_| Ok(()))
    }

    /// Stores `calibration` in the library file `file` and marks its baseline visit: the
    /// visit `new_visit` when given (appended), otherwise the file's visit dated as the
    /// calibration whose readings are `baseline`. Whole under the lock on the file as it is
    /// then; if the supply's values (its visits and calibration aside) changed since `basis`
    /// was read, the fit may be stale and nothing is written.
    pub fn record_calibration(
        &self,
        file: &Path,
        basis: &Supply,
        calibration: crate::calibration::Calibration,
        baseline: &crate::visit::Readings,
        new_visit: Option<Visit>,
    ) -> Result<Entry, LibraryError> {
        let _lock = self.lock()?;
        let (supply, text) = read_readable(file)?;
        let (supply, text) = (&supply, &text);
        let values = |s: &Supply| {
            let mut s = without_visits(s);
            s.calibration = None;
            s
        };
        if values(supply) != values(basis) {
            return Err(LibraryError::ChangedWhileRunning {
                name: basis.name.clone(),
                path: file.to_path_buf(),
            });
        }
        let mut next = supply.clone();
        for v in &mut next.visits {
            v.baseline = false;
        }
        match new_visit {
            Some(mut v) => {
                v.baseline = true;
                next.visits.push(v);
            }
            None => {
                if let Some(v) = next
                    .visits
                    .iter_mut()
                    .rev()
                    .find(|v| v.date == calibration.visit && v.readings == *baseline)
                {
                    v.baseline = true;
                }
            }
        }
        next.calibration = Some(calibration);
        next.validate().map_err(|e| LibraryError::Unreadable {
            path: file.to_path_buf(),
            error: e.to_string(),
        })?;
        write_merged(file, text, supply, &next, &|_| Ok(()))
    }

    /// Adds a supply as a new file (its name made into a unique file name); `text` is the
    /// original file text to keep, when importing.
    pub fn add(&self, supply: &Supply, text: Option<&str>) -> Result<PathBuf, LibraryError> {
        let _lock = self.lock()?;
        self.add_locked(supply, text)
    }

    fn add_locked(&self, supply: &Supply, text: Option<&str>) -> Result<PathBuf, LibraryError> {
        let path = self.new_file_for(&supply.name);
        let body = match text {
            Some(t) => t.to_string(),
            None => supply.to_toml_string(),
        };
        store::write_atomic(&path, body.as_bytes()).map_err(write_err(&path))?;
        Ok(path)
    }

    /// Validates `file` and copies it in; a name already in the library is refused unless
    /// `rename`, which gives the copy a name of its own ("... (2)"). Only a plain file is
    /// read (a named pipe is refused, never waited on).
    pub fn import(&self, file: &Path, rename: bool) -> Result<PathBuf, LibraryError> {
        let bytes = store::read_plain(file, true).map_err(io_err(file))?;
        let text = String::from_utf8(bytes).map_err(|_| LibraryError::Unreadable {
            path: file.to_path_buf(),
            error: "not UTF-8 text".into(),
        })?;
        let mut supply =
            Supply::from_toml_str(&text).map_err(|e: SupplyError| LibraryError::Unreadable {
                path: file.to_path_buf(),
                error: e.to_string(),
            })?;
        // The name check and the write under one lock, so two imports cannot both pass it.
        let _lock = self.lock()?;
        let names: Vec<String> = self
            .load()?
            .iter()
            .filter_map(|e| e.supply().map(|s| s.name.to_lowercase()))
            .collect();
        if names.contains(&supply.name.to_lowercase()) {
            if !rename {
                return Err(LibraryError::Duplicate(supply.name));
            }
            let base = supply.name.clone();
            let fresh = (2..)
                .map(|n| format!("{base} ({n})"))
                .find(|n| !names.contains(&n.to_lowercase()))
                .expect("a free name");
            let old_text = supply.to_toml_string();
            supply.name = fresh;
            let merged = merge::merge(&text, &old_text, &supply.to_toml_string())
                .map_err(|e| LibraryError::Merge(e.to_string()))?;
            return self.add_locked(&supply, Some(&merged));
        }
        self.add_locked(&supply, Some(&text))
    }
}

/// Writes `new` into `text` (the file as it is on disk, read as `old`) keeping its comments,
/// checks it reads back as `new`, and saves it; the caller holds the lock.
fn write_merged(
    file: &Path,
    text: &str,
    old: &Supply,
    new: &Supply,
    hook: &dyn Fn(store::Step) -> io::Result<()>,
) -> Result<Entry, LibraryError> {
    let merged = merge::merge(text, &old.to_toml_string(), &new.to_toml_string())
        .map_err(|e| LibraryError::Merge(e.to_string()))?;
    // What is written must read back as what was meant.
    let back = match Supply::from_toml_str(&merged) {
        Ok(back) if back == *new => back,
        _ => {
            return Err(LibraryError::Merge(format!(
                "{}: the merged file would not read back as the edited supply; nothing was written",
                file.display()
            )));
        }
    };
    store::write_atomic_with(file, merged.as_bytes(), hook).map_err(write_err(file))?;
    Ok(Entry {
        file: file.to_path_buf(),
        state: EntryState::Ok {
            supply: Box::new(back),
            fingerprint: store::fingerprint(merged.as_bytes()),
            text: merged,
        },
    })
}
