//! The exit status of every command, as one type: the binary maps it to the process's
//! exit code, and the library never writes a bare number for it.

use std::fmt;

/// What a run says about the design (or the input), worst last so that `max` over several
/// designs gives the status of the whole run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum ExitStatus {
    /// Ready for review: nothing blocking, no barrier incomplete, no input implausible
    /// (or a command that judges nothing, such as `explain`, did its work).
    Ready = 0,
    /// Not ready: blocking findings, incomplete barriers or implausible inputs.
    NotReady = 1,
    /// An input or the command line could not be used.
    Unusable = 2,
}

impl ExitStatus {
    /// The number the process exits with.
    pub fn code(self) -> u8 {
        self as u8
    }

    /// `NotReady` when `not_ready`, else `Ready`.
    pub fn ready_unless(not_ready: bool) -> Self {
        if not_ready {
            Self::NotReady
        } else {
            Self::Ready
        }
    }
}

/// The number, as the summary table's last line prints it ("exit status 1").
impl fmt::Display for ExitStatus {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.code())
    }
}

impl From<ExitStatus> for std::process::ExitCode {
    fn from(status: ExitStatus) -> Self {
        std::process::ExitCode::from(status.code())
    }
}

#[cfg(test)]
mod tests {
    use super::ExitStatus;

    #[test]
    fn the_codes_are_the_documented_ones() {
        // The contract in README and `check --help`: 0 ready, 1 not ready, 2 unusable.
        assert_eq!(ExitStatus::Ready.code(), 0);
        assert_eq!(ExitStatus::NotReady.code(), 1);
        assert_eq!(ExitStatus::Unusable.code(), 2);
        assert_eq!(ExitStatus::NotReady.to_string(), "1");
    }

    #[test]
    fn the_worst_of_several_designs_is_the_largest() {
        let all = [
            ExitStatus::NotReady,
            ExitStatus::Ready,
            ExitStatus::Unusable,
            ExitStatus::Ready,
        ];
        assert_eq!(all.iter().max(), Some(&ExitStatus::Unusable));
        assert_eq!(
            all[..2].iter().max(),
            Some(&ExitStatus::NotReady),
            "not ready outranks ready"
        );
        assert_eq!(ExitStatus::ready_unless(true), ExitStatus::NotReady);
        assert_eq!(ExitStatus::ready_unless(false), ExitStatus::Ready);
    }
}
