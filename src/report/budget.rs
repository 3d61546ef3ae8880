//! The comment budget: the Markdown report must fit the host's limit whatever the number of
//! models, so it degrades in a fixed order and says what it left out.
//!
//! The view lists failing models first (then models with warnings, then supported ones), so every
//! cut below keeps the most important models. The order of degradation:
//!
//! 1. the full report;
//! 2. details only for models that are not plainly supported: supported models keep their table
//!    row and lose their details section;
//! 3. details for as many of the remaining models as fit (a prefix of the list), and each list in
//!    the "since base" section cut to [`LIST_LIMIT`] entries;
//! 4. no details, and table rows for as many models as fit;
//! 5. a fixed short text with the verdict, the counts and where the full report is.
//!
//! Each stage is rendered by the caller's template through [`Layout`]; this module only chooses
//! the layout and measures the result. Pure: no I/O.

use serde::Serialize;

/// How the Markdown is measured against the limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    /// UTF-16 code units: what a browser's `String.length` counts, never fewer than the
    /// characters, so a limit in characters holds on either reading (common practice, no source).
    Utf16,
    /// Bytes of UTF-8, as a file-size limit counts them.
    Bytes,
}

impl Measure {
    pub fn size(self, text: &str) -> usize {
        match self {
            Measure::Utf16 => text.encode_utf16().count(),
            Measure::Bytes => text.len(),
        }
    }
}

/// The default comment limit: below GitHub's 65,536 characters per comment, the strictest of the
/// common hosts (GitLab allows 1,000,000 per note). Limits as the hosts document them, from
/// memory.
pub const DEFAULT_MAX_CHARS: usize = 65_000;
/// The step-summary limit: GitHub refuses a step summary above 1 MiB; this stays under it.
pub const STEP_SUMMARY_MAX_BYTES: usize = 1_000_000;
/// The smallest `--max-chars` accepted: room for the short fallback text with long file names.
pub const MIN_MAX_CHARS: usize = 2_000;
/// Entries kept in each "since base" list once the report has to be cut.
pub const LIST_LIMIT: usize = 20;

/// What the template renders: the first `rows` models get a table row, the first `details`
/// models a details section, each "since base" list at most `list_limit` entries, and `omitted`
/// is the sentence (already safe Markdown) saying what was left out.
#[derive(Debug, Clone, Serialize, PartialEq, Eq)]
pub struct Layout {
    pub rows: usize,
    pub details: usize,
    pub list_limit: usize,
    pub omitted: Option<String>,
}

impl Layout {
    /// Everything shown.
    pub fn full(models: usize) -> Layout {
        Layout {
            rows: models,
            details: models,
            list_limit: usize::MAX >> 12,
            omitted: None,
        }
    }
}

/// What the budget needs to know about the report.
#[derive(Debug, Clone)]
pub struct Subject<'a> {
    /// Models in the view.
    pub models: usize,
    /// How many of them (a prefix of the view's list) are not plainly supported.
    pub not_plainly_supported: usize,
    /// The verdict heading and counts line for the short fallback text.
    pub fallback_heading: &'a str,
    /// Where the full report is, as safe Markdown (e.g. "report-full.md and report.json, kept as
    /// CI artifacts").
    pub full_report: &'a str,
}

/// The budgeted Markdown and the layout it was rendered with (`None` for the fallback text).
#[derive(Debug, Clone)]
pub struct Fitted {
    pub text: String,
    pub layout: Option<Layout>,
}

/// Renders the largest layout that fits `limit` under `measure`, in the order of the module doc.
pub fn fit<E>(
    subject: &Subject<'_>,
    limit: usize,
    measure: Measure,
    mut render: impl FnMut(&Layout) -> Result<String, E>,
) -> Result<Fitted, E> {
    let n = subject.models;
    let f = subject.not_plainly_supported.min(n);
    let mut attempt = |layout: Layout| -> Result<Option<Fitted>, E> {
        let text = render(&layout)?;
        Ok((measure.size(&text) <= limit).then_some(Fitted {
            text,
            layout: Some(layout),
        }))
    };
    if let Some(done) = attempt(Layout::full(n))? {
        return Ok(done);
    }
    let cut = |rows: usize, details: usize| Layout {
        rows,
        details,
        list_limit: LIST_LIMIT,
        omitted: Some(omitted_sentence(
            n,
            rows,
            details,
            limit,
            subject.full_report,
        )),
    };
    if f < n {
        let layout = Layout {
            list_limit: usize::MAX >> 12,
            ..cut(n, f)
        };
        if let Some(done) = attempt(layout)? {
            return Ok(done);
        }
    }
    if let Some(best) = attempt(cut(n, 0))? {
        // Stage 3: as many details as fit, failing models first.
        let found = largest(f, |d| attempt(cut(n, d)))?;
        return Ok(found.unwrap_or(best));
    }
    if let Some(best) = attempt(cut(0, 0))? {
        let found = largest(n, |r| attempt(cut(r, 0)))?;
        return Ok(found.unwrap_or(best));
    }
    let text = format!(
        "{}\n{}\n\nThis report does not fit in {limit} characters even without listing any \
         model. The full report is in {}.\n",
        super::templates::MARKER,
        subject.fallback_heading,
        subject.full_report
    );
    Ok(Fitted { text, layout: None })
}

