//! File work off the UI thread: loading, saving (atomically, through the scene module), the
//! system's file dialog and autosave each run on a short-lived worker thread and report back
//! over a channel the editor polls every frame.

use std::path::PathBuf;
use std::sync::mpsc::{Receiver, Sender, channel};

use crate::scene::{Scene, SceneError};

/// What a finished file job reports.
#[derive(Debug)]
pub(crate) enum FileResult {
    /// A scene file was read.
    Loaded {
        path: PathBuf,
        result: Result<Box<Scene>, SceneError>,
    },
    /// The scene was written; `scene` is what was written.
    Saved {
        path: PathBuf,
        scene: Box<Scene>,
        result: Result<(), SceneError>,
        then_close: bool,
    },
    /// The system's file dialog answered (`None`: cancelled, or no dialog available).
    Picked {
        for_save: bool,
        path: Option<PathBuf>,
    },
    /// The recovery copy was written.
    Autosaved { result: Result<(), String> },
}

/// Runs file jobs on worker threads.
#[derive(Debug)]
pub(crate) struct FileWorker {
    sender: Sender<FileResult>,
    receiver: Receiver<FileResult>,
    pending: usize,
}

impl Default for FileWorker {
    fn default() -> FileWorker {
        let (sender, receiver) = channel();
        FileWorker {
            sender,
            receiver,
            pending: 0,
        }
    }
}

impl FileWorker {
    /// Runs `job` on a new thread; its result wakes the UI.
    pub fn spawn(
        &mut self,
        ctx: &egui::Context,
        job: impl FnOnce() -> FileResult + Send + 'static,
    ) {
        let sender = self.sender.clone();
        let ctx = ctx.clone();
        self.pending += 1;
        let spawned = std::thread::Builder::new()
            .name("armwright file job".into())
            .spawn(move || {
                let _ = sender.send(job());
                ctx.request_repaint();
            });
        if spawned.is_err() {
            self.pending -= 1;
        }
    }

    /// Results that have arrived since the last call.
    pub fn finished(&mut self) -> Vec<FileResult> {
        let results: Vec<FileResult> = self.receiver.try_iter().collect();
        self.pending = self.pending.saturating_sub(results.len());
        results
    }

    /// Whether a job is still running.
    pub fn busy(&self) -> bool {
        self.pending > 0
    }
}

/// Asks the system's file dialog for a scene file (blocks its worker thread, not the UI).
pub(crate) fn pick_file(for_save: bool) -> FileResult {
    let dialog = rfd::FileDialog::new().add_filter("Armwright scene", &["json"]);
    let path = if for_save {
        dialog.set_file_name("scene.armwright.json").save_file()
    } else {
        dialog.pick_file()
    };
    FileResult::Picked { for_save, path }
}

/// The lines of a load error, each naming the field at fault where there is one.
pub(crate) fn problem_lines(error: &SceneError) -> Vec<String> {
    match error {
        SceneError::Problems { problems } => problems.iter().map(ToString::to_string).collect(),
        other => vec![other.to_string()],
    }
}
