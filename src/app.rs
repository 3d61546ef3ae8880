//! The application: load → validate → evaluate → report → write. The only module that touches
//! the file system, the environment, the clock and the terminal.

use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

use anyhow::{Context as _, Result, bail};

use crate::cli::{CheckArgs, Cli, Color, Command, LedgerAction, SchemaFormat};
use crate::console::{self, Annotation, Console, Level};
use crate::diag::Diagnostic;
use crate::finding::Verdict;
use crate::manifest::{self, Model};
use crate::policy::Policy;
use crate::report::templates::{self, Templates};
use crate::report::{self, budget, terminal, view};
use crate::{evaluate, rules};

/// Writes a line to standard output through the console; a closed or broken pipe is an error
/// the caller passes up (exit code 3), never a crash.
macro_rules! outln {
    ($($arg:tt)*) => {
        console()
            .out(&format!("{}\n", format_args!($($arg)*)))
            .context("writing to standard output")?
    };
}

/// Writes a line to standard error through the console. A failure is remembered and turns the
/// run into exit code 3 at the end ([`run`]): the problems it should have listed were not seen.
macro_rules! errln {
    ($($arg:tt)*) => {
        if console().err(&format!("{}\n", format_args!($($arg)*))).is_err() {
            STDERR_FAILED.store(true, std::sync::atomic::Ordering::Relaxed);
        }
    };
}

/// Where this run's output goes; set once by [`run`] from `--color` and the environment.
static CONSOLE: std::sync::OnceLock<Console> = std::sync::OnceLock::new();

/// A write to standard error failed during this run.
static STDERR_FAILED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// The run's console (plain, without colour, before [`run`] sets it).
pub fn console() -> Console {
    CONSOLE.get().copied().unwrap_or_default()
}

/// The console for `--color`: `auto` colours a stream that is a terminal when `NO_COLOR` is
/// unset or empty (<https://no-color.org>).
pub fn console_for(color: Color) -> Console {
    let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
    let decide = |terminal: bool| match color {
        Color::Always => true,
        Color::Never => false,
        Color::Auto => terminal && !no_color,
    };
    Console {
        stdout_color: decide(std::io::stdout().is_terminal()),
        stderr_color: decide(std::io::stderr().is_terminal()),
    }
}

