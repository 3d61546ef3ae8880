//! The command line. Doc comments here are the help text; there is no logic in this module.

use std::path::PathBuf;

use clap::{Parser, Subcommand, ValueEnum};

/// Checks whether the scores a training job claims are supported by its own evaluation
/// evidence, and fails the build when they are not.
///
/// Exit codes: 0 every claim supported (warnings allowed); 1 at least one claim not supported;
/// 2 invalid input (every problem is listed); 3 vetscore could not finish (for example a report
/// could not be written); 101 vetscore crashed (a bug; please report it).
#[derive(Debug, Parser)]
#[command(name = "vetscore", version, max_term_width = 100)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,

    /// When to colour the output: `auto` colours a terminal when NO_COLOR is unset or empty.
    #[arg(long, global = true, value_enum, value_name = "WHEN", default_value_t = Color::Auto)]
    pub color: Color,
}

/// When output is coloured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Color {
    Auto,
    Always,
    Never,
}

// Parsed once per run: the size of the largest variant costs nothing measurable.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Check results manifests against a policy and write the reports.
    Check(Box<CheckArgs>),
    /// Explain a rule: what it checks, how, and the published source of its method.
    Explain {
        /// Rule id, e.g. `holdout_budget`; without it, list every rule.
        rule: Option<String>,
    },
    /// Print the JSON Schema of an input or output format.
    Schema {
        #[arg(value_enum)]
        format: SchemaFormat,
    },
    /// Write a commented starter policy and, with --ci, the CI snippet that runs the check on the
    /// main branch and on every merge request and posts the report as a comment.
    Init {
        /// Where to write the starter policy.
        #[arg(long, value_name = "FILE", default_value = "vetscore-policy.yaml")]
        policy: PathBuf,
        /// Overwrite the policy file (and the snippet file) if they exist.
        #[arg(long)]
        force: bool,
        /// Also write the CI snippet for this CI system.
        #[arg(long, value_enum, value_name = "SYSTEM")]
        ci: Option<CiSystem>,
        /// Where to write the snippet (`-` for standard output, with nothing else on it);
        /// default `.github/workflows/vetscore.yml` or `vetscore.gitlab-ci.yml`.
        #[arg(long, value_name = "FILE", requires = "ci")]
        ci_output: Option<PathBuf>,
    },
    /// Print a shell completion script for SHELL to standard output, e.g.
    /// `vetscore completions bash > ~/.local/share/bash-completion/completions/vetscore`.
    Completions {
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff) to standard output, e.g.
    /// `vetscore man > ~/.local/share/man/man1/vetscore.1`.
    Man,
    /// Rows a test split needs for a margin of error, and looks it can afford.
    Plan(PlanArgs),
    /// Crash on purpose, so tests can check that a crash never exits 0 (hidden from help).
    #[command(hide = true)]
    CrashForTest,
    /// Record holdout evaluations in the ledger, or verify its hash chain.
    Ledger {
        #[command(subcommand)]
        action: LedgerAction,
    },
}

/// Default path of the holdout ledger.
pub const DEFAULT_LEDGER: &str = "vetscore-ledger.jsonl";

#[derive(Debug, Subcommand)]
pub enum LedgerAction {
    /// Append the holdout evaluations in MANIFEST... that the ledger does not record yet.
    Append {
        /// The ledger file (created when missing).
        #[arg(long, value_name = "FILE", default_value = DEFAULT_LEDGER)]
        ledger: PathBuf,
        /// Results manifests: paths or glob patterns.
        #[arg(required = true, value_name = "MANIFEST")]
        manifests: Vec<String>,
        /// Directory the files named in manifests must lie in (default: the working directory).
        #[arg(long, value_name = "DIR")]
        root: Option<PathBuf>,
    },
    /// Check the hash chain and name the first broken entry. With --ledger-head: no entry up to
    /// that head was changed, removed or reordered, and none was cut off. Without it, only that
    /// the chain is whole: a ledger cut short at the end, or rewritten with its chain
    /// recomputed, is still a whole chain.
    Verify {
        /// The ledger file.
        #[arg(long, value_name = "FILE", default_value = DEFAULT_LEDGER)]
        ledger: PathBuf,
        /// The trusted head the ledger must extend, as COUNT:HASH (what `vetscore ledger head`
        /// prints for the base branch's ledger).
        #[arg(long, value_name = "COUNT:HASH", value_parser = crate::ledger::Head::parse)]
        ledger_head: Option<crate::ledger::Head>,
    },
    /// Print the ledger's head as COUNT:HASH (entry count and last hash) after verifying its
    /// chain; a missing ledger file is an empty ledger. Run it on the base branch's ledger and
    /// pass the value to `check --ledger-head`.
    Head {
        /// The ledger file.
        #[arg(long, value_name = "FILE", default_value = DEFAULT_LEDGER)]
        ledger: PathBuf,
    },
}

