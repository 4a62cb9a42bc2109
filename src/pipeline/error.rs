//! The one error type of the pipeline, with the exit-code class each variant maps to: the
//! stages' own errors are folded in here so that a caller sees one type.
//!
//! ```
//! use dwarfbound::pipeline::confront::PipelineError;
//! let e = PipelineError::Settings("the grid needs at least one point".into());
//! assert_eq!(e.to_string(), "the grid needs at least one point");
//! ```

use crate::catalogue::CatalogueError;
use crate::confront::engine::EngineError;
use crate::confront::prob::StatsError;
use crate::output::OutputError;

/// A failure of the pipeline, with the exit code class it maps to.
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// A catalogue or map problem (exit 2).
    #[error(transparent)]
    Catalogue(#[from] CatalogueError),
    /// Invalid settings or grid (exit 2).
    #[error("{0}")]
    Settings(String),
    /// Output could not be written (exit 2).
    #[error(transparent)]
    Output(#[from] OutputError),
    /// A bug or an unexpected numerical failure (exit 1).
    #[error("internal error: {0}")]
    Internal(String),
}

impl From<StatsError> for PipelineError {
    fn from(e: StatsError) -> Self {
        PipelineError::Internal(e.to_string())
    }
}

impl From<EngineError> for PipelineError {
    fn from(e: EngineError) -> Self {
        match e {
            // A grid the user chose that the comparison cannot use (no points, a population
            // window narrower than the grid's MMHB range): a settings problem, exit 2.
            EngineError::Grid(why) => PipelineError::Settings(why),
            other => PipelineError::Internal(other.to_string()),
        }
    }
}