/// Whether vetscore runs as a GitHub Actions step, where it writes annotations.
fn github_actions() -> bool {
    std::env::var_os("GITHUB_ACTIONS").is_some_and(|v| v == "true")
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
///
/// Every write is checked: a report, summary or diagnostic that could not be written is exit
/// code 3. The one exception is a listing command (`explain`, `schema`, `plan`) whose reader
/// stopped reading (`vetscore explain | head`): a broken pipe there ends the run quietly with
/// exit 0, as Unix tools do; nothing was decided, so nothing is lost. `check` never takes that
/// exception: a gate whose report was cut off must not look like a verdict.
pub fn run(cli: Cli) -> Result<Exit> {
    let _ = CONSOLE.set(console_for(cli.color));
    let listing = matches!(
        cli.command,
        Command::Explain { .. } | Command::Schema { .. } | Command::Plan(_)
    );
    let result = match run_command(cli.command) {
        Err(e) if listing && console::is_broken_pipe(&e) => Ok(Exit::Supported),
        other => other,
    };
    if STDERR_FAILED.load(std::sync::atomic::Ordering::Relaxed) {
        bail!("writing to standard error failed");
    }
    result
}

fn run_command(command: Command) -> Result<Exit> {
    match command {
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
    let most = crate::manifest::MAX_ROWS;
    if plan
        .rows_cochran
        .max(plan.rows_hoeffding)
        .is_some_and(|r| r > most)
    {
        let d = Diagnostic::file(
            "--margin",
            format!(
                "a margin of ±{:e} needs more than {most} rows, the most a manifest can state",
                plan.margin.unwrap_or_default()
            ),
        )
        .with_help("ask for a wider margin, such as 0.01");
        return Ok(report_problems(&[d], "nothing was planned"));
    }
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
        let looks = |n: u64| {
            if n == crate::plan::MAX_LOOKS {
                format!("at least {n} (the most searched)")
            } else {
                n.to_string()
            }
        };
        if let Some(n) = plan.looks_bonferroni {
            rows.push(("looks the split affords (Bonferroni)".into(), looks(n)));
        }
        if let Some(n) = plan.looks_hoeffding {
            rows.push(("looks the split affords (Hoeffding)".into(), looks(n)));
        }
        flush(
            format!("For a margin of ±{e} at {pct} confidence:"),
            &mut rows,
        );
    }
    console().out(&text).context("writing to standard output")?;
    Ok(Exit::Supported)
}

fn report_problems(problems: &[Diagnostic], what: &str) -> Exit {
    for p in problems {
        errln!("error: {p}");
    }
    if github_actions() {
        for p in problems {
            let annotation = problem_annotation(p);
            if console().annotate(&annotation).is_err() {
                STDERR_FAILED.store(true, std::sync::atomic::Ordering::Relaxed);
            }
        }
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
        LedgerAction::Verify {
            ledger,
            ledger_head,
        } => {
            let heads: Vec<(&str, &crate::ledger::Head)> =
                ledger_head.iter().map(|h| ("--ledger-head", h)).collect();
            let read = crate::ledger::store::read_anchored(&ledger, false, &heads);
            match read {
                Ok(crate::ledger::store::Loaded { entries, .. }) => {
                    let head = crate::ledger::Head::of(&entries);
                    let anchored = match &ledger_head {
                        Some(h) => format!("; extends the trusted head {h}"),
                        None => "; no trusted head given, so entries cut off the end or a \
                                 rewritten chain would not show"
                            .to_owned(),
                    };
                    outln!(
                        "{}: {} entries, hash chain intact{anchored}; head {head}",
                        ledger.display(),
                        entries.len()
                    );
                    Ok(Exit::Supported)
                }
                Err(d) => Ok(report_problems(&[d], "the ledger cannot be trusted")),
            }
        }
        LedgerAction::Head { ledger } => match crate::ledger::store::read(&ledger, true) {
            Ok(entries) => {
                outln!("{}", crate::ledger::Head::of(&entries));
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
    // Confinement needs a real directory; a missing one is an input error, never "no limit".
    match root.canonicalize() {
        Ok(real) if real.is_dir() => {}
        Ok(_) => {
            problems.push(Diagnostic::file(
                "--root",
                format!("{} is not a directory", root.display()),
            ));
            return Vec::new();
        }
        Err(e) => {
            problems.push(Diagnostic::file(
                "--root",
                format!(
                    "the root directory {} cannot be resolved: {}",
                    root.display(),
                    crate::input::io_reason(&e)
                ),
            ));
            return Vec::new();
        }
    }
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
    let stdout = Some(Path::new("-"));
    if args.markdown.as_deref() == stdout && args.json.as_deref() == stdout {
        let d = Diagnostic::file(
            "(command line)",
            "--markdown - and --json - would both write to standard output",
        )
        .with_help("write one of the two reports to a file");
        return Ok(report_problems(&[d], "nothing was checked"));
    }
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
    let base_report = args.baseline.as_ref().and_then(|path| {
        crate::opener::read_text(Some(path), crate::opener::Kind::BaseReport)
            .and_then(|text| {
                report::since::BaseReport::parse(&text)
                    .map_err(|message| Diagnostic::file(path.display().to_string(), message))
            })
            .map_err(|d| problems.push(d))
            .ok()
    });
    let base_head = base_report
        .as_ref()
        .and_then(report::since::BaseReport::ledger_head);
    let ledger = args.ledger.as_ref().and_then(|path| {
        read_ledger(
            path,
            args.ledger_head.as_ref(),
            base_head.as_ref(),
            &mut problems,
        )
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
        ledger.as_ref().map_or(&[][..], |(l, _)| &l.entries),
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
    view.ledger_head = ledger.map(|(_, v)| v);
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
    if github_actions() {
        for annotation in finding_annotations(&view) {
            console()
                .annotate(&annotation)
                .context("writing GitHub annotations")?;
        }
    }
    let console = console();
    if markdown_to_stdout || args.json.as_deref() == Some(Path::new("-")) {
        console
            .err(&terminal::render(&view, console.stderr_color))
            .context("writing the terminal summary to standard error")?;
    } else {
        console
            .out(&terminal::render(&view, console.stdout_color))
            .context("writing the terminal summary")?;
    }
    Ok(match assessment.verdict {
        Verdict::NotSupported => Exit::NotSupported,
        Verdict::Supported | Verdict::SupportedWithWarnings => Exit::Supported,
    })
}

/// Reads the `--ledger` of a check and verifies it extends the trusted heads given; returns it
/// with its view for the report, or records the problem.
fn read_ledger(
    path: &Path,
    flag: Option<&crate::ledger::Head>,
    baseline: Option<&crate::ledger::Head>,
    problems: &mut Vec<Diagnostic>,
) -> Option<(crate::ledger::store::Loaded, view::LedgerView)> {
    let heads: Vec<(&'static str, &crate::ledger::Head)> =
        [("--ledger-head", flag), ("baseline", baseline)]
            .into_iter()
            .filter_map(|(source, head)| head.map(|h| (source, h)))
            .collect();
    let named: Vec<(&str, &crate::ledger::Head)> = heads
        .iter()
        .map(|&(source, h)| {
            let source = if source == "baseline" {
                "the ledger_head of the --baseline report"
            } else {
                source
            };
            (source, h)
        })
        .collect();
    let loaded = crate::ledger::store::read_anchored(path, true, &named)
        .map_err(|d| problems.push(d))
        .ok()?;
    let head = crate::ledger::Head::of(&loaded.entries);
    let view = view::LedgerView {
        file: path.display().to_string(),
        entries: head.entries,
        last_hash: head.last_hash,
        file_missing: loaded.missing,
        extends: heads
            .iter()
            .map(|&(source, h)| view::LedgerAnchor {
                source,
                entries: h.entries,
                last_hash: h.last_hash.clone(),
            })
            .collect(),
    };
    Some((loaded, view))
}

/// The GitHub annotation for an input problem: on its file and line.
fn problem_annotation(p: &Diagnostic) -> Annotation {
    let mut message = match &p.path {
        Some(path) => format!("{path}: {}", p.message),
        None => p.message.clone(),
    };
    if let Some(help) = &p.help {
        message.push_str(&format!("\nhelp: {help}"));
    }
    Annotation {
        level: Level::Error,
        file: p.file.clone(),
        line: p.line,
        column: p.column,
        title: Some("vetscore: invalid input".to_owned()),
        message,
    }
}

/// GitHub annotations for the findings that block or warn: on the model's manifest line, or for
/// a policy change on the policy line the setting came from.
fn finding_annotations(view: &view::View) -> Vec<Annotation> {
    let mut out = Vec::new();
    for m in &view.models {
        for f in &m.findings {
            let level = match f.effect {
                view::Effect::Blocks => Level::Error,
                view::Effect::Warns => Level::Warning,
                view::Effect::None => continue,
            };
            let (file, line) = match (&view.policy.file, f.rule) {
                (Some(policy), "policy_change") => (policy.clone(), f.policy.line),
                _ => (m.file.clone(), m.line),
            };
            out.push(Annotation {
                level,
                file,
                line,
                column: None,
                title: Some(format!("vetscore: {} ({})", f.rule_name, m.name)),
                message: f.message.clone(),
            });
        }
    }
    out
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
    let text = crate::opener::read_text(Some(path), crate::opener::Kind::ReviewedPolicies)
        .map_err(|d| vec![d])?;
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
        // A path that exists is taken literally, even when its name holds `[` or `*`.
        if !pattern.contains(['*', '?', '[']) || Path::new(pattern).exists() {
            paths.push(PathBuf::from(pattern));
            continue;
        }
        match walk_glob(pattern, problems) {
            Ok(found) => {
                if found.is_empty() {
                    problems.push(Diagnostic::file(pattern, "pattern matched no file"));
                }
                paths.extend(found);
            }
            Err(message) => problems.push(Diagnostic::file(pattern, message)),
        }
    }
    paths.sort();
    paths.dedup();
    paths
}

/// Most directory entries one glob pattern may visit: a bound on the walk whatever the tree.
const MAX_GLOB_ENTRIES: usize = 1_000_000;

/// The files matching a glob pattern (`*` and `?` within one path component, `**` across
/// directories, `[...]` classes). The walk starts at the pattern's literal leading directories,
/// never descends into a directory reached through a symbolic link (a `dir -> .` link made the
/// old walk endless), and stops with an error after [`MAX_GLOB_ENTRIES`] entries. Directories
/// that cannot be read are problems; other entries that are not files are skipped.
fn walk_glob(pattern: &str, problems: &mut Vec<Diagnostic>) -> Result<Vec<PathBuf>, String> {
    let matcher = globset::GlobBuilder::new(pattern)
        .literal_separator(true)
        .build()
        .map_err(|e| format!("invalid glob pattern: {}", e.kind()))?
        .compile_matcher();
    let literal: Vec<&str> = pattern
        .split('/')
        .take_while(|c| !c.contains(['*', '?', '[', '{']))
        .collect();
    let base = if literal.is_empty() {
        PathBuf::from(".")
    } else if literal == [""] {
        PathBuf::from("/")
    } else {
        PathBuf::from(literal.join("/"))
    };
    // Paths are matched as the pattern spells them: relative ones without a leading `./`.
    let relative_start = literal.is_empty();
    let mut found = Vec::new();
    let mut visited = 0usize;
    let mut pending = vec![base];
    while let Some(dir) = pending.pop() {
        let entries = match std::fs::read_dir(&dir) {
            Ok(entries) => entries,
            // A directory the pattern names that does not exist matches nothing; the caller
            // says "pattern matched no file" once.
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => continue,
            Err(e) => {
                problems.push(Diagnostic::file(
                    dir.display().to_string(),
                    format!("cannot read: {}", crate::input::io_reason(&e)),
                ));
                continue;
            }
        };
        for entry in entries {
            visited += 1;
            if visited > MAX_GLOB_ENTRIES {
                return Err(format!(
                    "the pattern visits more than {MAX_GLOB_ENTRIES} directory entries; name a narrower directory"
                ));
            }
            let Ok(entry) = entry else { continue };
            let path = if relative_start {
                dir.join(entry.file_name())
                    .strip_prefix(".")
                    .map(Path::to_path_buf)
                    .unwrap_or_else(|_| dir.join(entry.file_name()))
            } else {
                dir.join(entry.file_name())
            };
            // file_type() does not follow symbolic links: a link is never walked into.
            let Ok(kind) = entry.file_type() else {
                continue;
            };
            if kind.is_dir() {
                pending.push(path);
            } else if matcher.is_match(&path) {
                found.push(path);
            }
        }
    }
    Ok(found)
}

/// Model names identify findings and holdout use, so they must be unique across the check.
fn duplicate_names(models: &[Model]) -> Vec<Diagnostic> {
    let mut out = Vec::new();
    // The first model of each name, in one map: a scan of the earlier models per model was
    // quadratic in the number of models.
    let mut first_of: std::collections::HashMap<&str, &Model> = std::collections::HashMap::new();
    for m in models {
        if let Some(first) = first_of.get(m.name.as_str()).copied().or_else(|| {
            first_of.insert(&m.name, m);
            None
        }) {
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

/// Writes a report to standard output (`-`) or, atomically, to a file: a full disk or a crash
/// never leaves half a report where the CI step would post it.
fn write_output(path: &Path, text: &str) -> Result<()> {
    if path == Path::new("-") {
        return console()
            .document(text)
            .context("writing the report to standard output");
    }
    // The atomic rename would replace whatever stands at the path: run as root with
    // `--json /dev/full` (or `/dev/stdout`), it swapped the device for a regular file.
    if let Ok(meta) = std::fs::metadata(path)
        && !meta.is_file()
    {
        let what = if meta.is_dir() {
            "it is a directory"
        } else {
            "it is not a regular file (a device, pipe or socket); give `-` for standard output"
        };
        bail!("cannot write {}: {what}", path.display());
    }
    crate::atomic::write(path, text.as_bytes())
        .with_context(|| format!("cannot write {}", path.display()))
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
        .and_then(|()| file.sync_data())
        .with_context(context)?;
    Ok(())
}
