//! What the shell needs: completion scripts (clap_complete) and the manual page (clap_mangen),
//! both drawn from the argument definitions in [`super::args`].

use super::args::Cli;
use clap::CommandFactory;
use clap_complete::Shell;

/// The completion script for `shell`. Made in memory first: clap_complete panics on a failed
/// write, and a failed write to stdout must be an exit status, not a panic.
pub fn completions(shell: Shell) -> Vec<u8> {
    let mut script = Vec::new();
    clap_complete::generate(shell, &mut Cli::command(), "railcheck", &mut script);
    script
}

/// The manual page, roff for man(1) (section 1): one page with every command, its synopsis
/// and options under COMMANDS, rather than pages per command that no install step puts in
/// place. The global options are listed once, under OPTIONS.
pub fn manpage() -> std::io::Result<Vec<u8>> {
    let mut root = Cli::command();
    root.build();
    let man = clap_mangen::Man::new(root.clone());
    let mut body = Vec::new();
    man.render_title(&mut body)?;
    man.render_name_section(&mut body)?;
    man.render_synopsis_section(&mut body)?;
    man.render_description_section(&mut body)?;
    man.render_options_section(&mut body)?;
    body.extend_from_slice(b".SH COMMANDS\n");
    let globals: Vec<String> = root
        .get_arguments()
        .filter(|a| a.is_global_set())
        .map(|a| a.get_id().to_string())
        .collect();
    // clap's own `help` command is left to `--help`.
    for sub in root.get_subcommands().filter(|s| s.get_name() != "help") {
        let mut sub = sub.clone();
        for id in &globals {
            if sub.get_arguments().any(|a| a.get_id() == id) {
                sub = sub.mut_arg(id, |a| a.hide(true));
            }
        }
        let sub_man = clap_mangen::Man::new(sub.clone());
        body.extend_from_slice(format!(".SS \"railcheck {}\"\n", sub.get_name()).as_bytes());
        let mut part = Vec::new();
        sub_man.render_description_section(&mut part)?;
        sub_man.render_synopsis_section(&mut part)?;
        sub_man.render_options_section(&mut part)?;
        body.extend(
            String::from_utf8_lossy(&part)
                .lines()
                .map(|l| if l.starts_with(".SH ") { ".PP" } else { l })
                .flat_map(|l| [l, "\n"])
                .flat_map(str::bytes),
        );
    }
    // The help's closing text in two sections of the page's own, rather than one "EXTRA".
    body.extend_from_slice(
        b".SH \"EXIT STATUS\"\n0 success; 1 a rating check failed (report); 2 bad input or I/O \
          trouble.\n.SH CAUTION\nMains and charged capacitors can kill: verify with a meter \
          before touching; follow local codes and licensed practice.\n",
    );
    man.render_version_section(&mut body)?;
    // Each rendering starts with the same string definitions: keep the first only.
    let mut page = String::new();
    let mut seen = std::collections::HashSet::new();
    for line in String::from_utf8_lossy(&body).lines() {
        let definition = line.starts_with(".ie \\n(.g .ds Aq") || line.starts_with(".el .ds Aq");
        if !definition || seen.insert(line.to_string()) {
            page.push_str(line);
            page.push('\n');
        }
    }
    Ok(page.into_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_argument_definitions_hold_together() {
        // clap's own consistency check of every option, group and conflict.
        Cli::command().debug_assert();
    }
}
