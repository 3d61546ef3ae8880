//! The application: load → validate → evaluate → report → write. The only module that touches
//! the file system, the environment, the clock and the terminal.

use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

use anyhow::{Context as _, Result, bail};

use crate::cli::{CheckArgs, Cli, Command, LedgerAction, SchemaFormat};
use crate::diag::Diagnostic;
use crate::finding::Verdict;
use crate::manifest::{self, Model};
use crate::policy::Policy;
use crate::report::templates::{self, Templates};
use crate::report::{self, budget, terminal, view};
use crate::{evaluate, rules};

/// Writes a line to standard output; a closed or broken pipe is an error the caller passes up
/// (exit code 3), never a crash.
macro_rules! outln {
    ($($arg:tt)*) => {
        writeln!(std::io::stdout().lock(), $($arg)*).context("writing to standard output")?
    };
}

/// Writes a line to standard error. If even that fails there is nowhere left to report to; the
/// exit code still tells what happened.
macro_rules! errln {
    ($($arg:tt)*) => {
        let _ = writeln!(std::io::stderr().lock(), $($arg)*);
    };
}

/// How a run ended; `main` turns it into the process exit code.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Exit {
    /// Every claim is supported (warnings allowed), or a helper command succeeded.
    Supported,
    /// At least one error-severity finding.
    NotSupported,
    /// The inputs are invalid; every problem was listed.
    InvalidInput,
}

impl Exit {
    pub fn code(self) -> u8 {
        match self {
            Exit::Supported => 0,
            Exit::NotSupported => 1,
            Exit::InvalidInput => 2,
        }
    }
}

/// Exit code when vetscore itself could not finish.
pub const INTERNAL_ERROR: u8 = 3;

/// Runs a parsed command line.
pub fn run(cli: Cli) -> Result<Exit> {
    match cli.command {
        Command::Check(args) => check(&args),
        Command::Explain { rule } => explain(rule.as_deref()),
        Command::Schema { format } => {
            let schema = match format {
                SchemaFormat::Manifest => manifest::schema(),
                SchemaFormat::Policy => crate::policy::schema(),
                SchemaFormat::Report => report::schema(),
            };
            outln!("{}", serde_json::to_string_pretty(&schema)?);
            Ok(Exit::Supported)
        }
        Command::Ledger { action } => ledger(action),
        Command::Init {
            policy,
            force,
            ci,
            ci_output,
        } => init(&policy, force, ci, ci_output.as_deref()),
        Command::Completions { shell } => {
            let mut command = <Cli as clap::CommandFactory>::command();
            let mut out = Vec::new();
            clap_complete::generate(shell, &mut command, "vetscore", &mut out);
            write_output(Path::new("-"), &String::from_utf8_lossy(&out))?;
            Ok(Exit::Supported)
        }
        Command::Man => {
            let mut out = Vec::new();
            clap_mangen::Man::new(<Cli as clap::CommandFactory>::command()).render(&mut out)?;
            write_output(Path::new("-"), &String::from_utf8_lossy(&out))?;
            Ok(Exit::Supported)
        }
        Command::Plan(args) => plan(&args),
        Command::CrashForTest => {
            panic!("deliberate crash requested with `vetscore crash-for-test`")
        }
    }
}

/// The starter policy `init` writes: the built-in defaults, commented.
pub const STARTER_POLICY: &str = include_str!("../templates/starter-policy.yaml");
/// The CI snippets `init` prints.
pub const GITHUB_ACTIONS: &str = include_str!("../templates/ci/github-actions.yml");
pub const GITLAB_CI: &str = include_str!("../templates/ci/gitlab-ci.yml");

