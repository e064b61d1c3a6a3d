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
        Error::Input {
            path: path.into(),
            message: message.into(),
        }
    }

    pub fn output(path: impl Into<PathBuf>, message: impl Into<String>) -> Error {
        Error::Output {
            path: path.into(),
            message: message.into(),
        }
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

/// A message on one line: text from libraries (lcms2, decoders) may span
/// several; its lines are joined with spaces so each error stays one line.
fn one_line(m: &str) -> std::borrow::Cow<'_, str> {
    if m.contains(['\n', '\r']) {
        m.split(['\n', '\r'])
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .collect::<Vec<_>>()
            .join(" ")
            .into()
    } else {
        m.into()
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Usage(m) => write!(f, "{}", one_line(m)),
            Error::Input { path, message } => write!(f, "{}: {}", path.display(), one_line(message)),
            Error::Output { path, message } => write!(f, "{}: cannot write: {}", path.display(), one_line(message)),
            Error::Internal(m) => write!(
                f,
                "internal error: {} (please report this with the input that caused it)",
                one_line(m)
            ),
            Error::BrokenPipe => write!(f, "output closed"),
        }
    }
}

impl std::error::Error for Error {}

/// The reason of an I/O error in plain words, without the OS error number.
pub fn io_reason(e: &std::io::Error) -> String {
    use std::io::ErrorKind as K;
    match e.kind() {
        K::NotFound => "no such file".into(),
        K::PermissionDenied => "permission denied".into(),
        K::IsADirectory => "is a folder, not a file".into(),
        K::InvalidData => "the file is not text in UTF-8".into(),
        K::UnexpectedEof => "the file ends early".into(),
        _ => {
            let s = e.to_string();
            match s.find(" (os error") {
                Some(i) => s[..i].to_string(),
                None => s,
            }
        }
    }
}

/// Writes text to standard output; a closed pipe becomes [`Error::BrokenPipe`].
pub fn write_stdout(text: &str) -> Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Err(Error::BrokenPipe),
        Err(e) => Err(Error::Output {
            path: "standard output".into(),
            message: e.to_string(),
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn library_messages_over_several_lines_print_as_one() {
        let e = Error::input(
            "a.png",
            "cannot be read (Could not create the object.\nThe reason is not known.\r\n)",
        );
        assert_eq!(
            e.to_string(),
            "a.png: cannot be read (Could not create the object. The reason is not known. )"
        );
        assert_eq!(Error::usage("plain").to_string(), "plain");
        assert!(!Error::Internal("x\ny".into()).to_string().contains('\n'));
    }
}