#[derive(Debug, clap::Args)]
pub struct PlanArgs {
    /// Rows in the test split: report its margin of error (and, with --margin, the looks it
    /// can afford).
    #[arg(long, value_name = "N")]
    pub rows: Option<u64>,
    /// Margin of error wanted, e.g. 0.02: report the rows needed.
    #[arg(long, value_name = "E")]
    pub margin: Option<f64>,
    /// Planned looks at the test split, for the Bonferroni and Hoeffding figures.
    #[arg(long, value_name = "K", default_value_t = 1)]
    pub looks: u64,
    /// Confidence level.
    #[arg(long, value_name = "C", default_value_t = 0.95)]
    pub confidence: f64,
    /// Print JSON instead of text.
    #[arg(long)]
    pub json: bool,
}

/// The CI systems `init --ci` writes a snippet for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CiSystem {
    /// GitHub Actions: a workflow file.
    Github,
    /// GitLab CI: a file to `include` from `.gitlab-ci.yml`.
    Gitlab,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SchemaFormat {
    /// The results manifest a training job writes.
    Manifest,
    /// The policy file.
    Policy,
    /// The JSON report vetscore writes.
    Report,
}

#[derive(Debug, clap::Args)]
pub struct CheckArgs {
    /// Results manifests (JSON or YAML): paths or glob patterns such as `runs/*.yaml`; `-` reads
    /// one manifest from standard input. A path that exists is taken literally, even with `[`.
    #[arg(required = true, value_name = "MANIFEST")]
    pub manifests: Vec<String>,

    /// Policy file (YAML). Without it the documented defaults apply.
    #[arg(short, long, value_name = "FILE")]
    pub policy: Option<PathBuf>,

    /// Write the Markdown report to FILE (`-` for standard output; not together with `--json -`).
    #[arg(long, value_name = "FILE")]
    pub markdown: Option<PathBuf>,

    /// Limit of the Markdown report in characters (UTF-16 units), for a merge-request comment:
    /// beyond it, supported models lose their details, then details and table rows are dropped
    /// from the end (failing models come first), and the report says what it left out.
    #[arg(long, value_name = "N", default_value_t = 65_000,
          value_parser = clap::value_parser!(u64).range(2_000..))]
    pub max_chars: u64,

    /// Write the whole Markdown report, without the --max-chars limit, to FILE (keep it as a
    /// CI artifact; the comment names it when it had to leave something out).
    #[arg(long, value_name = "FILE")]
    pub markdown_full: Option<PathBuf>,

    /// Write the JSON report to FILE (`-` for standard output).
    #[arg(long, value_name = "FILE")]
    pub json: Option<PathBuf>,

    /// Write JUnit XML to FILE: one test case per model and rule, for CI test views.
    #[arg(long, value_name = "FILE")]
    pub junit: Option<PathBuf>,

    /// Render reports with the templates in DIR (report.md.j2, junit.xml.j2) instead of the
    /// built-in ones; a template missing from DIR stays built in.
    #[arg(long, value_name = "DIR")]
    pub templates: Option<PathBuf>,

    /// The base branch's JSON report: the Markdown gains a "since base" section with what
    /// changed (scores, verdicts, findings, models added or removed).
    #[arg(long, value_name = "REPORT")]
    pub baseline: Option<PathBuf>,

    /// The base branch's policy file: changes that loosen the gate become findings, and the
    /// report shows the diff.
    #[arg(long, value_name = "FILE")]
    pub base_policy: Option<PathBuf>,

    /// The base branch has no policy file yet (the change that adopts vetscore): the report says
    /// there is no policy change to review. States a fact; never implied by a missing file.
    #[arg(long, conflicts_with = "base_policy")]
    pub no_base_policy: bool,

    /// The base branch's list of reviewed policies: one SHA-256 digest per line (`#` starts a
    /// comment). A loosened policy whose digest is listed passes the policy-change rule.
    #[arg(long, value_name = "FILE")]
    pub reviewed_policies: Option<PathBuf>,

    /// Count the holdout evaluations recorded in this ledger toward the holdout budget. A
    /// missing file is an empty ledger (the report says so). The ledger must extend the trusted
    /// head: --ledger-head, and the `ledger_head` of the --baseline report.
    #[arg(long, value_name = "FILE")]
    pub ledger: Option<PathBuf>,

    /// The trusted head of the base branch's ledger, as COUNT:HASH (from `vetscore ledger
    /// head`): the ledger read must keep those entries unchanged, or the check is invalid input.
    #[arg(long, value_name = "COUNT:HASH", value_parser = crate::ledger::Head::parse, requires = "ledger")]
    pub ledger_head: Option<crate::ledger::Head>,

    /// Directory the files named in manifests (trials, predictions, id lists) must lie in;
    /// default: the working directory. Keeps a manifest from reading files elsewhere.
    #[arg(long, value_name = "DIR")]
    pub root: Option<PathBuf>,

    /// Judge waiver expiry against this date (YYYY-MM-DD) instead of today's date in UTC.
    #[arg(long, value_name = "DATE")]
    pub today: Option<String>,
}