/// Writes the starter policy and, with `ci`, the snippet. Only the snippet ever goes to standard
/// output (with `--ci-output -`); every remark goes to standard error, so a redirect captures a
/// valid file.
fn init(
    policy: &Path,
    force: bool,
    ci: Option<crate::cli::CiSystem>,
    ci_output: Option<&Path>,
) -> Result<Exit> {
    use crate::cli::CiSystem;
    let exists = |path: &Path| {
        Diagnostic::file(
            path.display().to_string(),
            "already exists; nothing was written",
        )
        .with_help("pass --force to overwrite it")
    };
    let snippet = ci.map(|system| match system {
        CiSystem::Github => (GITHUB_ACTIONS, Path::new(".github/workflows/vetscore.yml")),
        CiSystem::Gitlab => (GITLAB_CI, Path::new("vetscore.gitlab-ci.yml")),
    });
    let snippet_path = snippet.map(|(_, default)| ci_output.unwrap_or(default));
    if let Some(path) = snippet_path.filter(|p| *p != Path::new("-") && p.exists() && !force) {
        return Ok(report_problems(&[exists(path)], "nothing was written"));
    }
    if !policy.exists() || force {
        std::fs::write(policy, STARTER_POLICY)
            .with_context(|| format!("cannot write {}", policy.display()))?;
        errln!("Wrote the starter policy to {}.", policy.display());
    } else if ci.is_some() {
        errln!("Kept the existing policy {}.", policy.display());
    } else {
        return Ok(report_problems(&[exists(policy)], "nothing was written"));
    }
    match (snippet, snippet_path) {
        (Some((text, _)), Some(path)) if path == Path::new("-") => {
            write_output(path, text)?;
        }
        (Some((text, _)), Some(path)) => {
            if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
                std::fs::create_dir_all(dir)
                    .with_context(|| format!("cannot create {}", dir.display()))?;
            }
            write_output(path, text)?;
            errln!("Wrote the CI snippet to {}.", path.display());
            if ci == Some(CiSystem::Gitlab) {
                errln!(
                    "Include it from .gitlab-ci.yml: `include: {{ local: {} }}`.",
                    path.display()
                );
            }
        }
        _ => {
            errln!("Add the CI snippet with `vetscore init --ci github` or `--ci gitlab`.");
        }
    }
    Ok(Exit::Supported)
}

fn plan(args: &crate::cli::PlanArgs) -> Result<Exit> {
    if args.rows.is_none() && args.margin.is_none() {
        let d = Diagnostic::file("(command line)", "give --rows, --margin or both");
        return Ok(report_problems(&[d], "nothing was planned"));
    }
    let input = crate::plan::PlanInput {
        rows: args.rows,
        margin: args.margin,
        looks: args.looks,
        confidence: args.confidence,
    };
    let plan = match crate::plan::plan(input) {
        Ok(p) => p,
        Err(e) => {
            let d = Diagnostic::file("(command line)", e.to_string());
            return Ok(report_problems(&[d], "nothing was planned"));
        }
    };
    if args.json {
        outln!("{}", serde_json::to_string_pretty(&plan)?);
        return Ok(Exit::Supported);
    }
    let pct = report::format::confidence(plan.confidence);
    let k = plan.looks;
    let mut rows: Vec<(String, String)> = Vec::new();
    let mut text = String::new();
    let mut flush = |heading: String, rows: &mut Vec<(String, String)>| {
        text.push_str(&heading);
        text.push('\n');
        for (label, value) in rows.drain(..) {
            text.push_str(&format!("  {label:<46} {value}\n"));
        }
    };
    if let Some(n) = plan.rows {
        if let Some(m) = plan.margin_normal {
            rows.push(("margin of error, one look".into(), format!("±{m:.4}")));
        }
        if let Some(m) = plan.margin_bonferroni {
            rows.push((
                format!("margin over {k} looks (Bonferroni)"),
                format!("±{m:.4}"),
            ));
        }
        if let Some(m) = plan.margin_hoeffding {
            rows.push((
                format!("margin over {k} looks (Hoeffding, any data)"),
                format!("±{m:.4}"),
            ));
        }
        flush(
            format!("A test split of {n} rows, at {pct} confidence, accuracy near 0.5:"),
            &mut rows,
        );
    }
    if let Some(e) = plan.margin {
        if let Some(r) = plan.rows_cochran {
            rows.push(("rows needed, one look (Cochran)".into(), r.to_string()));
        }
        if let Some(r) = plan.rows_hoeffding {
            rows.push((
                format!("rows needed over {k} looks (Hoeffding)"),
                r.to_string(),
            ));
        }
        if let Some(n) = plan.looks_bonferroni {
            rows.push(("looks the split affords (Bonferroni)".into(), n.to_string()));
        }
        if let Some(n) = plan.looks_hoeffding {
            rows.push(("looks the split affords (Hoeffding)".into(), n.to_string()));
        }
        flush(
            format!("For a margin of ±{e} at {pct} confidence:"),
            &mut rows,
        );
    }
    write!(std::io::stdout().lock(), "{text}").context("writing to standard output")?;
    Ok(Exit::Supported)
}

