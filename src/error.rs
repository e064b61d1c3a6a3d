//! The library's error type: each variant names the file (where there is one)
//! and the problem, and maps to an exit code.

use std::fmt;
use std::path::PathBuf;

/// Errors a user can cause (bad input, bad settings) and internal ones.
#[derive(Debug)]
pub enum Error {
    /// Invalid settings or command-line values (exit 2).
    Usage(String),
    /// A file that cannot be read or understood (exit 2).
    Input { path: PathBuf, message: String },
    /// A file that cannot be written (exit 2).
    Output { path: PathBuf, message: String },
    /// A bug (exit 3).
    Internal(String),
    /// Standard output was closed by the reader (e.g. `| head`): stop quietly, exit 0.
    BrokenPipe,
}

pub type Result<T> = std::result::Result<T, Error>;

impl Error {
    pub fn usage(message: impl Into<String>) -> Error {
        Error::Usage(message.into())
    }

    pub fn input(path: impl Into<PathBuf>, message: impl Into<String>) -> Error {
        Error::Input { path: path.into(), message: message.into() }
    }

    pub fn output(path: impl Into<PathBuf>, message: impl Into<String>) -> Error {
        Error::Output { path: path.into(), message: message.into() }
    }

    /// Exit code per the project convention: 2 usage or input, 3 internal.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Usage(_) | Error::Input { .. } | Error::Output { .. } => 2,
            Error::Internal(_) => 3,
            Error::BrokenPipe => 0,
        }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Usage(m) => write!(f, "{m}"),
            Error::Input { path, message } => write!(f, "{}: {message}", path.display()),
            Error::Output { path, message } => write!(f, "{}: cannot write: {message}", path.display()),
            Error::Internal(m) => write!(f, "internal error: {m} (please report this with the input that caused it)"),
            Error::BrokenPipe => write!(f, "output closed"),
        }
    }
}

impl std::error::Error for Error {}

/// Writes text to standard output; a closed pipe becomes [`Error::BrokenPipe`].
pub fn write_stdout(text: &str) -> Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Err(Error::BrokenPipe),
        Err(e) => Err(Error::Output { path: "standard output".into(), message: e.to_string() }),
    }
}
