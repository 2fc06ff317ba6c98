//! A line in the status bar and how serious it is: what the editor's state keeps
//! (`EditorState::say`) and what its workers report (the retime's outcome, the device link's
//! reports).

/// How serious a message in the status bar is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Level {
    /// Something done, for information.
    Info,
    /// Something the user should look at.
    Warning,
    /// Something failed; nothing was changed by it.
    Error,
}

/// Something the device link's worker (or a follow run on it) reports; the editor turns it into
/// a status line.
#[derive(Debug)]
pub(crate) enum Report {
    /// Information for the status bar.
    Info(String),
    /// A problem for the status bar.
    Problem(String),
}

/// One line in the status bar.
#[derive(Debug, Clone, PartialEq)]
pub struct Message {
    /// How serious it is.
    pub level: Level,
    /// What happened, in words.
    pub text: String,
}

impl Message {
    /// A line of this level.
    pub fn new(level: Level, text: impl Into<String>) -> Message {
        Message {
            level,
            text: text.into(),
        }
    }
}
