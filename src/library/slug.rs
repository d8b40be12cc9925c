//! File names from supply names: plain, portable, and never a path outside the library.

/// Names Windows reserves for devices; a file called `con.toml` cannot be opened there.
const RESERVED: [&str; 22] = [
    "con", "prn", "aux", "nul", "com1", "com2", "com3", "com4", "com5", "com6", "com7", "com8",
    "com9", "lpt1", "lpt2", "lpt3", "lpt4", "lpt5", "lpt6", "lpt7", "lpt8", "lpt9",
];

/// Longest slug kept, in characters, so a file name stays well inside every file system's
/// limit with its suffix.
pub const MAX_LEN: usize = 60;

/// A file stem for `name`: lowercase ASCII letters, digits and single hyphens; no dots, no
/// slashes, never empty, never a reserved device name.
pub fn slug(name: &str) -> String {
    let mut out = String::new();
    for c in name.chars() {
        let c = c.to_ascii_lowercase();
        if c.is_ascii_alphanumeric() {
            out.push(c);
        } else if !out.ends_with('-') && !out.is_empty() {
            out.push('-');
        }
        if out.len() >= MAX_LEN {
            break;
        }
    }
    let mut out = out.trim_matches('-').to_string();
    if out.is_empty() {
        out = "supply".into();
    }
    if RESERVED.contains(&out.as_str()) {
        out.push_str("-supply");
    }
    out
}

/// The first of `stem.toml`, `stem-2.toml`, ... for which `taken` says no.
pub fn unique(stem: &str, taken: impl Fn(&str) -> bool) -> String {
    let first = format!("{stem}.toml");
    if !taken(&first) {
        return first;
    }
    (2..)
        .map(|n| format!("{stem}-{n}.toml"))
        .find(|f| !taken(f))
        .expect("some suffix is free")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hostile_names_make_plain_stems() {
        assert_eq!(slug("Pump-house 2, relay rail"), "pump-house-2-relay-rail");
        assert_eq!(slug("../../x"), "x");
        assert_eq!(slug("a/b"), "a-b");
        assert_eq!(slug("CON"), "con-supply");
        assert_eq!(slug(""), "supply");
        assert_eq!(slug("..."), "supply");
        assert_eq!(slug("Ünïcödé µF"), "n-c-d-f");
        let long = "x".repeat(500);
        assert_eq!(slug(&long).len(), MAX_LEN);
        for s in [
            "../../x",
            "a/b",
            "CON",
            "",
            &long,
            "C:\\Windows",
            "/etc/passwd",
            "nul.txt",
        ] {
            let stem = slug(s);
            assert!(!stem.contains(['/', '\\', '.', ':']), "{s:?} -> {stem:?}");
            assert!(!stem.is_empty());
        }
    }

    #[test]
    fn unique_adds_a_number() {
        let taken = ["a.toml", "a-2.toml"];
        assert_eq!(unique("a", |f| taken.contains(&f)), "a-3.toml");
        assert_eq!(unique("b", |f| taken.contains(&f)), "b.toml");
    }
}
