//! Typed errors of the library. The CLI renders them once, at the edge, and maps each kind to an
//! exit code: bad input is the user's to fix (exit 2), a solver or internal failure is ours (exit 1).

use std::fmt;

use serde::{Deserialize, Serialize};

/// Whether a file was being read or written when an I/O error happened.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum IoOp {
    /// Reading an input.
    Read,
    /// Writing an output.
    Write,
}

impl fmt::Display for IoOp {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            IoOp::Read => "read",
            IoOp::Write => "write",
        })
    }
}

/// Where in an input file something is wrong. Line and column are 1-based; either may be unknown
/// when the problem is about the file as a whole.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct Location {
    /// The file (empty when not yet known; see [`Error::in_file`]).
    pub file: String,
    /// 1-based line.
    pub line: Option<usize>,
    /// 1-based column.
    pub column: Option<usize>,
    /// The field path inside the document, e.g. `players[1].questions`.
    pub field: Option<String>,
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(column) = self.column {
                write!(f, ":{column}")?;
            }
        }
        if let Some(field) = &self.field {
            write!(f, " (field `{field}`)")?;
        }
        Ok(())
    }
}

/// Everything that can go wrong, by whose it is to fix.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The user's input is wrong: a file that does not parse, a field out of range, a formula that
    /// does not evaluate.
    #[error("{location}: {message}")]
    Input {
        /// Where.
        location: Location,
        /// What is wrong.
        message: String,
    },

    /// A command line that cannot be honoured as given (raised by the command-line layer only).
    #[error("{0}")]
    Usage(String),

    /// A library call with an argument out of its domain (e.g. a family parameter, an NPA level
    /// that does not parse, a confidence level outside (0, 1)).
    #[error("{0}")]
    InvalidArgument(String),

    /// The requested work would take too long or need too much memory. Carries the estimate so
    /// the user can decide whether to override.
    #[error("{what} is too large: {estimate}; {hint}")]
    TooLarge {
        /// What would be computed.
        what: String,
        /// The estimate of its cost.
        estimate: String,
        /// How to proceed (a smaller request, or the override).
        hint: String,
    },

    /// A numerical solver did not reach an answer we can report.
    #[error("solver failure in {stage}: {message}")]
    Solver {
        /// Which computation failed (e.g. `NPA`, `no-signalling LP`).
        stage: String,
        /// How the solver ended, when it said.
        status: Option<SolveStatus>,
        /// What went wrong, for people.
        message: String,
    },

    /// A file could not be read or written (`op` says which).
    #[error("cannot {op} {path}: {source}")]
    Io {
        /// The file.
        path: String,
        /// Reading or writing.
        op: IoOp,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
}

impl Error {
    /// Exit code convention of the CLI: 2 for anything the user can fix in the input or command
    /// line, 1 for failures on our side.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Input { .. }
            | Error::Usage(_)
            | Error::InvalidArgument(_)
            | Error::TooLarge { .. }
            | Error::Io { .. } => 2,
            Error::Solver { .. } => 1,
        }
    }

    /// Short machine-readable category used in JSON error output.
    pub fn kind(&self) -> &'static str {
        match self {
            Error::Input { .. } => "input",
            Error::Usage(_) | Error::InvalidArgument(_) => "usage",
            Error::TooLarge { .. } => "too_large",
            Error::Solver { .. } => "solver",
            Error::Io { .. } => "io",
        }
    }

    /// Where in an input the problem is, for input errors.
    pub fn location(&self) -> Option<&Location> {
        match self {
            Error::Input { location, .. } => Some(location),
            _ => None,
        }
    }

    /// A solver failure without a status (the solver did not say how it ended).
    pub fn solver(stage: &str, message: impl Into<String>) -> Self {
        Error::Solver {
            stage: stage.to_string(),
            status: None,
            message: message.into(),
        }
    }

    /// A solver failure with the status the solver ended in.
    pub fn solver_stopped(stage: &str, status: SolveStatus, message: impl Into<String>) -> Self {
        Error::Solver {
            stage: stage.to_string(),
            status: Some(status),
            message: message.into(),
        }
    }
}

impl Error {
    /// Names `file` in an input error that does not name a file yet.
    pub fn in_file(self, file: &str) -> Self {
        match self {
            Error::Input {
                mut location,
                message,
            } if location.file.is_empty() => {
                location.file = file.to_string();
                Error::Input { location, message }
            }
            e => e,
        }
    }
}

/// The library's result type.
pub type Result<T, E = Error> = std::result::Result<T, E>;

/// How a solver run ended (re-exported as `optim::SolveStatus`). The first three come with a
/// point; the rest are failures, carried by [`Error::Solver`]. Serialised as the strings the JSON output has always used.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum SolveStatus {
    /// Optimal within the solver's full tolerances.
    #[serde(rename = "solved")]
    Solved,
    /// Optimal within relaxed tolerances only (the verified bound still holds: it is computed
    /// from the dual point with every residual charged).
    #[serde(rename = "almost solved")]
    AlmostSolved,
    /// Stopped by its time limit with a feasible point not proven optimal (an incumbent).
    #[serde(rename = "stopped at the time limit")]
    TimeLimit,
    /// Stopped by its iteration limit without an answer.
    #[serde(rename = "iteration limit")]
    IterationLimit,
    /// Made no more progress before reaching its tolerances.
    #[serde(rename = "stalled")]
    Stalled,
    /// The problem has no feasible point (as the solver judged it).
    #[serde(rename = "infeasible")]
    Infeasible,
    /// Any other failure (numerical trouble, bad settings).
    #[serde(rename = "failed")]
    Failed,
}

impl SolveStatus {
    /// Whether the solver reached its tolerances (solved or almost solved), as opposed to
    /// stopping at a limit or failing.
    pub fn converged(self) -> bool {
        matches!(self, SolveStatus::Solved | SolveStatus::AlmostSolved)
    }

    /// The name used in JSON and text output.
    pub fn name(self) -> &'static str {
        match self {
            SolveStatus::Solved => "solved",
            SolveStatus::AlmostSolved => "almost solved",
            SolveStatus::TimeLimit => "stopped at the time limit",
            SolveStatus::IterationLimit => "iteration limit",
            SolveStatus::Stalled => "stalled",
            SolveStatus::Infeasible => "infeasible",
            SolveStatus::Failed => "failed",
        }
    }
}

impl std::fmt::Display for SolveStatus {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}
