//! `yawdyn completions SHELL` and `yawdyn manpage`: shell completion scripts
//! and the manual page, generated from the command-line definition itself
//! (`clap_complete`, `clap_mangen`), so they never fall out of date.

use std::io::Write;

use clap::CommandFactory;

use super::{Cli, Outcome};

/// Arguments of `yawdyn completions`.
#[derive(Debug, clap::Args)]
#[command(after_help = "Install, e.g.:\n  \
bash: yawdyn completions bash > ~/.local/share/bash-completion/completions/yawdyn\n  \
zsh:  yawdyn completions zsh > ~/.zfunc/_yawdyn   (with fpath+=(~/.zfunc) before compinit)\n  \
fish: yawdyn completions fish > ~/.config/fish/completions/yawdyn.fish")]
pub struct CompletionsArgs {
    /// Shell to complete for.
    shell: clap_complete::Shell,
}

/// Arguments of `yawdyn manpage`.
#[derive(Debug, clap::Args)]
#[command(
    after_help = "Read it with `yawdyn manpage | man -l -`, or install it: \
yawdyn manpage > ~/.local/share/man/man1/yawdyn.1"
)]
pub struct ManpageArgs {}

/// Prints the completion script for one shell on stdout.
pub fn run_completions(args: CompletionsArgs) -> anyhow::Result<Outcome> {
    let mut command = Cli::command();
    let mut script = Vec::new();
    clap_complete::generate(args.shell, &mut command, "yawdyn", &mut script);
    super::stdout::write_bytes(&script);
    Ok(Outcome::Success)
}

/// Prints the manual page (roff, section 1) on stdout: one page, with a
/// section per subcommand (synopsis, description, options).
pub fn run_manpage(_args: ManpageArgs) -> anyhow::Result<Outcome> {
    let command = Cli::command();
    let mut page = Vec::new();
    let man = clap_mangen::Man::new(command.clone());
    man.render_title(&mut page)?;
    man.render_name_section(&mut page)?;
    man.render_synopsis_section(&mut page)?;
    man.render_description_section(&mut page)?;
    man.render_options_section(&mut page)?;
    for sub in command.get_subcommands().filter(|s| !s.is_hide_set()) {
        write_subcommand(&mut page, sub)?;
    }
    man.render_extra_section(&mut page)?;
    man.render_version_section(&mut page)?;
    // clap_mangen heads the after-help text "EXTRA"; "NOTES" is the man-page custom.
    let page = String::from_utf8_lossy(&page).replace("EXTRA\n", "NOTES\n");
    super::stdout::write_bytes(page.as_bytes());
    Ok(Outcome::Success)
}

/// One `COMMAND yawdyn NAME` section: synopsis, description and options.
fn write_subcommand(page: &mut Vec<u8>, sub: &clap::Command) -> std::io::Result<()> {
    let name = sub.get_name();
    writeln!(page, ".SH \"COMMAND: yawdyn {name}\"")?;
    let man = clap_mangen::Man::new(sub.clone().name(format!("yawdyn {name}")));
    // Each render_* writes its own .SH heading; demote them to sub-headings.
    let mut part = Vec::new();
    man.render_synopsis_section(&mut part)?;
    man.render_description_section(&mut part)?;
    man.render_options_section(&mut part)?;
    if sub.get_after_help().is_some() || sub.get_after_long_help().is_some() {
        man.render_extra_section(&mut part)?;
    }
    let text = String::from_utf8_lossy(&part).replace(".SH ", ".SS ");
    page.extend_from_slice(text.as_bytes());
    Ok(())
}
