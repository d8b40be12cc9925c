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

// ---- Issue 9: races, full disks, files that are not files, exports, names ----

/// Runs the binary with `args`, killing it if it has not finished within `bound`: a bound on
/// a hang (a read waiting on a named pipe), not a speed measurement.
fn railcheck_bounded(args: &[&str], bound: std::time::Duration) -> std::process::Output {
    use std::process::Stdio;
    let mut child = Command::new(env!("CARGO_BIN_EXE_railcheck"))
        .args(args)
        .env_remove("RAILCHECK_LIBRARY")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let start = std::time::Instant::now();
    while child.try_wait().unwrap().is_none() {
        if start.elapsed() > bound {
            child.kill().unwrap();
            let _ = child.wait();
            panic!("railcheck {args:?} still running after {bound:?}: it hangs");
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.wait_with_output().unwrap()
}

const HANG_BOUND: std::time::Duration = std::time::Duration::from_secs(30);

/// Two library handles (as two windows or a window and a command would have) each load the
/// supply, add a visit and save it, 200 times over: a save that reports success must be in
/// the file, and one that lost the race must be refused as changed on disk, never lost.
#[test]
fn two_handles_saving_one_supply_200_times_lose_nothing() {
    let dir = temp_dir("race");
    Library::open(&dir, false).unwrap();
    std::fs::write(dir.join("winch.toml"), HAND_EDITED).unwrap();
    let worker = |tag: &'static str| {
        let dir = dir.clone();
        std::thread::spawn(move || {
            let lib = Library::open(&dir, false).unwrap();
            let (mut saved, mut refused) = (Vec::new(), 0usize);
            for i in 0..200 {
                let entry = lib.find("Winch controller").unwrap();
                let mut next = entry.supply().unwrap().clone();
                let mut visit = next.visits[0].clone();
                visit.notes = format!("{tag}-{i}");
                next.visits.push(visit);
                match lib.save(&entry, &next) {
                    Ok(_) => saved.push(format!("{tag}-{i}")),
                    Err(LibraryError::ChangedOnDisk(_)) => refused += 1,
                    Err(e) => panic!("{tag}-{i}: neither saved nor refused as changed: {e}"),
                }
            }
            (saved, refused)
        })
    };
    let (a, b) = (worker("a"), worker("b"));
    let (saved_a, refused_a) = a.join().unwrap();
    let (saved_b, refused_b) = b.join().unwrap();
    let on_disk =
        Supply::from_toml_str(&std::fs::read_to_string(dir.join("winch.toml")).unwrap()).unwrap();
    let notes: Vec<&str> = on_disk.visits.iter().map(|v| v.notes.as_str()).collect();
    for n in saved_a.iter().chain(&saved_b) {
        assert!(
            notes.contains(&n.as_str()),
            "{n} reported saved but not in the file"
        );
    }
    // Nothing else is in the file: the first visit and the saved ones, once each.
    assert_eq!(notes.len(), 1 + saved_a.len() + saved_b.len());
    assert_eq!(saved_a.len() + refused_a, 200);
    assert_eq!(saved_b.len() + refused_b, 200);
    eprintln!(
        "race: a saved {} refused {}, b saved {} refused {}; file has {} visits",
        saved_a.len(),
        refused_a,
        saved_b.len(),
        refused_b,
        notes.len()
    );
}

/// Two shells each recording visits through `diagnose --save` at once (the issue's
/// reproduction): every command that said "recorded" is in the file, none is lost; any
/// refused one says so with exit status 2 and names the supply.
#[test]
fn concurrent_diagnose_saves_from_two_processes_lose_no_visit() {
    let dir = temp_dir("cli-race");
    let d = dir.display().to_string();
    let name = "Pump-house 2, relay rail";
    let count = |d: &str| {
        let out = railcheck(&["--library", d, "log", name, "--json"]);
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        v["visits"].as_array().unwrap().len()
    };
    let before = count(&d);
    let shell = |tag: u32| {
        let d = d.clone();
        std::thread::spawn(move || {
            let (mut ok, mut refused) = (Vec::new(), 0);
            for i in 0..20 {
                let dc = format!("2{tag}.{i:02}");
                let out = railcheck(&["--library", &d, "diagnose", name, "--dc", &dc, "--save"]);
                let stdout = String::from_utf8_lossy(&out.stdout);
                let stderr = String::from_utf8_lossy(&out.stderr);
                if out.status.success() {
                    assert!(stdout.contains("recorded as a visit"), "{stdout}");
                    ok.push(dc);
                } else {
                    assert_eq!(out.status.code(), Some(2), "{stderr}");
                    assert!(
                        stderr.contains(name) && stderr.contains("nothing was written"),
                        "{stderr}"
                    );
                    refused += 1;
                }
            }
            (ok, refused)
        })
    };
    let (a, b) = (shell(5), shell(6));
    let (ok_a, refused_a) = a.join().unwrap();
    let (ok_b, refused_b) = b.join().unwrap();
    let text = std::fs::read_to_string(dir.join("pump-house-2-relay-rail.toml")).unwrap();
    let file = Supply::from_toml_str(&text).unwrap();
    let dcs: Vec<f64> = file.visits.iter().filter_map(|v| v.readings.dc_v).collect();
    for dc in ok_a.iter().chain(&ok_b) {
        let x: f64 = dc.parse().unwrap();
        assert!(
            dcs.contains(&x),
            "dc {dc} reported recorded but not in the file"
        );
    }
    assert_eq!(file.visits.len(), before + ok_a.len() + ok_b.len());
    eprintln!(
        "cli race: {} recorded, {} refused; {} visits before, {} after",
        ok_a.len() + ok_b.len(),
        refused_a + refused_b,
        before,
        file.visits.len()
    );
}

/// Only the hidden files railcheck itself may leave in the folder.
fn names_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n != ".lock")
        .collect();
    v.sort();
    v
}

