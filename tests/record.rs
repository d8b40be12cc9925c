//! `railcheck record`: the service record written for a demo supply with visits, the refusals
//! (an existing file, a date with no visit), and the page as a browser prints it on A4 and US
//! Letter (headless Chromium, then poppler's pdfinfo and pdftotext read the PDF back).

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

/// The demo supply with four visits, the newest (2026-11-30, DC 26.9 V) replacing its
/// capacitor (src/library/demo.rs).
const PUMP: &str = "Pump-house 2, relay rail";
const PUMP_DATES: &str = "2021-03-14, 2023-06-02, 2025-09-19, 2026-11-30";

fn railcheck(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_railcheck"))
        .args(args)
        .output()
        .expect("railcheck runs")
}

/// A fresh folder for one test, under cargo's own temporary folder for integration tests (so
/// what the browser test made can be looked at after a run).
fn fresh(tag: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("record-{tag}"));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// A demo library in `dir/lib` (`list` seeds it on first use).
fn demo_library(dir: &Path) -> String {
    let lib = dir.join("lib").display().to_string();
    let out = railcheck(&["--library", &lib, "list"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    lib
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

#[test]
fn record_writes_the_newest_visit_and_refuses_an_existing_file() {
    let dir = fresh("write");
    let lib = demo_library(&dir);
    let target = dir.join("pump.html");
    let t = target.display().to_string();
    let out = railcheck(&["--library", &lib, "record", PUMP, "-o", &t]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(String::from_utf8_lossy(&out.stdout).contains("written to"));
    let html = std::fs::read_to_string(&target).unwrap();
    for heading in railcheck::record::HEADINGS {
        assert!(html.contains(&format!("<h2>{heading}</h2>")), "{heading}");
    }
    // The newest visit's own facts (demo.rs): its date, technician, reading and part.
    for want in [
        "visit of 2026-11-30",
        "J. Brandt",
        "<td class=\"num\">26.9 V</td>",
        "C3 2200uF 50V 105C",
        "Larchmere Valley Water Co-op, pump house 2",
        "pump-house-2-relay-rail.toml",
    ] {
        assert!(html.contains(want), "{want} not in the page");
    }
    for bad in ["http", "file:", "src=", "url("] {
        assert!(!html.contains(bad), "{bad} in the page");
    }

    // A second write to the same file is refused and leaves it as it was.
    std::fs::write(&target, "kept").unwrap();
    let again = railcheck(&["--library", &lib, "record", PUMP, "-o", &t]);
    assert_eq!(again.status.code(), Some(2));
    assert!(
        stderr(&again).contains("already exists"),
        "{}",
        stderr(&again)
    );
    assert!(stderr(&again).contains("--force"));
    assert_eq!(std::fs::read_to_string(&target).unwrap(), "kept");
    // --force replaces it, keeping the old one beside it.
    let forced = railcheck(&["--library", &lib, "record", PUMP, "-o", &t, "--force"]);
    assert!(forced.status.success(), "{}", stderr(&forced));
    assert!(
        std::fs::read_to_string(&target)
            .unwrap()
            .starts_with("<!DOCTYPE html>")
    );
    assert_eq!(
        std::fs::read_to_string(dir.join("pump.html.bak")).unwrap(),
        "kept"
    );
}

#[test]
fn record_picks_a_visit_by_date_and_refuses_a_date_without_one() {
    let dir = fresh("visit");
    let lib = demo_library(&dir);
    // Without -o the page goes to stdout; --visit picks the 2023 round (demo.rs: R. Okafor,
    // DC 27.9 V).
    let out = railcheck(&["--library", &lib, "record", PUMP, "--visit", "2023-06-02"]);
    assert!(out.status.success(), "{}", stderr(&out));
    let html = String::from_utf8(out.stdout).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert!(html.contains("visit of 2023-06-02"));
    assert!(html.contains("R. Okafor"));
    assert!(html.contains("<td class=\"num\">27.9 V</td>"));
    assert!(html.trim_end().ends_with("</html>"));

    // A date with no visit, and a date not written as one: refused, the dates listed.
    for bad in ["2024-01-01", "yesterday"] {
        let out = railcheck(&["--library", &lib, "record", PUMP, "--visit", bad]);
        assert_eq!(out.status.code(), Some(2), "{bad}");
        let e = stderr(&out);
        assert!(e.contains(bad), "{e}");
        assert!(e.contains(PUMP_DATES), "{e}");
        assert!(out.stdout.is_empty(), "nothing written for {bad}");
    }
    let out = railcheck(&["--library", &lib, "record", PUMP, "--visit", "yesterday"]);
    assert!(stderr(&out).contains("YYYY-MM-DD"));

    // A supply without visits has no record to write.
    let no_visits = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/intercom-preamp.toml");
    let out = railcheck(&["record", &no_visits.display().to_string()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("has no visits"), "{}", stderr(&out));
}

/// The first of `names` found on PATH.
fn on_path(names: &[&str]) -> Option<PathBuf> {
    let path = std::env::var_os("PATH")?;
    for dir in std::env::split_paths(&path) {
        for n in names {
            let p = dir.join(n);
            if p.is_file() {
                return Some(p);
            }
        }
    }
    None
}

/// Runs `cmd`, killing it after `limit` (a browser that hangs must not hang the tests).
fn run_with_limit(mut cmd: Command, limit: Duration) -> Output {
    let mut child = cmd
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the tool starts");
    let start = Instant::now();
    loop {
        if child.try_wait().unwrap().is_some() {
            return child.wait_with_output().unwrap();
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let out = child.wait_with_output().unwrap();
            panic!(
                "{cmd:?} took over {limit:?}: {}",
                String::from_utf8_lossy(&out.stderr)
            );
        }
        std::thread::sleep(Duration::from_millis(100));
    }
}

/// Headless Chromium with a profile of its own in `dir` and its background traffic off: the
/// page names nothing outside itself, and the test needs no network.
fn chromium(browser: &Path, dir: &Path) -> Command {
    let mut c = Command::new(browser);
    c.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--no-first-run",
        "--no-default-browser-check",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-dev-shm-usage",
        "--hide-scrollbars",
    ]);
    c.arg(format!("--user-data-dir={}", dir.join("profile").display()));
    c
}

fn file_url(path: &Path) -> String {
    format!("file://{}", path.canonicalize().unwrap().display())
}

/// `text` with every run of white space one space (pdftotext breaks lines where the page
/// does).
fn squeeze(text: &str) -> String {
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// The value of attribute `name` in one tag of pdftotext's -bbox output.
fn attr(tag: &str, name: &str) -> f64 {
    let at = tag.find(&format!("{name}=\"")).unwrap() + name.len() + 2;
    tag[at..].split('"').next().unwrap().parse().unwrap()
}

/// The page printed by a browser on A4 and on US Letter: a sane page count, the paper asked
/// for, every heading and the key values in the PDF's text, and no word outside the margins
/// (nothing cut); and a screenshot at 1000 px wide. Runs only where Chromium and poppler's
/// tools are installed (`apt-get install chromium poppler-utils`); says so and passes
/// elsewhere, since `cargo test` must not depend on them.
#[test]
fn a_browser_prints_the_record_whole_on_a4_and_letter() {
    let browser = on_path(&["chromium", "chromium-browser"]);
    let (pdfinfo, pdftotext) = (on_path(&["pdfinfo"]), on_path(&["pdftotext"]));
    let (Some(browser), Some(pdfinfo), Some(pdftotext)) = (browser, pdfinfo, pdftotext) else {
        eprintln!(
            "skipped: the browser test needs chromium (or chromium-browser), pdfinfo and \
             pdftotext on PATH (apt-get install chromium poppler-utils); not all were found"
        );
        return;
    };
    let dir = fresh("browser");
    let lib = demo_library(&dir);
    let page = dir.join("record.html");
    let out = railcheck(&[
        "--library",
        &lib,
        "record",
        PUMP,
        "-o",
        &page.display().to_string(),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let html = std::fs::read_to_string(&page).unwrap();

    // Paper sizes in points (ISO 216 A4 210 x 297 mm; US Letter 8.5 x 11 in, 72 pt an inch),
    // and the 15 mm margin (42.5 pt) the page's @page asks for.
    for (paper, css, width_pt, height_pt) in [
        ("A4", "A4", 595.28, 841.89),
        ("Letter", "letter", 612.0, 792.0),
    ] {
        let variant = dir.join(format!("record-{paper}.html"));
        let sized = html.replacen(
            "</head>",
            &format!("<style>@page {{ size: {css} }}</style></head>"),
            1,
        );
        std::fs::write(&variant, sized).unwrap();
        let pdf = dir.join(format!("record-{paper}.pdf"));
        let mut c = chromium(&browser, &dir);
        c.arg("--no-pdf-header-footer")
            .arg(format!("--print-to-pdf={}", pdf.display()))
            .arg(file_url(&variant));
        let out = run_with_limit(c, Duration::from_secs(120));
        assert!(pdf.is_file(), "{paper}: no PDF: {}", stderr(&out));

        let info = run_with_limit(
            {
                let mut c = Command::new(&pdfinfo);
                c.arg(&pdf);
                c
            },
            Duration::from_secs(30),
        );
        let info = String::from_utf8_lossy(&info.stdout).into_owned();
        let field = |name: &str| {
            info.lines()
                .find_map(|l| l.strip_prefix(name))
                .map(|v| v.trim().to_string())
                .unwrap_or_else(|| panic!("{paper}: no {name} in {info}"))
        };
        let pages: usize = field("Pages:").parse().unwrap();
        let size = field("Page size:");
        let dims: Vec<f64> = size
            .split_whitespace()
            .filter_map(|w| w.parse().ok())
            .collect();
        eprintln!("{paper}: {pages} pages, {size}");
        assert!((1..=4).contains(&pages), "{paper}: {pages} pages");
        assert!(
            (dims[0] - width_pt).abs() < 1.0 && (dims[1] - height_pt).abs() < 1.0,
            "{paper}: page size {size}"
        );

        let txt = dir.join(format!("record-{paper}.txt"));
        run_with_limit(
            {
                let mut c = Command::new(&pdftotext);
                c.arg(&pdf).arg(&txt);
                c
            },
            Duration::from_secs(30),
        );
        let text = squeeze(&std::fs::read_to_string(&txt).unwrap());
        for heading in railcheck::record::HEADINGS {
            assert!(text.contains(heading), "{paper}: no {heading} in the PDF");
        }
        // The key values: the DC reading of the visit (demo.rs), a verdict word, a caution,
        // the signature lines and the footer's deference.
        assert!(text.contains("26.9 V"), "{paper}: the DC reading");
        assert!(
            ["HEALTHY", "SUSPECT", "FAULT"]
                .iter()
                .any(|v| text.contains(&format!("Verdict: {v}"))),
            "{paper}: no verdict word"
        );
        assert!(text.contains("CAUTION:"), "{paper}: no caution");
        assert!(text.contains("Customer's signature"), "{paper}");
        assert!(
            text.contains("defers to local codes and licensed practice"),
            "{paper}: the footer"
        );

        // Nothing cut: every word of every page inside the paper's margins, with a point's
        // slack for the rounding of the boxes.
        let boxes = dir.join(format!("record-{paper}-bbox.html"));
        run_with_limit(
            {
                let mut c = Command::new(&pdftotext);
                c.arg("-bbox").arg(&pdf).arg(&boxes);
                c
            },
            Duration::from_secs(30),
        );
        let bbox = std::fs::read_to_string(&boxes).unwrap();
        let margin = 15.0 / 25.4 * 72.0 - 1.0;
        let mut words = 0;
        for tag in bbox.split("<word ").skip(1) {
            let word = tag
                .split('>')
                .nth(1)
                .unwrap_or("")
                .split('<')
                .next()
                .unwrap_or("");
            let (x0, x1) = (attr(tag, "xMin"), attr(tag, "xMax"));
            let (y0, y1) = (attr(tag, "yMin"), attr(tag, "yMax"));
            assert!(
                x0 >= margin && x1 <= width_pt - margin,
                "{paper}: {word:?} at x {x0:.1}..{x1:.1} is outside the margins"
            );
            assert!(
                y0 >= margin && y1 <= height_pt - margin,
                "{paper}: {word:?} at y {y0:.1}..{y1:.1} is outside the margins"
            );
            words += 1;
        }
        assert!(words > 300, "{paper}: only {words} words");
    }

    // A screenshot as a screen shows the page: a PNG of the window's size.
    let png = dir.join("record.png");
    let mut c = chromium(&browser, &dir);
    c.arg(format!("--screenshot={}", png.display()))
        .arg("--window-size=1000,1400")
        .arg(file_url(&page));
    let out = run_with_limit(c, Duration::from_secs(120));
    let bytes = std::fs::read(&png).unwrap_or_else(|e| panic!("no PNG ({e}): {}", stderr(&out)));
    // The PNG signature and the IHDR's width and height (the PNG specification, section 5).
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    let width = u32::from_be_bytes(bytes[16..20].try_into().unwrap());
    let height = u32::from_be_bytes(bytes[20..24].try_into().unwrap());
    assert_eq!((width, height), (1000, 1400));
    eprintln!("screenshot: {}", png.display());
}
