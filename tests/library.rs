//! The personal library: round trips, comments kept, crash safety by injected failure,
//! concurrent changes refused, unreadable files left alone, hostile names kept inside, and a
//! loader that never panics.

use proptest::prelude::*;
use railcheck::library::{EntryState, Library, LibraryError, read_entry, store};
use railcheck::supply::Supply;
use std::path::{Path, PathBuf};
use std::process::Command;

fn temp_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "railcheck-lib-{tag}-{}-{:?}",
        std::process::id(),
        std::thread::current().id()
    ));
    let _ = std::fs::remove_dir_all(&dir);
    dir
}

const HAND_EDITED: &str = r#"# Bench unit from the boatyard, hand-written
format = 1
name = "Winch controller"
notes = "hand-edited"
my_own_key = "kept"          # railcheck does not know this key

[mains]
vrms = 230        # an integer, as typed
hz = 50.0

[transformer]
ratio = 10.0
secondary_ohms = 1.2   # measured cold

[rectifier]
topology = "bridge"

[filter]
kind = "capacitor"
# the big blue can
uf = 4700.0

[load]
amps = 1.0

[[visit]]
date = 2025-01-02
dc_v = 27.0   # reading
notes = "first"
"#;

fn library_with(tag: &str, files: &[(&str, &str)]) -> Library {
    let dir = temp_dir(tag);
    let lib = Library::open(&dir, false).unwrap();
    for (name, text) in files {
        std::fs::write(dir.join(name), text).unwrap();
    }
    lib
}

#[test]
fn load_save_load_gives_the_same_supply_and_keeps_comments() {
    let lib = library_with("roundtrip", &[("winch.toml", HAND_EDITED)]);
    let entry = lib.find("winch controller").unwrap();
    let supply = entry.supply().unwrap().clone();
    // Saving unchanged writes the same bytes back.
    lib.save(&entry, &supply).unwrap();
    let text = std::fs::read_to_string(&entry.file).unwrap();
    assert_eq!(text, HAND_EDITED);
    // A change: the capacitor and a new visit. Comments, the integer and the unknown key stay.
    let entry = lib.find("Winch controller").unwrap();
    let mut changed = supply.clone();
    changed.filter.uf = Some(3300.0);
    let mut visit = changed.visits[0].clone();
    visit.date = "2026-11-30".parse().unwrap();
    visit.readings.dc_v = Some(26.1);
    visit.notes = "second".into();
    changed.visits.push(visit);
    lib.save(&entry, &changed).unwrap();
    let text = std::fs::read_to_string(&entry.file).unwrap();
    for kept in [
        "# Bench unit from the boatyard",
        "# railcheck does not know this key",
        "my_own_key = \"kept\"",
        "vrms = 230        # an integer, as typed",
        "# measured cold",
        "# the big blue can",
        "dc_v = 27.0   # reading",
    ] {
        assert!(text.contains(kept), "{kept:?} lost:\n{text}");
    }
    assert!(text.contains("uf = 3300.0"));
    let back = Supply::from_toml_str(&text).unwrap();
    assert_eq!(back, changed);
    assert_eq!(back.visits.len(), 2);
    // The previous version is kept as one backup.
    let backup = std::fs::read_to_string(store::backup_path(&entry.file)).unwrap();
    assert_eq!(backup, HAND_EDITED);
}