/// A failure injected at each step of a save, as a full disk (ENOSPC) would give it: before
/// the rename, the old file and the old backup are byte for byte as they were, nothing is
/// left behind, and the message says nothing was written (with the OS error once). After the
/// rename (backup rename, folder sync) the save has happened: the new file is whole and the
/// old version is whole beside it.
#[test]
fn a_failure_at_each_step_of_a_save_keeps_the_old_file_and_the_old_backup() {
    use std::sync::Mutex;
    const OLDER: &str = "# the backup of an older version\nformat = 1\n";
    for step in store::Step::ALL {
        let lib = library_with("steps", &[("winch.toml", HAND_EDITED)]);
        let file = lib.dir.join("winch.toml");
        let bak = store::backup_path(&file);
        std::fs::write(&bak, OLDER).unwrap();
        let entry = lib.find("Winch controller").unwrap();
        let mut changed = entry.supply().unwrap().clone();
        changed.filter.uf = Some(3300.0);
        let seen = Mutex::new(Vec::new());
        let result = lib.save_with(&entry, &changed, &|s| {
            seen.lock().unwrap().push(s);
            if s == step {
                Err(std::io::Error::from_raw_os_error(28))
            } else {
                Ok(())
            }
        });
        assert!(seen.lock().unwrap().contains(&step), "{step:?} never ran");
        let now = std::fs::read_to_string(&file).unwrap();
        let backup = std::fs::read_to_string(&bak).unwrap();
        let before_rename = matches!(
            step,
            store::Step::WriteTemp
                | store::Step::SyncTemp
                | store::Step::Backup
                | store::Step::Rename
        );
        if before_rename {
            let err = result.unwrap_err();
            // Printed as main does, with the error's chain.
            let shown = format!("{:#}", anyhow::Error::from(err));
            assert!(shown.contains("nothing was written"), "{step:?}: {shown}");
            assert_eq!(shown.matches("os error 28").count(), 1, "{step:?}: {shown}");
            assert_eq!(now, HAND_EDITED, "{step:?}: the old file changed");
            assert_eq!(backup, OLDER, "{step:?}: the old backup changed");
            assert_eq!(
                names_in(&lib.dir),
                ["winch.toml", "winch.toml.bak"],
                "{step:?}"
            );
        } else {
            result.unwrap();
            assert!(now.contains("uf = 3300.0"), "{step:?}");
            assert_eq!(Supply::from_toml_str(&now).unwrap(), changed);
            if step == store::Step::BackupRename {
                // The old backup stays, and the version just replaced is kept, hidden.
                assert_eq!(backup, OLDER);
                let kept: Vec<String> = names_in(&lib.dir)
                    .into_iter()
                    .filter(|n| n.contains("bak-tmp"))
                    .collect();
                assert_eq!(kept.len(), 1, "{:?}", names_in(&lib.dir));
                let old = std::fs::read_to_string(lib.dir.join(&kept[0])).unwrap();
                assert_eq!(old, HAND_EDITED);
            } else {
                assert_eq!(backup, HAND_EDITED, "{step:?}: the old file is the backup");
            }
            // Either way only plain supplies are listed.
            assert_eq!(lib.load().unwrap().len(), 1);
        }
    }
}

