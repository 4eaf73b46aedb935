//! The error type of problem files: one diagnostic that carries the file, so it renders with
//! `file:line:col`, the message, a label at the span and a help line.

use crate::canon::CanonError;
use crate::expr::Span;
use miette::{LabeledSpan, NamedSource};
use std::sync::Arc;

/// An error in a problem file (or in reading it), with the file's text for rendering.
#[derive(Debug, Clone, thiserror::Error, miette::Diagnostic)]
#[error("{message}")]
pub struct ProblemError {
    /// One line saying what is wrong.
    pub message: String,
    /// Byte range in the file; empty (at 0) for an error about the file as a whole.
    pub span: Span,
    /// Short text shown at [`ProblemError::span`].
    pub label: &'static str,
    /// How to fix it, when there is something useful to say.
    #[help]
    pub help: Option<String>,
    /// What is drawn: the primary label at `span` (absent for an error about the file as a
    /// whole), then the places that explain it.
    #[label(collection)]
    labels: Vec<LabeledSpan>,
    /// The file's path and text.
    #[source_code]
    pub source_code: Arc<NamedSource<String>>,
    /// Set when a size or time limit stopped building an expression: not an error in the
    /// file, and callers report it as undecided (too large, too slow), not as bad input.
    /// Boxed: it is rare, and without it every `Result<_, ProblemError>` would carry its size.
    pub limit: Option<Box<CanonError>>,
}

impl ProblemError {
    /// An error at `span` of the file `path` with contents `text`; the span is clamped to the
    /// text and widened to char boundaries, so it is always valid.
    #[must_use]
    pub fn new(
        path: &str,
        text: &str,
        message: impl Into<String>,
        span: Span,
        label: &'static str,
    ) -> ProblemError {
        let span = valid_span(text, span);
        ProblemError {
            message: message.into(),
            span,
            label,
            help: None,
            labels: vec![LabeledSpan::new_primary_with_span(
                Some(label.to_string()),
                span,
            )],
            source_code: Arc::new(NamedSource::new(path, text.to_string())),
            limit: None,
        }
    }

    /// An error about the file `path` as a whole (it cannot be read, say), with no place in it.
    #[must_use]
    pub fn whole_file(path: &str, message: impl Into<String>) -> ProblemError {
        ProblemError {
            message: message.into(),
            span: Span::new(0, 0),
            label: "",
            help: None,
            labels: Vec::new(),
            source_code: Arc::new(NamedSource::new(path, String::new())),
            limit: None,
        }
    }

    /// The same error, marked as a limit reached (see [`ProblemError::limit`]).
    #[must_use]
    pub fn with_limit(mut self, limit: CanonError) -> ProblemError {
        self.limit = Some(Box::new(limit));
        self
    }

    /// The same error with a help line.
    #[must_use]
    pub fn with_help(mut self, help: impl Into<String>) -> ProblemError {
        self.help = Some(help.into());
        self
    }

    /// The same error with a help line, if there is one.
    #[must_use]
    pub fn with_help_opt(mut self, help: Option<String>) -> ProblemError {
        self.help = help;
        self
    }

    /// The same error with another labelled place.
    #[must_use]
    pub fn with_related(mut self, span: Span, label: &str) -> ProblemError {
        let span = valid_span(self.source_code.inner(), span);
        self.labels.push(LabeledSpan::at(span, label));
        self
    }

    /// The places that explain the error, after its own: `(span, label)`.
    #[must_use]
    pub fn related(&self) -> Vec<(Span, &str)> {
        self.labels
            .iter()
            .filter(|l| !l.primary())
            .map(|l| {
                (
                    Span::new(l.offset(), l.offset() + l.len()),
                    l.label().unwrap_or(""),
                )
            })
            .collect()
    }

    /// The path (or label) of the file.
    #[must_use]
    pub fn path(&self) -> &str {
        self.source_code.name()
    }

    /// The file's text (empty when it could not be read).
    #[must_use]
    pub fn text(&self) -> &str {
        self.source_code.inner()
    }

    /// Line and column (both from 1, the column counted in chars) of the start of
    /// [`ProblemError::span`].
    #[must_use]
    pub fn line_col(&self) -> (usize, usize) {
        line_col(self.text(), self.span.start)
    }
}

/// Line and column, both from 1, of byte `pos` of `text` (the column in chars).
pub(super) fn line_col(text: &str, pos: usize) -> (usize, usize) {
    let pos = floor_boundary(text, pos);
    let before = &text[..pos];
    let line = before.matches('\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    (line, before[line_start..].chars().count() + 1)
}

fn floor_boundary(text: &str, pos: usize) -> usize {
    let mut p = pos.min(text.len());
    while !text.is_char_boundary(p) {
        p -= 1;
    }
    p
}

fn ceil_boundary(text: &str, pos: usize) -> usize {
    let mut p = pos.min(text.len());
    while !text.is_char_boundary(p) {
        p += 1;
    }
    p
}

/// `span` clamped to `text`, ordered, and widened to char boundaries.
fn valid_span(text: &str, span: Span) -> Span {
    let start = floor_boundary(text, span.start.min(span.end));
    let end = ceil_boundary(text, span.end.max(span.start)).max(start);
    Span::new(start, end)
}