fn report_problems(problems: &[Diagnostic], what: &str) -> Exit {
    for p in problems {
        errln!("error: {p}");
    }
    errln!(
        "vetscore: {} input problem{} found; {what}",
        problems.len(),
        if problems.len() == 1 { "" } else { "s" }
    );
    Exit::InvalidInput
}

fn ledger(action: LedgerAction) -> Result<Exit> {
    match action {
        LedgerAction::Verify { ledger } => match crate::ledger::store::read(&ledger, false) {
            Ok(entries) => {
                outln!(
                    "{}: {} entries, hash chain intact",
                    ledger.display(),
                    entries.len()
                );
                Ok(Exit::Supported)
            }
            Err(d) => Ok(report_problems(&[d], "the ledger cannot be trusted")),
        },
        LedgerAction::Append {
            ledger,
            manifests,
            root,
        } => {
            let mut problems = Vec::new();
            let models = load_models(&manifests, root.as_deref(), &mut problems);
            if !problems.is_empty() {
                return Ok(report_problems(&problems, "nothing was recorded"));
            }
            match crate::ledger::store::append(&ledger, &models)? {
                Ok(added) => {
                    outln!("{}: {added} new entries recorded", ledger.display());
                    Ok(Exit::Supported)
                }
                Err(d) => Ok(report_problems(&[d], "nothing was recorded")),
            }
        }
    }
}

/// Loads every manifest the patterns name, collecting problems (including duplicate names).
/// Files a manifest names must lie inside `root` (the working directory when not given).
fn load_models(
    patterns: &[String],
    root: Option<&Path>,
    problems: &mut Vec<Diagnostic>,
) -> Vec<Model> {
    let root = root.map_or_else(|| PathBuf::from("."), Path::to_path_buf);
    let mut models: Vec<Model> = Vec::new();
    for path in expand(patterns, problems) {
        match manifest::load(&path, &root) {
            Ok(found) => models.extend(found),
            Err(d) => problems.extend(d),
        }
    }
    problems.extend(duplicate_names(&models));
    models
}

fn explain(rule: Option<&str>) -> Result<Exit> {
    match rule {
        None => {
            for r in rules::RULES {
                outln!("{:<18} {}", r.id, r.name);
            }
            outln!("\nRun `vetscore explain RULE` for what a rule checks and why.");
            Ok(Exit::Supported)
        }
        Some(id) => match rules::rule(id) {
            Some(r) => {
                outln!("{} ({})\n\n{}", r.name, r.id, r.explanation);
                Ok(Exit::Supported)
            }
            None => {
                let mut d = Diagnostic::file("(command line)", format!("no rule is named {id:?}"));
                if let Some(c) = crate::diag::closest(id, rules::RULES.iter().map(|r| r.id)) {
                    d = d.with_help(format!("did you mean `{c}`?"));
                }
                errln!("error: {d}");
                errln!("The rules are:");
                for r in rules::RULES {
                    errln!("  {:<18} {}", r.id, r.name);
                }
                Ok(Exit::InvalidInput)
            }
        },
    }
}

