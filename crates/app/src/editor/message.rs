//! A line in the status bar and how serious it is: what the editor's state keeps
//! (`EditorState::say`) and what its workers report (the retime's outcome).

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
