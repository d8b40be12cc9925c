//! The personal library of serviced units: one TOML file per supply in a folder, each with its
//! visits. Plain, mergeable files that are never lost, never silently overwritten, and never
//! touched when railcheck cannot read them.

pub mod demo;
pub mod merge;
pub mod slug;
pub mod store;

use crate::supply::{Supply, SupplyError};
use std::fs;
use std::io;
use std::path::{Path, PathBuf};

/// Why a library operation did not happen.
#[derive(Debug, thiserror::Error)]
pub enum LibraryError {
    #[error("{path}: {source}")]
    Io { path: PathBuf, source: io::Error },
    #[error("{path}: {error}")]
    Unreadable { path: PathBuf, error: String },
    #[error(
        "{0}: the file changed on disk since it was loaded (another program or railcheck \
         window?); reload it before saving, nothing was written"
    )]
    ChangedOnDisk(PathBuf),
    #[error("the library already has a supply named {0:?}; import with --rename to keep both")]
    Duplicate(String),
    #[error("no supply named {0:?} in the library {1} (and no such file)")]
    NotFound(String, PathBuf),
    #[error("{0}")]
    Merge(String),
}

fn io_err(path: &Path) -> impl FnOnce(io::Error) -> LibraryError + '_ {
    move |source| LibraryError::Io {
        path: path.to_path_buf(),
        source,
    }
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

/// Reads one supply file, never failing: an unreadable file becomes an `Unreadable` entry.
pub fn read_entry(file: &Path) -> Entry {
    let state = match fs::read(file) {
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
                for (stem, text) in demo::supplies() {
                    let path = dir.join(format!("{stem}.toml"));
                    store::write_atomic(&path, text.as_bytes(), &|| Ok(()))
                        .map_err(io_err(&path))?;
                }
            }
        }
        Ok(lib)
    }

    /// The supply files, sorted by name; hidden files, backups and temporaries are left out.
    pub fn files(&self) -> Result<Vec<PathBuf>, LibraryError> {
        let mut files: Vec<PathBuf> = fs::read_dir(&self.dir)
            .map_err(io_err(&self.dir))?
            .filter_map(|e| e.ok())
            .map(|e| e.path())
            .filter(|p| {
                let name = p
                    .file_name()
                    .map(|n| n.to_string_lossy())
                    .unwrap_or_default();
                !name.starts_with('.') && name.ends_with(".toml") && p.is_file()
            })
            .collect();
        files.sort();
        Ok(files)
    }

    /// Every supply file, read; one bad file never stops the others.
    pub fn load(&self) -> Result<Vec<Entry>, LibraryError> {
        let mut entries: Vec<Entry> = self.files()?.iter().map(|f| read_entry(f)).collect();
        entries.sort_by_key(|e| e.name().to_lowercase());
        Ok(entries)
    }

    /// A supply by its name (case-insensitive) or by a file path.
    pub fn find(&self, name_or_file: &str) -> Result<Entry, LibraryError> {
        let as_path = Path::new(name_or_file);
        if as_path.is_file() {
            return Ok(read_entry(as_path));
        }
        let in_dir = self.dir.join(name_or_file);
        if in_dir.is_file() && in_dir.parent() == Some(self.dir.as_path()) {
            return Ok(read_entry(&in_dir));
        }
        self.load()?
            .into_iter()
            .find(|e| {
                e.supply()
                    .is_some_and(|s| s.name.eq_ignore_ascii_case(name_or_file))
            })
            .ok_or_else(|| LibraryError::NotFound(name_or_file.to_string(), self.dir.clone()))
    }

    /// A new file name for a supply called `name`, inside the folder and not yet taken.
    pub fn new_file_for(&self, name: &str) -> PathBuf {
        let file = slug::unique(&slug::slug(name), |f| self.dir.join(f).exists());
        self.dir.join(file)
    }

    /// Saves `new` over the entry it was loaded as, keeping the file's comments and unknown
    /// keys, refusing if the file changed on disk since; returns the file written.
    pub fn save(&self, entry: &Entry, new: &Supply) -> Result<PathBuf, LibraryError> {
        self.save_with(entry, new, &|| Ok(()))
    }

    /// [`Library::save`] with a hook run between writing and renaming (tests inject failures).
    pub fn save_with(
        &self,
        entry: &Entry,
        new: &Supply,
        before_rename: &dyn Fn() -> io::Result<()>,
    ) -> Result<PathBuf, LibraryError> {
        new.validate().map_err(|e| LibraryError::Unreadable {
            path: entry.file.clone(),
            error: e.to_string(),
        })?;
        let EntryState::Ok {
            supply: old,
            text,
            fingerprint,
        } = &entry.state
        else {
            return Err(LibraryError::Unreadable {
                path: entry.file.clone(),
                error: "an unreadable file is never overwritten".into(),
            });
        };
        let on_disk = fs::read(&entry.file).map_err(io_err(&entry.file))?;
        if store::fingerprint(&on_disk) != *fingerprint {
            return Err(LibraryError::ChangedOnDisk(entry.file.clone()));
        }
        let merged = merge::merge(text, &old.to_toml_string(), &new.to_toml_string())
            .map_err(|e| LibraryError::Merge(e.to_string()))?;
        // What is written must read back as what was meant.
        match Supply::from_toml_str(&merged) {
            Ok(back) if back == *new => {}
            _ => {
                return Err(LibraryError::Merge(format!(
                    "{}: the merged file would not read back as the edited supply; nothing was written",
                    entry.file.display()
                )));
            }
        }
        store::write_atomic(&entry.file, merged.as_bytes(), before_rename)
            .map_err(io_err(&entry.file))?;
        Ok(entry.file.clone())
    }

    /// Adds a supply as a new file (its name made into a unique file name); `text` is the
    /// original file text to keep, when importing.
    pub fn add(&self, supply: &Supply, text: Option<&str>) -> Result<PathBuf, LibraryError> {
        let path = self.new_file_for(&supply.name);
        let body = match text {
            Some(t) => t.to_string(),
            None => supply.to_toml_string(),
        };
        store::write_atomic(&path, body.as_bytes(), &|| Ok(())).map_err(io_err(&path))?;
        Ok(path)
    }

    /// Validates `file` and copies it in; a name already in the library is refused unless
    /// `rename`, which gives the copy a name of its own ("... (2)").
    pub fn import(&self, file: &Path, rename: bool) -> Result<PathBuf, LibraryError> {
        let text = fs::read_to_string(file).map_err(io_err(file))?;
        let mut supply =
            Supply::from_toml_str(&text).map_err(|e: SupplyError| LibraryError::Unreadable {
                path: file.to_path_buf(),
                error: e.to_string(),
            })?;
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
            return self.add(&supply, Some(&merged));
        }
        self.add(&supply, Some(&text))
    }
}
