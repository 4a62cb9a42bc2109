//! A bound's value or the typed reason it has none, in a form that serialises.
//!
//! One job: carry "no model here, and why" through grids, caches and outputs without a NaN
//! (`Outcome` is a serialisable `Result`, `Failure` its short code and sentence).
//!
//! ```
//! use dwarfbound::theory::outcome::{Failure, Outcome};
//!
//! let none: Outcome<f64> = Outcome::Failed(Failure {
//!     code: "no-regular-centre".into(),
//!     reason: "no regular centre".into(),
//! });
//! assert!(none.ok().is_none());
//! assert_eq!(none.failure().unwrap().code, "no-regular-centre");
//! ```

use serde::{Deserialize, Serialize};

use crate::theory::error::TheoryError;
use crate::theory::mmhb::BoundError;

/// Why a bound has no value at a point: a short stable code and a full sentence.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Failure {
    /// Short stable tag (`no-regular-centre`, `not-specified`, …; see [`TheoryError::code`]).
    pub code: String,
    /// The reason in words.
    pub reason: String,
}

impl From<&TheoryError> for Failure {
    fn from(e: &TheoryError) -> Self {
        Failure {
            code: e.code().to_string(),
            reason: e.to_string(),
        }
    }
}

impl From<TheoryError> for Failure {
    fn from(e: TheoryError) -> Self {
        Failure::from(&e)
    }
}

impl From<BoundError> for Failure {
    fn from(e: BoundError) -> Self {
        Failure {
            code: e.code().to_string(),
            reason: e.to_string(),
        }
    }
}

impl std::fmt::Display for Failure {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.code, self.reason)
    }
}

/// A bound's value or the reason it has none (a serialisable `Result`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome<T> {
    /// The value.
    Ok(T),
    /// No model here, and why.
    Failed(Failure),
}

impl<T> Outcome<T> {
    /// The value, if any.
    pub fn ok(&self) -> Option<&T> {
        match self {
            Outcome::Ok(v) => Some(v),
            Outcome::Failed(_) => None,
        }
    }

    /// The failure, if any.
    pub fn failure(&self) -> Option<&Failure> {
        match self {
            Outcome::Ok(_) => None,
            Outcome::Failed(f) => Some(f),
        }
    }

    /// True for a value.
    pub fn is_ok(&self) -> bool {
        matches!(self, Outcome::Ok(_))
    }

    /// Maps the value.
    pub fn map<U>(self, f: impl FnOnce(T) -> U) -> Outcome<U> {
        match self {
            Outcome::Ok(v) => Outcome::Ok(f(v)),
            Outcome::Failed(e) => Outcome::Failed(e),
        }
    }

    /// As a borrowed `Result`.
    pub fn as_result(&self) -> Result<&T, &Failure> {
        match self {
            Outcome::Ok(v) => Ok(v),
            Outcome::Failed(e) => Err(e),
        }
    }
}

impl<T, E: Into<Failure>> From<Result<T, E>> for Outcome<T> {
    fn from(r: Result<T, E>) -> Self {
        match r {
            Ok(v) => Outcome::Ok(v),
            Err(e) => Outcome::Failed(e.into()),
        }
    }
}
