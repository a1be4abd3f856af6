//! The rules of a study session around its journal: whether a journal
//! found beside a study's outputs belongs to it, which finished points a
//! resumed study takes over, what a fresh journal starts with, the
//! wall-clock time limit, and how a study ends (complete, stopped by its
//! time limit with its journal kept for a resume, or with failed points).
//!
//! The caller does the file work — reading the journal found, locking
//! the folder, writing the fresh journal atomically, appending each
//! finished row ([`super::journal::row_line`]) and removing the journal
//! when [`Ending::keeps_journal`] says so — and words the outcome for
//! people. This module decides from the text alone.

use super::journal::{header_line, read_journal, row_line};
use super::rows::{Manifest, StudyTable};
use super::run::Finished;
use super::StudyError;
use std::collections::BTreeMap;
use std::time::{Duration, Instant};

/// What the caller found where a study's journal goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Found<'a> {
    /// No journal there.
    Nothing,
    /// A file is there but could not be read (it is replaced unless the
    /// study resumes, when the caller reports the read error itself).
    Unreadable,
    /// A journal's text.
    Text(&'a str),
}

/// Why a study cannot start against the journal found, or with the
/// settings given.
#[derive(Debug, Clone, thiserror::Error)]
#[non_exhaustive]
pub enum SessionError {
    /// The journal to resume from does not read (a complete line that is
    /// damaged, or a row that does not fit its manifest).
    #[error("{0}")]
    Unreadable(#[source] StudyError),
    /// The journal holds the points of a different study (scenario,
    /// settings or version differ): never taken over, never replaced.
    #[error(
        "the journal belongs to a different study (scenario, options or version differ){}",
        if *resuming { "" } else { " and holds its unfinished points" }
    )]
    OtherStudy {
        /// Whether the study was asked to resume (rather than to start
        /// afresh).
        resuming: bool,
    },
    /// A wall-clock time limit that is not a number of seconds above 0
    /// and below [`MAX_TIME_LIMIT_S`].
    #[error("a time limit of {seconds} s: give a number of seconds above 0 (and below 1e9)")]
    TimeLimit {
        /// The limit given, s.
        seconds: f64,
    },
}

/// How a study starts.
#[derive(Debug, Clone, PartialEq)]
pub struct Opening {
    /// The finished points taken over from the journal, by index (empty
    /// unless resuming a journal of this very study).
    pub taken_over: BTreeMap<usize, Finished>,
    /// Whether a journal found there (of this study, or one that does
    /// not read) is replaced without taking its points.
    pub replaces_earlier: bool,
}

impl Opening {
    /// The fresh journal's text, line by line: the header, then the
    /// points taken over (a partly written last line of the old journal
    /// is gone). Finished rows are appended after it.
    pub fn journal_head<'a>(&'a self, m: &Manifest) -> impl Iterator<Item = String> + 'a {
        std::iter::once(header_line(m)).chain(self.taken_over.values().map(row_line))
    }
}

/// Decides how the study `m` starts against the journal `found` beside
/// its outputs. Resuming takes over exactly the finished points of a
/// journal of the same study (the same manifest: scenario, settings,
/// points and version); a journal of another study is refused whether
/// resuming or not, so its unfinished points are never thrown away.
/// Without resuming, a journal of this study (or one that does not read)
/// is replaced.
pub fn open(m: &Manifest, found: Found<'_>, resume: bool) -> Result<Opening, SessionError> {
    let fresh = |replaces_earlier| Opening {
        taken_over: BTreeMap::new(),
        replaces_earlier,
    };
    match (found, resume) {
        (Found::Nothing, _) => Ok(fresh(false)),
        (Found::Unreadable, true) => Ok(fresh(false)),
        (Found::Unreadable, false) => Ok(fresh(true)),
        (Found::Text(text), true) => match read_journal(text).map_err(SessionError::Unreadable)? {
            None => Ok(fresh(false)),
            Some(j) if j.manifest != *m => Err(SessionError::OtherStudy { resuming: true }),
            Some(j) => Ok(Opening {
                taken_over: j.finished,
                replaces_earlier: false,
            }),
        },
        (Found::Text(text), false) => match read_journal(text) {
            Ok(Some(j)) if j.manifest != *m => Err(SessionError::OtherStudy { resuming: false }),
            _ => Ok(fresh(true)),
        },
    }
}

/// The longest wall-clock time limit accepted, s.
pub const MAX_TIME_LIMIT_S: f64 = 1e9;

/// The moment no new point starts, `seconds` after `started` (None: no
/// limit).
pub fn deadline(started: Instant, seconds: Option<f64>) -> Result<Option<Instant>, SessionError> {
    match seconds {
        None => Ok(None),
        Some(t) if t.is_finite() && t > 0.0 && t < MAX_TIME_LIMIT_S => {
            Ok(Some(started + Duration::from_secs_f64(t)))
        }
        Some(t) => Err(SessionError::TimeLimit { seconds: t }),
    }
}

/// How a study (its table written) ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Ending {
    /// Every point ran.
    Complete,
    /// The time limit stopped it: `ran` of `of` points are in the table
    /// (marked incomplete) and the journal is kept for a resume.
    Stopped {
        /// Points that ran.
        ran: usize,
        /// Points the study (or its shard) has.
        of: usize,
    },
    /// Every point was tried but `failed` of `of` failed (their rows
    /// carry the error).
    SomeFailed {
        /// Points that failed.
        failed: usize,
        /// Points in the table.
        of: usize,
    },
}

impl Ending {
    /// How the study of table `t` ends: stopped (when its manifest is
    /// marked incomplete) before failed points, failed points before
    /// complete.
    pub fn of(t: &StudyTable) -> Ending {
        if let Some(inc) = &t.manifest.incomplete {
            Ending::Stopped {
                ran: inc.ran,
                of: inc.of,
            }
        } else if t.any_failed() {
            Ending::SomeFailed {
                failed: t.failed(),
                of: t.rows.len(),
            }
        } else {
            Ending::Complete
        }
    }

    /// Whether the journal is kept once the table is written: only for a
    /// study its time limit stopped (the table then holds every row of a
    /// study that was not stopped).
    pub fn keeps_journal(self) -> bool {
        matches!(self, Ending::Stopped { .. })
    }
}

#[cfg(test)]
mod tests;