/// The largest `x` in `1..=max` for which `try_at` gives `Some`, assuming the sizes grow with
/// `x`; searched upward in doubling steps, so no probe renders far more than the limit.
pub(crate) fn largest<E>(
    max: usize,
    mut try_at: impl FnMut(usize) -> Result<Option<Fitted>, E>,
) -> Result<Option<Fitted>, E> {
    let mut best: Option<Fitted> = None;
    let (mut good, mut bad) = (0usize, max + 1);
    // Gallop up from the small end, then bisect between the last fit and the first miss.
    let mut probe = 1usize;
    while probe < bad {
        match try_at(probe)? {
            Some(fitted) => {
                good = probe;
                best = Some(fitted);
                probe = probe.saturating_mul(2).min(max.max(probe + 1));
                if good == max {
                    break;
                }
            }
            None => bad = probe,
        }
    }
    while bad - good > 1 {
        let mid = good + (bad - good) / 2;
        match try_at(mid)? {
            Some(fitted) => {
                good = mid;
                best = Some(fitted);
            }
            None => bad = mid,
        }
    }
    Ok(best)
}

fn omitted_sentence(
    models: usize,
    rows: usize,
    details: usize,
    limit: usize,
    full: &str,
) -> String {
    let plural = |n: usize| if n == 1 { "model" } else { "models" };
    let mut parts = Vec::new();
    if details < models {
        parts.push(format!(
            "the details of {} of {models} {} are left out",
            models - details,
            plural(models)
        ));
    }
    if rows < models {
        parts.push(format!(
            "{} {} not listed in the table",
            models - rows,
            if models - rows == 1 {
                "model is"
            } else {
                "models are"
            }
        ));
    }
    format!(
        "To fit in {limit} characters, {}. The full report is in {full}.",
        parts.join(" and ")
    )
}

/// The report's Markdown within `limit`: the largest layout of the module doc that fits.
/// `full_report` says where the whole report is, as safe Markdown.
pub fn markdown(
    prepared: &super::templates::Prepared<'_>,
    view: &super::view::View,
    limit: usize,
    measure: Measure,
    full_report: &str,
) -> anyhow::Result<String> {
    let not_plainly_supported = view
        .models
        .iter()
        .filter(|m| m.verdict != crate::finding::Verdict::Supported)
        .count();
    let heading = format!(
        "## vetscore: {}\n\n**{} of {} models are not supported; {} have warnings.**",
        view.verdict_label,
        view.counts.not_supported,
        view.counts.models,
        view.counts.with_warnings
    );
    let subject = Subject {
        models: view.models.len(),
        not_plainly_supported,
        fallback_heading: &heading,
        full_report,
    };
    Ok(fit(&subject, limit, measure, |layout| prepared.render(layout))?.text)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A stand-in renderer: a header, 10 characters per row, 100 per details section.
    fn render(layout: &Layout) -> Result<String, ()> {
        let mut s = "H".repeat(50);
        s.push_str(&"r".repeat(10 * layout.rows));
        s.push_str(&"d".repeat(100 * layout.details));
        if let Some(o) = &layout.omitted {
            s.push_str(o);
        }
        Ok(s)
    }

    fn subject(models: usize, failing: usize) -> Subject<'static> {
        Subject {
            models,
            not_plainly_supported: failing,
            fallback_heading: "## vetscore: not supported",
            full_report: "report-full.md",
        }
    }

    #[test]
    fn a_report_that_fits_is_left_whole() {
        let fitted = fit(&subject(3, 1), 10_000, Measure::Bytes, render).unwrap();
        assert_eq!(fitted.layout, Some(Layout::full(3)));
    }

    #[test]
    fn supported_models_lose_their_details_first() {
        // 10 models, 2 failing: full is 50 + 100 + 1000 = 1150; failing details only: 350 + note.
        let fitted = fit(&subject(10, 2), 600, Measure::Bytes, render).unwrap();
        let layout = fitted.layout.unwrap();
        assert_eq!((layout.rows, layout.details), (10, 2));
        assert!(layout.omitted.unwrap().contains("8 of 10 models"));
    }

    #[test]
    fn then_details_are_dropped_from_the_end_then_rows() {
        // 40 failing models: rows cost 400, each details section 100, the note about 120.
        let fitted = fit(&subject(40, 40), 1_000, Measure::Bytes, render).unwrap();
        let layout = fitted.layout.unwrap();
        assert_eq!(layout.rows, 40);
        assert!(layout.details >= 3 && layout.details <= 5, "{layout:?}");
        assert!(fitted.text.len() <= 1_000);
        // A limit below the table drops rows.
        let fitted = fit(&subject(400, 400), 1_000, Measure::Bytes, render).unwrap();
        let layout = fitted.layout.unwrap();
        assert_eq!(layout.details, 0);
        assert!(layout.rows > 50 && layout.rows < 100, "{layout:?}");
        assert!(layout.omitted.unwrap().contains("models are not listed"));
    }

    #[test]
    fn the_largest_fitting_prefix_is_found_exactly() {
        for limit in [0usize, 1, 7, 64, 65, 1000] {
            let found = largest(100, |x| -> Result<Option<Fitted>, ()> {
                Ok((x <= limit).then(|| Fitted {
                    text: x.to_string(),
                    layout: None,
                }))
            })
            .unwrap();
            let expected = limit.min(100);
            assert_eq!(
                found.map(|f| f.text),
                (expected > 0).then(|| expected.to_string())
            );
        }
    }

    #[test]
    fn when_nothing_fits_the_short_text_says_where_the_report_is() {
        let fitted = fit(&subject(10, 10), 40, Measure::Bytes, render).unwrap();
        assert!(fitted.layout.is_none());
        assert!(fitted.text.starts_with(super::super::templates::MARKER));
        assert!(fitted.text.contains("report-full.md"));
    }

    #[test]
    fn utf16_counts_astral_characters_twice() {
        // U+1F345 (tomato) is one char and two UTF-16 code units (Unicode standard, common
        // practice, no source).
        assert_eq!(Measure::Utf16.size("a\u{1F345}"), 3);
        assert_eq!(Measure::Bytes.size("a\u{1F345}"), 5);
    }
}