fn check(args: &CheckArgs) -> Result<Exit> {
    let mut problems = Vec::new();
    let today = match &args.today {
        Some(text) => match text.parse::<jiff::civil::Date>() {
            Ok(d) => Some(d),
            Err(e) => {
                problems.push(Diagnostic::file(
                    "--today",
                    format!("expected YYYY-MM-DD, found {text:?}: {e}"),
                ));
                None
            }
        },
        None => Some(
            jiff::tz::TimeZone::UTC
                .to_datetime(jiff::Timestamp::now())
                .date(),
        ),
    };
    let policy = match &args.policy {
        Some(path) => Policy::load(path).map_err(|d| problems.extend(d)).ok(),
        None => Some(Policy::defaults()),
    };
    let base_policy = args
        .base_policy
        .as_ref()
        .and_then(|path| Policy::load(path).map_err(|d| problems.extend(d)).ok());
    let reviewed = args
        .reviewed_policies
        .as_deref()
        .map(|path| reviewed_digests(path).map_err(|d| problems.extend(d)))
        .transpose()
        .ok()
        .flatten()
        .unwrap_or_default();
    let models = load_models(&args.manifests, args.root.as_deref(), &mut problems);
    let ledger = match &args.ledger {
        Some(path) => crate::ledger::store::read(path, false)
            .map_err(|d| problems.push(d))
            .unwrap_or_default(),
        None => Vec::new(),
    };
    let base_report = args.baseline.as_ref().and_then(|path| {
        crate::input::read_text(path)
            .and_then(|text| {
                report::since::BaseReport::parse(&text)
                    .map_err(|message| Diagnostic::file(path.display().to_string(), message))
            })
            .map_err(|d| problems.push(d))
            .ok()
    });
    let (Some(policy), Some(today), true) = (policy, today, problems.is_empty()) else {
        let exit = report_problems(&problems, "nothing was checked");
        write_problem_reports(args, &problems)?;
        return Ok(exit);
    };

    let base_splits = base_report
        .as_ref()
        .map(report::since::BaseReport::test_splits);
    let review = rules::PolicyReview {
        adopting: args.no_base_policy,
        accepted: policy.file.is_some() && reviewed.contains(&policy.digest),
    };
    let assessment = evaluate::evaluate_reviewed(
        models,
        &ledger,
        &policy,
        base_policy.as_ref(),
        base_splits.as_ref(),
        today,
        review,
    );
    let mut view = view::build(&assessment, &policy, base_policy.as_ref());
    view.since_base = base_report
        .as_ref()
        .map(|base| report::since::compare(base, &view.models));
    let templates = match &args.templates {
        Some(dir) => Templates::with_overrides(dir)?,
        None => Templates::built_in(),
    };
    let prepared = templates.prepare(templates::MARKDOWN, &view)?;
    let full_report = full_report_names(args);
    let markdown_to_stdout = args.markdown.as_deref() == Some(Path::new("-"));
    if let Some(path) = &args.markdown {
        let limit = usize::try_from(args.max_chars).unwrap_or(usize::MAX);
        let text = budget::markdown(
            &prepared,
            &view,
            limit,
            budget::Measure::Utf16,
            &full_report,
        )?;
        write_output(path, &text)?;
    }
    if let Some(path) = &args.markdown_full {
        write_output(
            path,
            &prepared.render(&budget::Layout::full(view.models.len()))?,
        )?;
    }
    if let Some(path) = &args.json {
        write_output(path, &report::json(&view)?)?;
    }
    if let Some(path) = &args.junit {
        write_output(path, &templates.render(templates::JUNIT, &view)?)?;
    }
    if let Some(summary) = std::env::var_os("GITHUB_STEP_SUMMARY").filter(|s| !s.is_empty()) {
        append_step_summary(Path::new(&summary), |limit| {
            budget::markdown(
                &prepared,
                &view,
                limit,
                budget::Measure::Bytes,
                &full_report,
            )
        })?;
    }
    let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
    if markdown_to_stdout || args.json.as_deref() == Some(Path::new("-")) {
        let color = std::io::stderr().is_terminal() && !no_color;
        let _ = write!(
            std::io::stderr().lock(),
            "{}",
            terminal::render(&view, color)
        );
    } else {
        let color = std::io::stdout().is_terminal() && !no_color;
        write!(
            std::io::stdout().lock(),
            "{}",
            terminal::render(&view, color)
        )
        .context("writing the terminal summary")?;
    }
    Ok(match assessment.verdict {
        Verdict::NotSupported => Exit::NotSupported,
        Verdict::Supported | Verdict::SupportedWithWarnings => Exit::Supported,
    })
}