#[test]
fn a_failure_between_write_and_rename_leaves_the_old_file_whole() {
    let lib = library_with("crash", &[("winch.toml", HAND_EDITED)]);
    let entry = lib.find("Winch controller").unwrap();
    let mut changed = entry.supply().unwrap().clone();
    changed.filter.uf = Some(1.0);
    let err = lib
        .save_with(&entry, &changed, &|step| {
            if step == store::Step::Rename {
                Err(std::io::Error::other(
                    "injected: power cut before the rename",
                ))
            } else {
                Ok(())
            }
        })
        .unwrap_err();
    assert!(err.to_string().contains("injected"), "{err}");
    assert_eq!(std::fs::read_to_string(&entry.file).unwrap(), HAND_EDITED);
    // No temporary file is left behind to be mistaken for a supply.
    let leftovers: Vec<_> = std::fs::read_dir(&lib.dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".tmp-"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[test]
fn a_file_changed_since_loading_is_not_overwritten() {
    let lib = library_with("concurrent", &[("winch.toml", HAND_EDITED)]);
    let entry = lib.find("Winch controller").unwrap();
    // Another process (a second window, a sync tool) writes the file meanwhile.
    let theirs = HAND_EDITED.replace("uf = 4700.0", "uf = 6800.0");
    std::fs::write(&entry.file, &theirs).unwrap();
    let mut mine = entry.supply().unwrap().clone();
    mine.filter.uf = Some(1000.0);
    let err = lib.save(&entry, &mine).unwrap_err();
    assert!(matches!(err, LibraryError::ChangedOnDisk(_)), "{err}");
    assert_eq!(std::fs::read_to_string(&entry.file).unwrap(), theirs);
}

#[test]
fn unreadable_files_are_listed_with_their_error_and_left_byte_for_byte() {
    let bad_value = HAND_EDITED.replace("uf = 4700.0", "uf = -5.0");
    let newer = HAND_EDITED.replace("format = 1", "format = 9");
    let broken: &[(&str, &[u8])] = &[
        ("bad-toml.toml", b"name = \"x\"\n[mains\nvrms = 1\n"),
        ("bad-value.toml", bad_value.as_bytes()),
        ("newer.toml", newer.as_bytes()),
        ("binary.toml", &[0xff, 0xfe, 0x00, 0x41, 0x80]),
    ];
    let dir = temp_dir("unreadable");
    let lib = Library::open(&dir, false).unwrap();
    std::fs::write(dir.join("good.toml"), HAND_EDITED).unwrap();
    for (name, bytes) in broken {
        std::fs::write(dir.join(name), bytes).unwrap();
    }
    let entries = lib.load().unwrap();
    assert_eq!(entries.len(), 5);
    assert_eq!(entries.iter().filter(|e| e.supply().is_some()).count(), 1);
    for e in &entries {
        if let EntryState::Unreadable { error } = &e.state {
            let name = e.file.file_name().unwrap().to_string_lossy();
            match name.as_ref() {
                "bad-toml.toml" => assert!(error.contains("line 2"), "{error}"),
                "bad-value.toml" => assert!(
                    error.contains("filter.uf") && error.contains("-5"),
                    "{error}"
                ),
                "newer.toml" => assert!(error.contains("format") && error.contains('9'), "{error}"),
                "binary.toml" => assert!(error.contains("UTF-8"), "{error}"),
                other => panic!("unexpected {other}"),
            }
            // A save is refused outright.
            let s = Supply::from_toml_str(HAND_EDITED).unwrap();
            assert!(lib.save(e, &s).is_err());
        }
    }
    for (name, bytes) in broken {
        assert_eq!(
            &std::fs::read(dir.join(name)).unwrap(),
            bytes,
            "{name} was touched"
        );
    }
}

#[test]
fn hostile_names_make_files_inside_the_library() {
    let lib = library_with("hostile", &[]);
    let base = Supply::from_toml_str(HAND_EDITED).unwrap();
    let long = "y".repeat(500);
    for name in [
        "../../x",
        "a/b",
        "CON",
        "..",
        "/etc/passwd",
        "C:\\boot",
        long.as_str(),
        "nul",
    ] {
        let mut s = base.clone();
        s.name = name.to_string();
        let path = lib.add(&s, None).unwrap();
        assert_eq!(
            path.parent().unwrap(),
            lib.dir.as_path(),
            "{name:?} -> {}",
            path.display()
        );
        let stem = path.file_stem().unwrap().to_string_lossy();
        assert!(!stem.contains(['/', '\\', '.']), "{stem}");
        assert!(!["con", "nul"].contains(&stem.as_ref()));
        assert_eq!(read_entry(&path).supply().unwrap().name, name);
    }
    // Two supplies of one name get two files.
    let a = lib.add(&base, None).unwrap();
    let b = lib.add(&base, None).unwrap();
    assert_ne!(a, b);
}

#[test]
fn import_refuses_a_duplicate_name_unless_renaming() {
    let lib = library_with("import", &[]);
    let src = temp_dir("import-src");
    std::fs::create_dir_all(&src).unwrap();
    let file = src.join("winch.toml");
    std::fs::write(&file, HAND_EDITED).unwrap();
    lib.import(&file, false).unwrap();
    assert!(matches!(
        lib.import(&file, false),
        Err(LibraryError::Duplicate(_))
    ));
    let renamed = lib.import(&file, true).unwrap();
    let text = std::fs::read_to_string(&renamed).unwrap();
    assert!(text.contains("name = \"Winch controller (2)\""), "{text}");
    assert!(text.contains("# the big blue can"));
    // A file that does not validate is not copied in.
    let bad = src.join("bad.toml");
    std::fs::write(&bad, "format = 1\nname = 3\n").unwrap();
    assert!(lib.import(&bad, false).is_err());
    assert_eq!(lib.files().unwrap().len(), 2);
}

fn railcheck(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_railcheck"))
        .args(args)
        .env_remove("RAILCHECK_LIBRARY")
        .output()
        .unwrap()
}

#[test]
fn first_run_seeds_the_demo_and_a_broken_file_is_reported_and_kept() {
    let dir = temp_dir("cli-seed");
    let d = dir.display().to_string();
    let out = railcheck(&["--library", &d, "list", "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let lines: Vec<serde_json::Value> = String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert!(lines.len() >= 4, "demo seeded");
    for l in &lines {
        for k in ["name", "file", "status", "error", "visits", "last_visit"] {
            assert!(l.get(k).is_some(), "{k}");
        }
        assert_eq!(l["status"], "ok");
    }
    assert!(lines.iter().any(|l| l["visits"].as_u64().unwrap() >= 3));
    let broken = b"format = 1\nname = \"half-typed\"\n[mains]\nvrms = ";
    std::fs::write(dir.join("half-typed.toml"), broken).unwrap();
    let out = railcheck(&["--library", &d, "list", "--json"]);
    let text = String::from_utf8(out.stdout).unwrap();
    let bad: Vec<serde_json::Value> = text
        .lines()
        .map(|l| serde_json::from_str::<serde_json::Value>(l).unwrap())
        .filter(|l| l["status"] == "unreadable")
        .collect();
    assert_eq!(bad.len(), 1);
    assert!(bad[0]["error"].as_str().unwrap().contains("line"));
    assert_eq!(
        text.lines().count(),
        lines.len() + 1,
        "the others still list"
    );
    assert_eq!(std::fs::read(dir.join("half-typed.toml")).unwrap(), broken);
    // --no-demo on a new folder makes an empty library.
    let empty = temp_dir("cli-empty");
    let out = railcheck(&[
        "--library",
        &empty.display().to_string(),
        "--no-demo",
        "list",
        "--json",
    ]);
    assert!(out.status.success());
    assert!(out.stdout.is_empty());
}

#[test]
fn export_then_import_into_another_library_gives_the_same_report() {
    let a = temp_dir("cli-export-a");
    let b = temp_dir("cli-export-b");
    let (da, db) = (a.display().to_string(), b.display().to_string());
    let name = "Pump-house 2, relay rail";
    let file = temp_dir("cli-export-file").with_extension("toml");
    let out = railcheck(&[
        "--library",
        &da,
        "export",
        name,
        "-o",
        &file.display().to_string(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = railcheck(&[
        "--library",
        &db,
        "--no-demo",
        "import",
        &file.display().to_string(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report = |dir: &str| {
        let out = railcheck(&["--library", dir, "report", "--json", name]);
        assert!(out.status.success() || out.status.code() == Some(1));
        let mut v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        v.as_object_mut().unwrap().remove("file");
        v
    };
    assert_eq!(report(&da), report(&db));
    // The log shows the visits newest first.
    let out = railcheck(&["--library", &db, "log", name, "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let dates: Vec<&str> = v["visits"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["date"].as_str().unwrap())
        .collect();
    let mut sorted = dates.clone();
    sorted.sort_by(|x, y| y.cmp(x));
    assert_eq!(dates, sorted);
    assert!(dates.len() >= 3);
}

fn mutate(base: &[u8], edits: &[(usize, u8)]) -> Vec<u8> {
    let mut v = base.to_vec();
    for &(at, byte) in edits {
        if v.is_empty() {
            v.push(byte);
            continue;
        }
        let i = at % (v.len() + 1);
        match byte % 3 {
            0 if i < v.len() => v[i] = byte,
            1 => v.insert(i, byte),
            _ if i < v.len() => {
                v.remove(i);
            }
            _ => v.push(byte),
        }
    }
    v
}

fn load_bytes(bytes: &[u8]) {
    let dir = temp_dir("fuzz");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("f.toml");
    std::fs::write(&path, bytes).unwrap();
    let entry = read_entry(Path::new(&path));
    // Whatever it is, it is either a valid supply or an error message.
    match entry.state {
        EntryState::Ok { supply, .. } => assert!(supply.validate().is_ok()),
        EntryState::Unreadable { error } => assert!(!error.is_empty()),
    }
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(256),
        ..ProptestConfig::default()
    })]

    #[test]
    fn the_loader_never_panics_on_random_bytes(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        load_bytes(&bytes);
    }

    #[test]
    fn the_loader_never_panics_on_mutated_files(edits in prop::collection::vec((any::<usize>(), any::<u8>()), 1..12)) {
        load_bytes(&mutate(HAND_EDITED.as_bytes(), &edits));
    }
}