/// A named pipe, a folder, a dangling link and a link to a supply outside the library, each
/// named `*.toml`: listed with the reason, none read, nothing hangs; import of a pipe is
/// refused at once.
#[test]
fn entries_that_are_not_plain_files_are_listed_with_a_reason_and_never_read() {
    let dir = temp_dir("not-files");
    Library::open(&dir, false).unwrap();
    std::fs::write(dir.join("good.toml"), HAND_EDITED).unwrap();
    let outside = temp_dir("not-files-outside");
    std::fs::create_dir_all(&outside).unwrap();
    let other = HAND_EDITED.replace("Winch controller", "Outside unit");
    std::fs::write(outside.join("outside.toml"), &other).unwrap();
    std::fs::create_dir(dir.join("folder.toml")).unwrap();
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(outside.join("outside.toml"), dir.join("link.toml")).unwrap();
        std::os::unix::fs::symlink(dir.join("gone.toml"), dir.join("dangling.toml")).unwrap();
        let ok = Command::new("mkfifo")
            .arg(dir.join("pipe.toml"))
            .status()
            .unwrap();
        assert!(ok.success());
        let ok = Command::new("mkfifo")
            .arg(outside.join("x.toml"))
            .status()
            .unwrap();
        assert!(ok.success());
    }
    let d = dir.display().to_string();
    let out = railcheck_bounded(&["--library", &d, "list", "--json"], HANG_BOUND);
    assert!(out.status.success());
    let lines: Vec<serde_json::Value> = String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    let reason = |file: &str| -> String {
        let l = lines
            .iter()
            .find(|l| l["file"].as_str().unwrap().ends_with(file))
            .unwrap_or_else(|| panic!("{file} not listed: {lines:?}"));
        assert_eq!(l["status"], "unreadable", "{file} was read: {l}");
        l["error"].as_str().unwrap().to_string()
    };
    assert!(reason("folder.toml").contains("folder"));
    #[cfg(unix)]
    {
        assert!(reason("pipe.toml").contains("named pipe"));
        assert!(reason("dangling.toml").contains("does not exist"));
        let link = reason("link.toml");
        assert!(
            link.contains("symbolic link") && link.contains("outside.toml"),
            "{link}"
        );
        assert!(!lines.iter().any(|l| l["name"] == "Outside unit"));
    }
    assert_eq!(lines.iter().filter(|l| l["status"] == "ok").count(), 1);
    // The text list says the same.
    let out = railcheck_bounded(&["--library", &d, "list"], HANG_BOUND);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("folder.toml"), "{text}");
    #[cfg(unix)]
    {
        // Importing a pipe, or naming one in the library, answers at once with the reason.
        let pipe = outside.join("x.toml").display().to_string();
        let out = railcheck_bounded(&["--library", &d, "import", &pipe], HANG_BOUND);
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains("named pipe"));
        let out = railcheck_bounded(&["--library", &d, "report", &pipe], HANG_BOUND);
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains("named pipe"));
        let out = railcheck_bounded(&["--library", &d, "report", "pipe.toml"], HANG_BOUND);
        assert_eq!(out.status.code(), Some(2));
    }
}

