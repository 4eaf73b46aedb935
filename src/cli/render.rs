//! Error rendering that cannot panic and cannot be fooled by the text it shows.
//!
//! miette's graphical renderer draws the source lines as they are. Two kinds of input break
//! that: a line so long that a label sits beyond column 65535 (the renderer pads with a
//! `format!` width, which panics past `u16::MAX`), and control or bidirectional-override
//! characters (U+202E and friends), which make the terminal show something other than the
//! file's text. So before rendering, a report is rebuilt over a *display copy* of its
//! source: long lines cut to windows around the labels (elisions marked with `…`), control
//! and bidi characters written as `\u{..}` escapes, and the labels moved to match. Line
//! numbers are unchanged, and the column in the `[file:line:col]` header is that of the
//! original text (in chars), because the display copy answers the renderer's queries with
//! the original column. The message and help are escaped the same way.

use miette::{
    Diagnostic, LabeledSpan, MietteError, MietteSpanContents, SourceCode, SourceSpan, SpanContents,
};
use std::fmt;

/// Lines longer than this (in chars) are shown as windows around the labels.
const LONG_LINE: usize = 160;
/// Chars kept on each side of a label's start and end in a long line.
const WINDOW: usize = 40;

/// True for characters that are written as escapes: controls other than tab and line
/// breaks, and the bidirectional formatting characters.
fn is_hidden(c: char) -> bool {
    (c.is_control() && c != '\t' && c != '\n')
        || matches!(c, '\u{200e}' | '\u{200f}' | '\u{061c}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
}

/// `text` with hidden characters escaped (`\r` kept before `\n`).
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        if c == '\r' && chars.peek() == Some(&'\n') {
            out.push(c);
        } else if is_hidden(c) {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        } else {
            out.push(c);
        }
    }
    out
}

/// The display copy of a source text, with the offset maps both ways.
struct Shown {
    name: Option<String>,
    original: String,
    text: String,
    /// Display offset of every original byte offset (and of the end).
    to_display: Vec<usize>,
    /// Original offset of every display byte offset (and of the end).
    to_original: Vec<usize>,
}

impl Shown {
    fn new(name: Option<String>, original: String, points: &[usize]) -> Shown {
        let mut text = String::with_capacity(original.len());
        let mut to_display = vec![0; original.len() + 1];
        let mut to_original = Vec::with_capacity(original.len() + 1);
        let mut line_start = 0;
        for line in original.split_inclusive('\n') {
            let chars: Vec<(usize, char)> = line.char_indices().collect();
            // Which chars to keep: all of a short line; windows around the points of a long one.
            let keep: Vec<bool> = if chars.len() <= LONG_LINE {
                vec![true; chars.len()]
            } else {
                let mut keep = vec![false; chars.len()];
                let mut any = false;
                for &p in points {
                    if p < line_start || p > line_start + line.len() {
                        continue;
                    }
                    let ci = chars.partition_point(|&(b, _)| line_start + b < p);
                    let lo = ci.saturating_sub(WINDOW);
                    let hi = (ci + WINDOW).min(chars.len());
                    keep[lo..hi].iter_mut().for_each(|k| *k = true);
                    any = true;
                }
                if !any {
                    keep[..LONG_LINE / 2].iter_mut().for_each(|k| *k = true);
                }
                // Keep the line break.
                if let Some((_, '\n')) = chars.last() {
                    *keep.last_mut().expect("nonempty") = true;
                }
                keep
            };
            let mut elided = false;
            for (i, &(b, c)) in chars.iter().enumerate() {
                let at = line_start + b;
                if !keep[i] {
                    if !elided {
                        push_mapped(&mut text, &mut to_original, "…", at);
                        elided = true;
                    }
                    for k in 0..c.len_utf8() {
                        to_display[at + k] = text.len() - "…".len();
                    }
                    continue;
                }
                elided = false;
                for k in 0..c.len_utf8() {
                    to_display[at + k] = text.len();
                }
                let next_is_lf = chars.get(i + 1).is_some_and(|&(_, n)| n == '\n');
                if is_hidden(c) && !(c == '\r' && next_is_lf) {
                    push_mapped(
                        &mut text,
                        &mut to_original,
                        &format!("\\u{{{:x}}}", c as u32),
                        at,
                    );
                } else {
                    let mut buf = [0u8; 4];
                    push_mapped(&mut text, &mut to_original, c.encode_utf8(&mut buf), at);
                }
            }
            line_start += line.len();
        }
        to_display[original.len()] = text.len();
        to_original.push(original.len());
        Shown {
            name,
            original,
            text,
            to_display,
            to_original,
        }
    }

    fn span(&self, s: SourceSpan) -> SourceSpan {
        let clamp = |o: usize| self.to_display[o.min(self.original.len())];
        let start = clamp(s.offset());
        let end = clamp(s.offset() + s.len()).max(start);
        SourceSpan::new(start.into(), end - start)
    }
}

fn push_mapped(text: &mut String, to_original: &mut Vec<usize>, piece: &str, at: usize) {
    text.push_str(piece);
    to_original.extend(std::iter::repeat_n(at, piece.len()));
}

