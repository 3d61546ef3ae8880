//! A repository's history through the shipped CI snippets, on both CI flavours: the merge request
//! that adopts vetscore, its merge, then merge requests that fail, carry invalid input and
//! outgrow the comment limit, and their merges. The shell steps are taken from the real snippet
//! files (templates/ci/*.yml, which `init` writes) and run locally with bash; `gh` and `curl` are
//! stand-ins (tests/ci-sim/) that serve artifacts and releases and record every comment instead
//! of posting it. The test checks what a reviewer would see and what the ledger holds.
//!
//! Needs bash, git, jq, tar and sha256sum on PATH (a CI runner has them); a missing tool fails
//! the test with its name.

#![allow(clippy::unwrap_used)]

mod common;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

use serde_json::Value;

const MARKER: &str = "<!-- vetscore:report -->";

fn manifest(models: &[(String, &str)]) -> String {
    let mut text = String::from("format_version: 1\nmodels:\n");
    for (name, claim) in models {
        // A claim of 0.31 is supported, 0.40 is not (see `common::quince_model`).
        text.push_str(&common::quince_model(name, name, claim));
    }
    text
}

fn sh(dir: &Path, program: &str, args: &[&str]) -> String {
    let out = Command::new(program)
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap_or_else(|e| panic!("{program} is needed for the CI simulation: {e}"));
    assert!(
        out.status.success(),
        "{program} {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// The simulated hosting service: a bare origin, the artifact store, the stand-ins.
struct World {
    root: tempfile::TempDir,
    sha256: String,
    flavour: Flavour,
    runs: u32,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Flavour {
    GitHub,
    GitLab,
}

/// What one CI job did.
struct Job {
    ok: bool,
    log: String,
}

impl World {
    fn new(flavour: Flavour) -> World {
        let root = tempfile::tempdir().unwrap();
        let p = root.path();
        for tool in ["bash", "git", "jq", "tar", "sha256sum"] {
            sh(p, tool, &["--version"]);
        }
        for dir in [
            "store/github/runs",
            "store/gitlab/artifacts",
            "store/releases",
            "bin",
        ] {
            std::fs::create_dir_all(p.join(dir)).unwrap();
        }
        std::fs::write(p.join("store/github/runs.json"), "[]").unwrap();
        // Someone else's comment that quotes the marker: it must never be replaced.
        let foreign = format!("{MARKER}\nquoted by a reviewer");
        std::fs::write(
            p.join("store/github/comments.json"),
            serde_json::json!([{"id": 7, "pr": 2, "user": {"login": "a-reviewer"}, "body": foreign}])
                .to_string(),
        )
        .unwrap();
        std::fs::write(
            p.join("store/gitlab/notes.json"),
            serde_json::json!([{"id": 7, "iid": 2, "author": {"id": 5}, "body": foreign}])
                .to_string(),
        )
        .unwrap();
        for tool in ["gh", "curl", "apk"] {
            std::fs::copy(
                common::root().join("tests/ci-sim").join(tool),
                p.join("bin").join(tool),
            )
            .unwrap();
        }
        // The release: the binary under test in the archive the release workflow builds.
        let stage = p.join("stage");
        std::fs::create_dir_all(&stage).unwrap();
        std::fs::copy(env!("CARGO_BIN_EXE_vetscore"), stage.join("vetscore")).unwrap();
        let asset = "vetscore-0.1.0-x86_64-unknown-linux-musl.tar.gz";
        let release = p.join("store/releases/download/v0.1.0");
        std::fs::create_dir_all(&release).unwrap();
        let archive = release.join(asset);
        sh(
            &stage,
            "tar",
            &["-czf", archive.to_str().unwrap(), "vetscore"],
        );
        let sha256 = sh(&release, "sha256sum", &[asset])
            .split_whitespace()
            .next()
            .unwrap()
            .to_owned();
        // The origin repository and a working clone.
        sh(
            p,
            "git",
            &["init", "-q", "--bare", "-b", "main", "origin.git"],
        );
        sh(p, "git", &["clone", "-q", "origin.git", "work"]);
        let work = p.join("work");
        for (k, v) in [("user.name", "sim"), ("user.email", "sim@example.invalid")] {
            sh(&work, "git", &["config", k, v]);
        }
        std::fs::write(work.join("README"), "greenhouse models\n").unwrap();
        sh(&work, "git", &["add", "-A"]);
        sh(&work, "git", &["commit", "-q", "-m", "start"]);
        sh(&work, "git", &["push", "-q", "origin", "HEAD:main"]);
        World {
            root,
            sha256,
            flavour,
            runs: 0,
        }
    }

    fn path(&self, rel: &str) -> PathBuf {
        self.root.path().join(rel)
    }

    /// Commits `files` (path, text; `None` deletes) on `branch` and pushes it.
    fn commit(&self, branch: &str, files: &[(&str, Option<String>)]) {
        let work = self.path("work");
        let exists = !sh(&work, "git", &["branch", "--list", branch]).is_empty();
        if exists {
            sh(&work, "git", &["checkout", "-q", branch]);
        } else {
            sh(
                &work,
                "git",
                &["checkout", "-q", "-b", branch, "origin/main"],
            );
        }
        for (file, text) in files {
            let path = work.join(file);
            match text {
                Some(t) => {
                    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
                    std::fs::write(path, t).unwrap();
                }
                None => {
                    let _ = std::fs::remove_file(path);
                }
            }
        }
        sh(&work, "git", &["add", "-A"]);
        sh(&work, "git", &["commit", "-q", "-m", branch]);
        sh(&work, "git", &["push", "-q", "-f", "origin", branch]);
        sh(&work, "git", &["fetch", "-q", "origin"]);
    }

    /// Merges `branch` into main (fast-forward after a rebase) and pushes main.
    fn merge(&self, branch: &str) {
        let work = self.path("work");
        sh(&work, "git", &["checkout", "-q", branch]);
        sh(&work, "git", &["rebase", "-q", "origin/main"]);
        sh(&work, "git", &["push", "-q", "origin", "HEAD:main"]);
        sh(&work, "git", &["fetch", "-q", "origin"]);
    }

    /// A fresh checkout of `branch` as a CI runner makes it, with every origin branch fetched.
    fn checkout(&self, branch: &str) -> PathBuf {
        let dir = self.path(&format!("jobs/{}", self.runs));
        std::fs::create_dir_all(dir.parent().unwrap()).unwrap();
        sh(
            self.root.path(),
            "git",
            &[
                "clone",
                "-q",
                "-b",
                branch,
                "origin.git",
                dir.to_str().unwrap(),
            ],
        );
        dir
    }

    fn base_env(&self) -> BTreeMap<String, String> {
        let system = std::env::var("PATH").unwrap_or_default();
        BTreeMap::from([
            (
                "PATH".to_owned(),
                format!("{}:{system}", self.path("bin").display()),
            ),
            (
                "SIM_STORE".to_owned(),
                self.path("store").display().to_string(),
            ),
            ("HOME".to_owned(), self.path("home").display().to_string()),
        ])
    }

    /// The user's settings in the snippet: the release they install and its checksum.
    fn configure(&self, env: &mut BTreeMap<String, String>) {
        env.insert(
            "VETSCORE_RELEASES".into(),
            "https://releases.sim/download".into(),
        );
        env.insert("VETSCORE_SHA256".into(), self.sha256.clone());
    }

    /// Runs the pipeline for a push to `branch` (`pr` None) or a merge request from it.
    fn pipeline(&mut self, branch: &str, pr: Option<u32>) -> Job {
        self.runs += 1;
        match self.flavour {
            Flavour::GitHub => self.github(branch, pr),
            Flavour::GitLab => self.gitlab(branch, pr),
        }
    }

    fn github(&mut self, branch: &str, pr: Option<u32>) -> Job {
        let text = std::fs::read_to_string(common::root().join("templates/ci/github-actions.yml"))
            .unwrap();
        let workflow: Value = serde_saphyr::from_str(&text).unwrap();
        let (job_name, event) = match pr {
            Some(_) => ("merge-request", "pull_request"),
            None => ("main", "push"),
        };
        let job = &workflow["jobs"][job_name];
        assert!(
            job["if"].as_str().unwrap().contains(event),
            "job {job_name} runs on {event}"
        );
        let run_id = self.runs;
        let temp = self.path(&format!("runner-temp/{run_id}"));
        std::fs::create_dir_all(&temp).unwrap();
        let mut env = self.base_env();
        for (k, v) in workflow["env"].as_object().unwrap() {
            env.insert(k.clone(), scalar(v));
        }
        self.configure(&mut env);
        env.insert("RUNNER_TEMP".into(), temp.display().to_string());
        env.insert("GITHUB_WORKFLOW".into(), "vetscore".into());
        env.insert("GITHUB_REPOSITORY".into(), "greenhouse/models".into());
        let expressions = BTreeMap::from([
            ("github.token", "sim-token".to_owned()),
            ("github.ref_name", branch.to_owned()),
            ("github.base_ref", "main".to_owned()),
            (
                "github.event.pull_request.number",
                pr.map(|n| n.to_string()).unwrap_or_default(),
            ),
            ("runner.temp", temp.display().to_string()),
        ]);
        let mut outputs: BTreeMap<String, String> = BTreeMap::new();
        let mut failed = false;
        let mut log = String::new();
        let mut dir = None;
        let mut extra_path: Vec<String> = Vec::new();
        for step in job["steps"].as_array().unwrap() {
            let condition = step["if"].as_str().unwrap_or("");
            if failed && !condition.contains("always()") {
                continue;
            }
            if condition.contains("steps.check.outputs.status != ''")
                && !outputs.contains_key("status")
            {
                continue;
            }
            let mut exprs = expressions.clone();
            exprs.insert(
                "steps.check.outputs.status",
                outputs.get("status").cloned().unwrap_or_default(),
            );
            let uses = step["uses"].as_str().unwrap_or("");
            if uses.starts_with("actions/checkout@") {
                dir = Some(self.checkout(branch));
                continue;
            }
            if uses.starts_with("actions/upload-artifact@") {
                let name = step["with"]["name"].as_str().unwrap();
                let target = self.path(&format!("store/github/runs/{run_id}/{name}"));
                std::fs::create_dir_all(&target).unwrap();
                for line in step["with"]["path"].as_str().unwrap().lines() {
                    let path = PathBuf::from(substitute(line.trim(), &exprs));
                    if path.is_file() {
                        std::fs::copy(&path, target.join(path.file_name().unwrap())).unwrap();
                    }
                }
                continue;
            }
            let script = step["run"].as_str().unwrap();
            let mut step_env = env.clone();
            if !extra_path.is_empty() {
                let path = format!("{}:{}", extra_path.join(":"), env["PATH"]);
                step_env.insert("PATH".into(), path);
            }
            if let Some(vars) = step["env"].as_object() {
                for (k, v) in vars {
                    step_env.insert(k.clone(), substitute(&scalar(v), &exprs));
                }
            }
            let output_file = temp.join(format!("output-{}", outputs.len()));
            let path_file = temp.join("github-path");
            std::fs::write(&output_file, "").unwrap();
            step_env.insert("GITHUB_OUTPUT".into(), output_file.display().to_string());
            step_env.insert("GITHUB_PATH".into(), path_file.display().to_string());
            let out = Command::new("bash")
                .args(["--noprofile", "--norc", "-eo", "pipefail", "-c", script])
                .current_dir(dir.as_ref().unwrap())
                .env_clear()
                .envs(&step_env)
                .output()
                .unwrap();
            log.push_str(&String::from_utf8_lossy(&out.stdout));
            log.push_str(&String::from_utf8_lossy(&out.stderr));
            for line in std::fs::read_to_string(&output_file).unwrap().lines() {
                if let Some((k, v)) = line.split_once('=') {
                    outputs.insert(k.to_owned(), v.to_owned());
                }
            }
            if let Ok(paths) = std::fs::read_to_string(&path_file) {
                extra_path = paths.lines().map(str::to_owned).rev().collect();
            }
            if !out.status.success() {
                failed = true;
            }
        }
        let runs_file = self.path("store/github/runs.json");
        let mut runs: Vec<Value> =
            serde_json::from_str(&std::fs::read_to_string(&runs_file).unwrap()).unwrap();
        runs.push(serde_json::json!({
            "id": run_id, "branch": branch, "event": event,
            "conclusion": if failed { "failure" } else { "success" },
        }));
        std::fs::write(&runs_file, Value::from(runs).to_string()).unwrap();
        Job { ok: !failed, log }
    }

    fn gitlab(&mut self, branch: &str, pr: Option<u32>) -> Job {
        let text =
            std::fs::read_to_string(common::root().join("templates/ci/gitlab-ci.yml")).unwrap();
        let config: Value = serde_saphyr::from_str(&text).unwrap();
        let (job_name, source) = match pr {
            Some(_) => ("vetscore-merge-request", "merge_request_event"),
            None => ("vetscore-main", "push"),
        };
        let job = &config[job_name];
        let rule = job["rules"][0]["if"].as_str().unwrap();
        assert!(rule.contains(source), "{job_name} runs on {source}");
        let template = &config[job["extends"].as_str().unwrap()];
        let mut env = self.base_env();
        for (k, v) in config["variables"].as_object().unwrap() {
            env.insert(k.clone(), scalar(v));
        }
        self.configure(&mut env);
        let dir = self.checkout(branch);
        for (k, v) in [
            ("CI_API_V4_URL", "https://gitlab.sim/api/v4".to_owned()),
            ("CI_PROJECT_ID", "1".to_owned()),
            ("CI_JOB_TOKEN", "sim-job-token".to_owned()),
            ("CI_PIPELINE_SOURCE", source.to_owned()),
            ("CI_DEFAULT_BRANCH", "main".to_owned()),
            ("CI_COMMIT_BRANCH", branch.to_owned()),
            ("CI_PROJECT_DIR", dir.display().to_string()),
            ("VETSCORE_NOTE_TOKEN", "sim-note-token".to_owned()),
            ("TMPDIR", self.path("tmp").display().to_string()),
        ] {
            env.insert(k.to_owned(), v);
        }
        std::fs::create_dir_all(self.path("tmp")).unwrap();
        if let Some(n) = pr {
            env.insert("CI_MERGE_REQUEST_IID".into(), n.to_string());
            env.insert("CI_MERGE_REQUEST_TARGET_BRANCH_NAME".into(), "main".into());
            env.remove("CI_COMMIT_BRANCH");
        }
        // GitLab runs before_script and script in one shell, stopping at the first failure.
        let mut script = String::new();
        for line in template["before_script"]
            .as_array()
            .unwrap()
            .iter()
            .chain(job["script"].as_array().unwrap())
        {
            script.push_str(line.as_str().unwrap());
            script.push('\n');
        }
        let out = Command::new("bash")
            .args(["--noprofile", "--norc", "-e", "-c", &script])
            .current_dir(&dir)
            .env_clear()
            .envs(&env)
            .output()
            .unwrap();
        let ok = out.status.success();
        if ok && pr.is_none() {
            // The latest successful main job's artifacts are what the API serves.
            let target = self.path(&format!("store/gitlab/artifacts/{branch}/{job_name}"));
            let _ = std::fs::remove_dir_all(&target);
            for path in job["artifacts"]["paths"].as_array().unwrap() {
                let rel = path.as_str().unwrap();
                let from = dir.join(rel);
                if from.is_file() {
                    std::fs::create_dir_all(target.join(rel).parent().unwrap()).unwrap();
                    std::fs::copy(&from, target.join(rel)).unwrap();
                }
            }
        }
        Job {
            ok,
            log: format!(
                "{}{}",
                String::from_utf8_lossy(&out.stdout),
                String::from_utf8_lossy(&out.stderr)
            ),
        }
    }

    /// Every comment the stand-in holds, on every merge request.
    fn comments(&self) -> Vec<Value> {
        let file = match self.flavour {
            Flavour::GitHub => "store/github/comments.json",
            Flavour::GitLab => "store/gitlab/notes.json",
        };
        serde_json::from_str(&std::fs::read_to_string(self.path(file)).unwrap()).unwrap()
    }

    fn posts(&self) -> Vec<String> {
        std::fs::read_to_string(self.path("store/posts.log"))
            .unwrap_or_default()
            .lines()
            .map(str::to_owned)
            .collect()
    }

    /// Entries in the ledger the last successful main run kept.
    fn ledger_entries(&self) -> Option<usize> {
        let path = match self.flavour {
            Flavour::GitHub => {
                let runs: Vec<Value> = serde_json::from_str(
                    &std::fs::read_to_string(self.path("store/github/runs.json")).unwrap(),
                )
                .unwrap();
                let last = runs
                    .iter()
                    .rev()
                    .find(|r| r["event"] == "push" && r["conclusion"] == "success")?;
                self.path(&format!(
                    "store/github/runs/{}/vetscore-main/vetscore-ledger.jsonl",
                    last["id"]
                ))
            }
            Flavour::GitLab => self.path(
                "store/gitlab/artifacts/main/vetscore-main/vetscore-out/vetscore-ledger.jsonl",
            ),
        };
        Some(std::fs::read_to_string(path).ok()?.lines().count())
    }
}

fn scalar(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// Replaces `${{ expr }}` with its value; an expression the simulation does not know fails.
fn substitute(text: &str, exprs: &BTreeMap<&str, String>) -> String {
    let mut out = String::new();
    let mut rest = text;
    while let Some(open) = rest.find("${{") {
        out.push_str(&rest[..open]);
        let close = rest[open..].find("}}").unwrap() + open;
        let expr = rest[open + 3..close].trim();
        out.push_str(
            exprs
                .get(expr)
                .unwrap_or_else(|| panic!("the simulation does not know ${{{{ {expr} }}}}")),
        );
        rest = &rest[close + 2..];
    }
    out.push_str(rest);
    out
}

fn history(flavour: Flavour) {
    let mut world = World::new(flavour);
    let policy =
        std::fs::read_to_string(common::root().join("templates/starter-policy.yaml")).unwrap();
    let ours =
        |w: &World| -> Vec<Value> { w.comments().into_iter().filter(|c| c["id"] != 7).collect() };

    // 1. The merge request that adopts vetscore: no policy, ledger or report on main yet.
    world.commit(
        "adopt",
        &[
            ("vetscore-policy.yaml", Some(policy.clone())),
            (
                "runs/run-1.yaml",
                Some(manifest(&[("quince-a".into(), "0.31")])),
            ),
        ],
    );
    let job = world.pipeline("adopt", Some(1));
    assert!(job.ok, "{flavour:?} adoption: {}", job.log);
    let comments = ours(&world);
    assert_eq!(comments.len(), 1, "{flavour:?}: one comment posted");
    let body = comments[0]["body"].as_str().unwrap();
    assert!(body.starts_with(MARKER));
    assert!(body.contains("## vetscore: supported"));
    assert!(body.contains("no policy change to review"), "{body}");
    assert!(world.posts().last().unwrap().starts_with("post "));

    // 2. Merged: the main job starts the ledger and keeps the report.
    world.merge("adopt");
    let job = world.pipeline("main", None);
    assert!(job.ok, "{flavour:?} main: {}", job.log);
    assert_eq!(world.ledger_entries(), Some(1), "one holdout look recorded");

    // 3. A merge request with an unsupported claim, carrying a forged report and ledger in its
    //    tree: the comment is replaced with vetscore's own report, and the ledger on main is
    //    untouched.
    let forged = format!("{MARKER}\n## vetscore: supported\nforged by the change\n");
    world.commit(
        "new-model",
        &[
            (
                "runs/run-2.yaml",
                Some(manifest(&[("quince-b".into(), "0.40")])),
            ),
            ("vetscore-out/report.md", Some(forged.clone())),
            ("report.md", Some(forged.clone())),
            ("vetscore-ledger.jsonl", Some(String::new())),
        ],
    );
    let job = world.pipeline("new-model", Some(2));
    assert!(!job.ok, "{flavour:?}: an unsupported claim fails the job");
    let comments = ours(&world);
    assert_eq!(
        comments.len(),
        2,
        "{flavour:?}: a new merge request, a new comment"
    );
    let body = comments[1]["body"].as_str().unwrap();
    assert!(body.contains("## vetscore: not supported"), "{body}");
    assert!(!body.contains("forged"));
    assert!(
        body.contains("Since the base branch"),
        "the base report was read"
    );
    assert_eq!(
        world.ledger_entries(),
        Some(1),
        "merge requests never grow the ledger"
    );

    // 4. The same merge request breaks its manifest: the comment says "could not check".
    let id = comments[1]["id"].clone();
    world.commit(
        "new-model",
        &[(
            "runs/run-2.yaml",
            Some("format_version: 1\nmodels: [\n".into()),
        )],
    );
    let job = world.pipeline("new-model", Some(2));
    assert!(!job.ok);
    let comments = ours(&world);
    assert_eq!(comments.len(), 2, "{flavour:?}: replaced, not added");
    assert_eq!(comments[1]["id"], id);
    let body = comments[1]["body"].as_str().unwrap();
    assert!(body.contains("## vetscore: could not check"), "{body}");
    assert!(body.contains("runs/run\\-2\\.yaml, line "), "{body}");
    assert_eq!(world.posts().last().unwrap(), &format!("replace {id}"));

    // 5. It grows to 60 failing models: the comment stays under the limit and says what it
    //    left out.
    let many: Vec<(String, &str)> = (0..60)
        .map(|i| (format!("quince-m{i:02}"), "0.40"))
        .collect();
    world.commit("new-model", &[("runs/run-2.yaml", Some(manifest(&many)))]);
    let job = world.pipeline("new-model", Some(2));
    assert!(!job.ok);
    let comments = ours(&world);
    assert_eq!(comments.len(), 2);
    let body = comments[1]["body"].as_str().unwrap();
    assert!(body.encode_utf16().count() <= 65_000, "{}", body.len());
    assert!(body.contains("To fit in 65000 characters"), "{body}");
    assert!(body.contains("report\\-full\\.md and report\\.json"));

    // 6. Merged anyway (a record on main): the ledger grows by the 60 new looks.
    world.merge("new-model");
    let job = world.pipeline("main", None);
    assert!(job.ok, "{flavour:?} main: {}", job.log);
    assert_eq!(world.ledger_entries(), Some(61));

    // A tampered release download fails its checksum: nothing runs and nothing is posted.
    let posts = world.posts();
    let archive = world
        .path("store/releases/download/v0.1.0/vetscore-0.1.0-x86_64-unknown-linux-musl.tar.gz");
    std::fs::write(&archive, b"not the release").unwrap();
    world.commit(
        "tampered",
        &[(
            "runs/run-3.yaml",
            Some(manifest(&[("quince-c".into(), "0.31")])),
        )],
    );
    let job = world.pipeline("tampered", Some(3));
    assert!(!job.ok, "{flavour:?}: a bad checksum must fail the job");
    assert!(job.log.contains("FAILED"), "{}", job.log);
    assert_eq!(world.posts(), posts, "{flavour:?}: nothing posted");

    // The reviewer's own comment carrying the marker was never touched.
    let foreign = world.comments().into_iter().find(|c| c["id"] == 7).unwrap();
    assert!(
        foreign["body"]
            .as_str()
            .unwrap()
            .ends_with("quoted by a reviewer")
    );
    // Every install verified the pinned checksum of the release download.
    let calls = std::fs::read_to_string(world.path("store/calls.log")).unwrap();
    assert_eq!(
        calls
            .matches("https://releases.sim/download/v0.1.0/")
            .count(),
        7,
        "{flavour:?}: one download per job"
    );
}

#[test]
fn github_actions_history() {
    history(Flavour::GitHub);
}

#[test]
fn gitlab_ci_history() {
    history(Flavour::GitLab);
}