/// On invalid inputs, the Markdown and JSON reports (when asked for) say "could not check" and
/// list every problem, so the merge-request comment is replaced rather than left saying what an
/// earlier run found. JUnit XML is not written: there are no test cases to report.
fn write_problem_reports(args: &CheckArgs, problems: &[Diagnostic]) -> Result<()> {
    let view = report::problems::build(problems);
    let templates = match &args.templates {
        Some(dir) => Templates::with_overrides(dir)?,
        None => Templates::built_in(),
    };
    let prepared = templates.prepare(templates::PROBLEMS, &view)?;
    if let Some(path) = &args.markdown {
        let limit = usize::try_from(args.max_chars).unwrap_or(usize::MAX);
        let text = report::problems::markdown(&prepared, &view, limit, budget::Measure::Utf16)?;
        write_output(path, &text)?;
    }
    if let Some(path) = &args.markdown_full {
        let all = budget::Layout::full(view.input_problems.len());
        write_output(path, &prepared.render(&all)?)?;
    }
    if let Some(path) = &args.json {
        write_output(path, &report::json(&view)?)?;
    }
    if let Some(summary) = std::env::var_os("GITHUB_STEP_SUMMARY").filter(|s| !s.is_empty()) {
        append_step_summary(Path::new(&summary), |limit| {
            report::problems::markdown(&prepared, &view, limit, budget::Measure::Bytes)
        })?;
    }
    Ok(())
}

/// Reads the base branch's list of reviewed policy digests: one SHA-256 (64 hex digits,
/// optionally `sha256:` first) per line; blank lines and `#` comments are ignored, anything else
/// is an input problem naming its line.
fn reviewed_digests(path: &Path) -> Result<Vec<String>, Vec<Diagnostic>> {
    let file = path.display().to_string();
    let text = crate::input::read_text(path).map_err(|d| vec![d])?;
    let mut digests = Vec::new();
    let mut problems = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let entry = line.split('#').next().unwrap_or("").trim();
        if entry.is_empty() {
            continue;
        }
        let hex = entry.strip_prefix("sha256:").unwrap_or(entry);
        if hex.len() == 64 && hex.bytes().all(|b| b.is_ascii_hexdigit()) {
            digests.push(hex.to_ascii_lowercase());
        } else {
            problems.push(Diagnostic {
                line: Some(i as u64 + 1),
                ..Diagnostic::file(
                    file.clone(),
                    format!("expected a SHA-256 digest (64 hex digits), found {entry:?}"),
                )
                .with_help("copy the digest from the report's policy-change headline")
            });
        }
    }
    if problems.is_empty() {
        Ok(digests)
    } else {
        Err(problems)
    }
}

/// Expands glob patterns; a pattern that matches nothing is an input problem.
fn expand(patterns: &[String], problems: &mut Vec<Diagnostic>) -> Vec<PathBuf> {
    let mut paths = Vec::new();
    for pattern in patterns {
        if !pattern.contains(['*', '?', '[']) {
            paths.push(PathBuf::from(pattern));
            continue;
        }
        match glob::glob(pattern) {
            Ok(entries) => {
                let before = paths.len();
                for entry in entries {
                    match entry {
                        Ok(path) => paths.push(path),
                        Err(e) => problems.push(Diagnostic::file(
                            e.path().display().to_string(),
                            format!("cannot read: {}", e.error()),
                        )),
                    }
                }
                if paths.len() == before {
                    problems.push(Diagnostic::file(pattern, "pattern matched no file"));
                }
            }
            Err(e) => problems.push(Diagnostic::file(
                pattern,
                format!("invalid glob pattern: {}", e.msg),
            )),
        }
    }
    paths.sort();
    paths.dedup();
    paths
}