impl SourceCode for Shown {
    fn read_span<'a>(
        &'a self,
        span: &SourceSpan,
        before: usize,
        after: usize,
    ) -> Result<Box<dyn SpanContents<'a> + 'a>, MietteError> {
        let c = self.text.read_span(span, before, after)?;
        // The column of the span's start in the original text, in chars.
        let o = self.to_original[span.offset().min(self.text.len())];
        let line_start = self.original[..o].rfind('\n').map_or(0, |i| i + 1);
        let column = self.original[line_start..o].chars().count();
        let (data, cspan, line, count) = (c.data(), *c.span(), c.line(), c.line_count());
        Ok(Box::new(match &self.name {
            Some(n) => MietteSpanContents::new_named(n.clone(), data, cspan, line, column, count),
            None => MietteSpanContents::new(data, cspan, line, column, count),
        }))
    }
}

/// A report rebuilt over a display copy of its source.
struct Safe {
    message: String,
    help: Option<String>,
    labels: Vec<LabeledSpan>,
    source: Option<Shown>,
    inner: miette::Report,
}

impl fmt::Debug for Safe {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl fmt::Display for Safe {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Safe {}

impl Diagnostic for Safe {
    fn code<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.inner.code()
    }
    fn severity(&self) -> Option<miette::Severity> {
        self.inner.severity()
    }
    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.help
            .as_ref()
            .map(|h| Box::new(h) as Box<dyn fmt::Display>)
    }
    fn url<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.inner.url()
    }
    fn source_code(&self) -> Option<&dyn SourceCode> {
        self.source.as_ref().map(|s| s as &dyn SourceCode)
    }
    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        if self.labels.is_empty() {
            None
        } else {
            Some(Box::new(self.labels.iter().cloned()))
        }
    }
    fn related<'a>(&'a self) -> Option<Box<dyn Iterator<Item = &'a dyn Diagnostic> + 'a>> {
        self.inner.related()
    }
    fn diagnostic_source(&self) -> Option<&dyn Diagnostic> {
        self.inner.diagnostic_source()
    }
}

/// The whole text of a source, read through the renderer's own interface.
fn whole_text(source: &dyn SourceCode) -> Option<(Option<String>, String)> {
    let c = source
        .read_span(&SourceSpan::new(0.into(), 0), 0, usize::MAX)
        .ok()?;
    let text = String::from_utf8_lossy(c.data()).into_owned();
    Some((c.name().map(str::to_string), text))
}

/// `report`, rebuilt so that rendering it cannot panic and shows hidden characters.
pub fn safe(report: miette::Report) -> miette::Report {
    let message = escape(&report.to_string());
    let help = report.help().map(|h| escape(&h.to_string()));
    let labels: Vec<LabeledSpan> = report.labels().map(Iterator::collect).unwrap_or_default();
    let source = report.source_code().and_then(whole_text);
    let (source, labels) = match source {
        Some((name, text)) => {
            let points: Vec<usize> = labels
                .iter()
                .flat_map(|l| [l.offset(), l.offset() + l.len()])
                .collect();
            let shown = Shown::new(name, text, &points);
            let labels = labels
                .iter()
                .map(|l| {
                    let span = shown.span(*l.inner());
                    let label = l.label().map(escape);
                    if l.primary() {
                        LabeledSpan::new_primary_with_span(label, span)
                    } else {
                        LabeledSpan::new_with_span(label, span)
                    }
                })
                .collect();
            (Some(shown), labels)
        }
        None => (None, labels),
    };
    miette::Report::new(Safe {
        message,
        help,
        labels,
        source,
        inner: report,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn render(r: miette::Report) -> String {
        let mut out = String::new();
        miette::GraphicalReportHandler::new_themed(miette::GraphicalTheme::unicode_nocolor())
            .render_report(&mut out, r.as_ref())
            .unwrap();
        out
    }

    fn report(text: &str, at: usize, len: usize) -> miette::Report {
        miette::miette!(
            labels = vec![LabeledSpan::at(at..at + len, "here")],
            "bad thing"
        )
        .with_source_code(miette::NamedSource::new("f.toml", text.to_string()))
    }

    #[test]
    fn a_label_beyond_column_65535_renders_with_the_true_column() {
        let line = format!("xx = '{}y'", "x+".repeat(35_000));
        let text = format!("[perturbation]\n{line}\n");
        let at = text.find('y').unwrap();
        let out = render(safe(report(&text, at, 1)));
        assert!(out.contains("[f.toml:2:70007]"), "{out}");
        assert!(out.contains("…"), "{out}");
        assert!(out.lines().all(|l| l.chars().count() < 200), "{out}");
    }

    #[test]
    fn hidden_characters_are_escaped_and_labels_follow() {
        let text = "a = 'x + \u{202e}y'\nb = 'z\u{7}'\n";
        let at = text.find('y').unwrap();
        let out = render(safe(report(text, at, 1)));
        assert!(out.contains("\\u{202e}y"), "{out}");
        assert!(!out.contains('\u{202e}'), "{out}");
        assert!(out.contains("[f.toml:1:11]"), "{out}");
        // The caret sits under the `y`, after the escape.
        let src = out.lines().find(|l| l.contains("\\u{202e}y")).unwrap();
        let caret = out
            .lines()
            .find(|l| l.contains('┬') || l.contains('^'))
            .unwrap();
        let col = |s: &str, pat: char| s.chars().position(|c| c == pat).unwrap();
        assert_eq!(col(src, 'y'), col(caret, '┬'), "{out}");
        assert_eq!(escape("a\u{1b}[31m"), "a\\u{1b}[31m");
        assert_eq!(escape("ok\r\n"), "ok\r\n");
    }
}
