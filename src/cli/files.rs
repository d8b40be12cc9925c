//! The files and the library a command works on: a supply named on the command line (a file,
//! or a name in the library), the library folder, and the checks before a write.

use crate::library::{EntryState, Library};
use crate::supply::Supply;
use anyhow::{Context, Result, bail};
use std::path::{Path, PathBuf};

/// The library folder the command line works on: --library, RAILCHECK_LIBRARY, or the
/// default.
pub fn library_dir(cli_dir: &Option<PathBuf>) -> Result<PathBuf> {
    Ok(match (cli_dir, std::env::var_os("RAILCHECK_LIBRARY")) {
        (Some(d), _) => d.clone(),
        (None, Some(d)) if !d.is_empty() => PathBuf::from(d),
        _ => Library::default_dir().context("no data folder on this system: give --library DIR")?,
    })
}

/// The library the command line works on, opened (created on first use).
pub fn library(cli_dir: &Option<PathBuf>, no_demo: bool) -> Result<Library> {
    Ok(Library::open(&library_dir(cli_dir)?, !no_demo)?)
}

/// True if `path` names an existing entry that is not a folder: a file to read (or to refuse
/// with the reason it is not a plain file), not a name to look up.
fn names_a_file(path: &Path) -> bool {
    std::fs::symlink_metadata(path).is_ok_and(|m| !m.is_dir())
}

/// A supply named on the command line: an existing file, or a name in the library.
pub fn resolve(arg: &str, cli_dir: &Option<PathBuf>, no_demo: bool) -> Result<(Supply, String)> {
    let path = Path::new(arg);
    if names_a_file(path) {
        return Ok((load(path)?, path.display().to_string()));
    }
    // Something written as a path is a file that is not there, not a name to look up.
    if arg.contains(['/', '\\']) || arg.ends_with(".toml") {
        bail!("{arg}: no such supply file");
    }
    let lib = library(cli_dir, no_demo)?;
    let entry = lib.find(arg)?;
    match entry.state {
        EntryState::Ok { supply, .. } => Ok((*supply, entry.file.display().to_string())),
        EntryState::Unreadable { error } => bail!("{}: {error}", entry.file.display()),
    }
}

/// Reads a plain file named on the command line (never waiting on a named pipe).
fn read_text(path: &Path) -> Result<String> {
    let bytes = crate::library::store::read_plain(path, true)
        .map_err(|e| anyhow::anyhow!("{}: cannot read the file: {e}", path.display()))?;
    String::from_utf8(bytes).map_err(|_| anyhow::anyhow!("{}: not UTF-8 text", path.display()))
}

fn load(path: &Path) -> Result<Supply> {
    let text = read_text(path)?;
    Supply::from_toml_str(&text).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
}

/// The text of a supply's file as it is, for `export`: a file named, or a name in the library.
pub fn export_text(name: &str, cli_dir: &Option<PathBuf>, no_demo: bool) -> Result<String> {
    let path = Path::new(name);
    if names_a_file(path) {
        return read_text(path);
    }
    let entry = library(cli_dir, no_demo)?.find(name)?;
    match entry.state {
        EntryState::Ok { text, .. } => Ok(text),
        EntryState::Unreadable { error } => bail!("{}: {error}", entry.file.display()),
    }
}

/// `export -o FILE` never replaces a file unasked and never writes into the library folder
/// (where it would overwrite, or shadow, a supply).
pub fn check_export_target(out: &Path, force: bool, cli_dir: &Option<PathBuf>) -> Result<()> {
    let parent = out
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let parent = std::fs::canonicalize(parent)
        .map_err(|e| anyhow::anyhow!("{}: cannot write there: {e}", out.display()))?;
    if let Ok(lib) = std::fs::canonicalize(library_dir(cli_dir)?)
        && parent == lib
    {
        bail!(
            "{}: is in the library folder, where a file would overwrite or shadow a supply; \
             nothing was written (export elsewhere, or use `railcheck import`)",
            out.display()
        );
    }
    check_replace(out, force)
}

/// A file the command is about to write over: never a symbolic link or a folder, and an
/// existing file only with `--force` (the writer keeps the old one as .bak).
pub fn check_replace(out: &Path, force: bool) -> Result<()> {
    if let Ok(meta) = std::fs::symlink_metadata(out) {
        if meta.file_type().is_symlink() {
            bail!(
                "{}: is a symbolic link; railcheck does not replace a link with a file; nothing \
                 was written (name its target)",
                out.display()
            );
        }
        if !meta.is_file() {
            bail!(
                "{}: exists and is not a file; nothing was written",
                out.display()
            );
        }
        if !force {
            bail!(
                "{}: already exists; nothing was written (give --force to replace it, keeping \
                 the old one as .bak)",
                out.display()
            );
        }
    }
    Ok(())
}

/// The library holding `file`, or a refusal naming `what` needs it.
pub fn library_holding(
    file: &str,
    what: &str,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<Library> {
    let lib = library(cli_dir, no_demo)?;
    let in_library = Path::new(file)
        .parent()
        .zip(std::fs::canonicalize(&lib.dir).ok())
        .and_then(|(p, lib_dir)| {
            let p = if p.as_os_str().is_empty() {
                Path::new(".")
            } else {
                p
            };
            std::fs::canonicalize(p).ok().filter(|p| *p == lib_dir)
        })
        .is_some();
    if !in_library {
        bail!("{what}, and {file} is not in the library (railcheck import it first)");
    }
    Ok(lib)
}