/// Model names identify findings and holdout use, so they must be unique across the check.
fn duplicate_names(models: &[Model]) -> Vec<Diagnostic> {
    let mut out = Vec::new();
    for (i, m) in models.iter().enumerate() {
        if let Some(first) = models[..i].iter().find(|o| o.name == m.name) {
            out.push(Diagnostic {
                file: m.origin.file.clone(),
                line: m.origin.line,
                column: None,
                path: Some("name".to_owned()),
                message: format!(
                    "model name {:?} is already used at {}{}",
                    m.name,
                    first.origin.file,
                    first
                        .origin
                        .line
                        .map(|l| format!(":{l}"))
                        .unwrap_or_default()
                ),
                help: Some("give every model in the check a unique name".to_owned()),
            });
        }
    }
    out
}

fn write_output(path: &Path, text: &str) -> Result<()> {
    if path == Path::new("-") {
        let mut stdout = std::io::stdout().lock();
        stdout.write_all(text.as_bytes())?;
        stdout.flush()?;
        return Ok(());
    }
    if path.is_dir() {
        bail!("cannot write {}: it is a directory", path.display());
    }
    std::fs::write(path, text).with_context(|| format!("cannot write {}", path.display()))
}

/// Where the whole report is, for the line a cut comment ends with: the file names (never
/// directories, which say nothing to a reader of the comment) of `--markdown-full` and `--json`.
fn full_report_names(args: &CheckArgs) -> String {
    let name = |p: &Option<PathBuf>| {
        p.as_deref()
            .filter(|p| *p != Path::new("-"))
            .and_then(Path::file_name)
            .map(|n| report::escape::markdown(&n.to_string_lossy()))
    };
    let names: Vec<String> = [name(&args.markdown_full), name(&args.json)]
        .into_iter()
        .flatten()
        .collect();
    if names.is_empty() {
        "the JSON report and the full Markdown, which this run did not keep (pass --json FILE \
         and --markdown-full FILE)"
            .to_owned()
    } else {
        format!("{}, kept with the CI job's artifacts", names.join(" and "))
    }
}

/// Appends the report to GitHub's step summary: a blank line first, so it never joins the
/// previous step's text, and the whole within the summary's size limit together with what the
/// file already holds.
fn append_step_summary(path: &Path, render: impl Fn(usize) -> Result<String>) -> Result<()> {
    let context = || {
        format!(
            "appending the report to GITHUB_STEP_SUMMARY ({})",
            path.display()
        )
    };
    let used = match std::fs::metadata(path) {
        Ok(m) => usize::try_from(m.len()).unwrap_or(usize::MAX),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => 0,
        Err(e) => return Err(e).with_context(context),
    };
    let room = budget::STEP_SUMMARY_MAX_BYTES
        .saturating_sub(used)
        .saturating_sub(1);
    if room < budget::MIN_MAX_CHARS {
        errln!(
            "warning: GITHUB_STEP_SUMMARY already holds {used} bytes; the report was not \
             appended (the summary's limit is {} bytes)",
            budget::STEP_SUMMARY_MAX_BYTES
        );
        return Ok(());
    }
    let text = render(room)?;
    let mut file = std::fs::OpenOptions::new()
        .create(true)
        .append(true)
        .open(path)
        .with_context(context)?;
    file.write_all(b"\n")
        .and_then(|()| file.write_all(text.as_bytes()))
        .and_then(|()| file.flush())
        .with_context(context)?;
    Ok(())
}