/// Saving through a symbolic link is refused with the reason (documented in README): the
/// link stays a link and its target is untouched.
#[cfg(unix)]
#[test]
fn saving_through_a_symbolic_link_is_refused_and_the_link_kept() {
    let dir = temp_dir("symlink-save");
    let d = dir.display().to_string();
    railcheck(&["--library", &d, "list"]);
    let real = dir.join("pump-house-2-relay-rail.toml");
    let outside = temp_dir("symlink-save-target").with_extension("toml");
    std::fs::copy(&real, &outside).unwrap();
    let before = std::fs::read(&outside).unwrap();
    let link = dir.join("alias.toml");
    std::os::unix::fs::symlink(&outside, &link).unwrap();
    let l = link.display().to_string();
    let out = railcheck(&["--library", &d, "diagnose", &l, "--dc", "26.0", "--save"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("symbolic link"), "{err}");
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert_eq!(std::fs::read(&outside).unwrap(), before);
    // And at the library's own level, for a file opened by its path.
    let lib = Library::open(&dir, false).unwrap();
    let entry = read_entry(&link);
    let s = entry.supply().unwrap().clone();
    let err = lib.save(&entry, &s).unwrap_err().to_string();
    assert!(
        err.contains("symbolic link") && err.contains("nothing was written"),
        "{err}"
    );
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
}

/// `export -o` refuses an existing file unless --force, and never writes into the library.
#[test]
fn export_never_overwrites_unasked_and_never_writes_into_the_library() {
    let dir = temp_dir("export-o");
    let d = dir.display().to_string();
    let name = "Pump-house 2, relay rail";
    railcheck(&["--library", &d, "list"]);
    let victim = dir.join("chlorine-dosing-controller.toml");
    let victim_before = std::fs::read(&victim).unwrap();
    let out = railcheck(&[
        "--library",
        &d,
        "export",
        name,
        "-o",
        &victim.display().to_string(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("library folder"));
    assert_eq!(std::fs::read(&victim).unwrap(), victim_before);
    // A new name in the library folder (also written another way) is refused too.
    let fresh = dir
        .join("..")
        .join(dir.file_name().unwrap())
        .join("copy.toml");
    let before = names_in(&dir);
    for force in [false, true] {
        let f = fresh.display().to_string();
        let mut args = vec!["--library", &d, "export", name, "-o", &f];
        if force {
            args.push("--force");
        }
        let out = railcheck(&args);
        assert_eq!(out.status.code(), Some(2));
    }
    assert_eq!(
        names_in(&dir),
        before,
        "something was written into the library"
    );
    // Outside the library: an existing file is kept unless --force.
    let out_dir = temp_dir("export-o-out");
    std::fs::create_dir_all(&out_dir).unwrap();
    let target = out_dir.join("mine.toml");
    std::fs::write(&target, "my own notes\n").unwrap();
    let t = target.display().to_string();
    let out = railcheck(&["--library", &d, "export", name, "-o", &t]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("exists") && err.contains("--force"), "{err}");
    assert_eq!(std::fs::read_to_string(&target).unwrap(), "my own notes\n");
    let out = railcheck(&["--library", &d, "export", name, "-o", &t, "--force"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let exported = std::fs::read_to_string(&target).unwrap();
    assert_eq!(Supply::from_toml_str(&exported).unwrap().name, name);
    assert_eq!(
        std::fs::read_to_string(store::backup_path(&target)).unwrap(),
        "my own notes\n"
    );
    // A fresh file outside needs no --force.
    let new = out_dir.join("new.toml").display().to_string();
    assert!(
        railcheck(&["--library", &d, "export", name, "-o", &new])
            .status
            .success()
    );
}

/// Two files giving the same supply name are both listed, and a command given that name
/// asks which, naming both files.
#[test]
fn two_supplies_of_one_name_are_both_listed_and_a_name_asks_which() {
    let lib = library_with(
        "same-name",
        &[
            ("winch.toml", HAND_EDITED),
            ("winch-copy.toml", HAND_EDITED),
        ],
    );
    let d = lib.dir.display().to_string();
    let out = railcheck(&["--library", &d, "list", "--json"]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert_eq!(text.matches("\"Winch controller\"").count(), 2, "{text}");
    let out = railcheck(&["--library", &d, "list"]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("winch.toml") && text.contains("winch-copy.toml"),
        "{text}"
    );
    for cmd in ["report", "log", "export"] {
        let out = railcheck(&["--library", &d, cmd, "Winch controller"]);
        assert_eq!(out.status.code(), Some(2), "{cmd}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            err.contains("winch.toml") && err.contains("winch-copy.toml"),
            "{cmd}: {err}"
        );
    }
    // The file, as the message names it, still picks one.
    let copy = lib.dir.join("winch-copy.toml").display().to_string();
    let out = railcheck(&["--library", &d, "log", &copy]);
    assert!(out.status.success());
}

/// An I/O error is printed once, not once per link of the error chain.
#[test]
fn an_io_error_names_the_os_error_once() {
    let file = temp_dir("not-a-dir").with_extension("txt");
    std::fs::write(&file, "x").unwrap();
    let out = railcheck(&["--library", &file.display().to_string(), "list"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(err.matches("os error").count(), 1, "{err}");
}
