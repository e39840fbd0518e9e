//! The reader's error type: where (`path:line:column`, 1-based) and what (a kind
//! whose message says what was expected and what was found).

/// A file that could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{path}:{line}:{column}: {kind}")]
pub struct ReadError {
    /// the file as named by the caller
    pub path: String,
    /// 1-based line
    pub line: usize,
    /// 1-based column (byte position; only ASCII is accepted outside comments)
    pub column: usize,
    /// what went wrong
    pub kind: ErrorKind,
}

/// What went wrong. Each message says what was expected and what was found.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ErrorKind {
    /// the operating system refused the file
    #[error("could not read the file: {0}")]
    Io(String),
    /// no bytes, or only blank lines and comments
    #[error("expected Touchstone data, found {0}")]
    EmptyFile(&'static str),
    /// a byte above 0x7E outside a comment
    #[error("expected ASCII text, found byte 0x{0:02X} (non-ASCII characters are allowed only in comments)")]
    NonAscii(u8),
    /// a control byte (below 0x20 other than tab, or 0x7F): not a text file
    #[error("expected text, found control byte 0x{0:02X} (is this a binary file?)")]
    ControlByte(u8),
    /// a line longer than the cap
    #[error("expected a line of at most {limit} bytes, found a longer one")]
    LineTooLong {
        /// the cap in bytes
        limit: usize,
    },
    /// a token that is not a number
    #[error("expected a number such as 1, -0.5 or 2.4e9, found `{0}`")]
    BadNumber(String),
    /// a number that overflows (1e999), or a value that becomes infinite or NaN
    #[error("expected a finite number, found `{0}`")]
    NonFinite(String),
    /// the first line with content is neither an option line nor `[Version]`
    #[error(
        "expected the option line (`# GHz S MA R 50`) or `[Version]` before any data, found `{0}`"
    )]
    MissingOptionLine(String),
    /// an option-line token that is none of the known ones
    #[error("expected an option-line token (Hz kHz MHz GHz, S Y Z H G, RI MA DB, R <ohms>), found `{0}`")]
    UnknownOption(String),
    /// the same option field given twice
    #[error("expected one {field} on the option line, found `{found}` after `{first}`")]
    DuplicateOption {
        /// which field (frequency unit, parameter, format, reference resistance)
        field: &'static str,
        /// the first value
        first: String,
        /// the repeated one
        found: String,
    },
    /// `R` with no number after it
    #[error("expected a resistance after `R`, found {0}")]
    MissingResistance(String),
    /// a reference resistance that is not positive
    #[error("expected a reference resistance > 0 Ω, found {0}")]
    BadResistance(String),
    /// the wrong number of reference resistances
    #[error("expected {expected} reference resistance(s) ({what}), found {found}")]
    ResistanceCount {
        /// what the count should be
        expected: String,
        /// where the expectation comes from
        what: &'static str,
        /// how many there were
        found: usize,
    },
    /// a second option line
    #[error("expected one option line (the first is at line {first_line}), found a second one")]
    SecondOptionLine {
        /// line of the first option line
        first_line: usize,
    },
    /// H or G data with a port count other than 2
    #[error("expected S, Y or Z data for a {ports}-port (H and G are defined for 2-ports only), found {param}")]
    ParamNeedsTwoPort {
        /// the parameter letter
        param: &'static str,
        /// port count
        ports: usize,
    },
    /// the first record's length fits no port count
    #[error("expected a record of 1 + 2·N² values (3, 9, 19, 33, 51, …), found {found} values in the record starting at line {start_line}")]
    RecordLength {
        /// values in the record
        found: usize,
        /// line where it starts
        start_line: usize,
    },
    /// the first record is longer than any port count the reader accepts
    #[error("expected a record of at most {max} values (a {ports}-port), found more")]
    RecordTooLong {
        /// the largest record
        max: usize,
        /// the largest port count
        ports: usize,
    },
    /// the file name says one port count, the data another
    #[error(
        "expected {expected}-port data (from the file name `{name}`), found {found}-port data"
    )]
    PortCountMismatch {
        /// from the name
        expected: usize,
        /// from the data or `[Number of Ports]`
        found: usize,
        /// the extension
        name: String,
    },
    /// `.s0p` and the like
    #[error("expected a file name ending .sNp with 1 ≤ N ≤ {max}, found `{0}`", max = super::read::MAX_PORTS)]
    BadExtension(String),
    /// a line that carries more values than the record needs
    #[error("expected {expected} values per record ({ports}-port), found more: this value would be number {found}")]
    TooManyValues {
        /// record length
        expected: usize,
        /// port count
        ports: usize,
        /// position of the first extra value in the record (1-based)
        found: usize,
    },
    /// a new record begins before the current one is complete
    #[error("expected {expected} values for the record starting at line {start_line} ({ports}-port), found {found} before a new record begins here")]
    TooFewValues {
        /// record length
        expected: usize,
        /// values there were
        found: usize,
        /// port count
        ports: usize,
        /// where the short record starts
        start_line: usize,
    },
    /// a line with an even count where a record starts (its first value must be a frequency)
    #[error("expected a line starting a record (a frequency and whole pairs: an odd count of values), found {0} values")]
    RecordStartEven(usize),
    /// end of file (or a keyword) inside a record
    #[error("expected {expected} values for the record starting at line {start_line}, found {found} before {before}")]
    RecordCutShort {
        /// what came instead of the rest (`the end of the file`, `[End]`, …)
        before: &'static str,
        /// record length
        expected: usize,
        /// values there were
        found: usize,
        /// where the record starts
        start_line: usize,
    },
    /// a frequency not above the one before it
    #[error("expected a frequency above {prev} (line {prev_line}), found {found}{hint}")]
    FrequencyNotIncreasing {
        /// previous raw value (file's unit)
        prev: String,
        /// where it was
        prev_line: usize,
        /// this raw value
        found: String,
        /// extra explanation
        hint: &'static str,
    },
    /// a negative frequency
    #[error("expected a frequency ≥ 0, found {0}")]
    NegativeFrequency(String),
    /// a noise row with other than 5 values
    #[error(
        "expected 5 values on a noise row (f, NFmin dB, |Γopt|, ∠Γopt °, Rn), found {found}{hint}"
    )]
    NoiseRowLength {
        /// values on the line
        found: usize,
        /// extra explanation (the ambiguity of a repeated frequency)
        hint: String,
    },
    /// noise in a file that is not a 2-port
    #[error("expected noise data only in a 2-port file, found it in a {0}-port file")]
    NoiseNotTwoPort(usize),
    /// a header with no records
    #[error("expected at least one network data record, found none")]
    NoData,
    /// Y/Z/H/G data whose conversion to S does not exist
    #[error(
        "expected {0} data that can be converted to S, found a singular matrix at this frequency"
    )]
    Singular(&'static str),
    /// a keyword in a version-1 file
    #[error("expected data lines (a version-1 file has no keywords; a version-2 file starts with [Version]), found `[{0}]`")]
    KeywordInV1(String),
    /// an unknown keyword
    #[error("expected a Touchstone 2.0/2.1 keyword ([Number of Ports], [Network Data], …), found `[{0}]`")]
    UnknownKeyword(String),
    /// a `[` without `]`
    #[error("expected `]` closing the keyword, found `{0}`")]
    UnclosedKeyword(String),
    /// a keyword out of order
    #[error("expected {expected}, found `[{keyword}]`")]
    MisplacedKeyword {
        /// the keyword
        keyword: String,
        /// what should have come (or where this one belongs)
        expected: &'static str,
    },
    /// a keyword given twice
    #[error("expected `[{keyword}]` once (first at line {first_line}), found it again")]
    DuplicateKeyword {
        /// the keyword
        keyword: &'static str,
        /// where it was first
        first_line: usize,
    },
    /// a required keyword is missing
    #[error("expected `[{keyword}]` {why}, found {found}")]
    MissingKeyword {
        /// the keyword
        keyword: &'static str,
        /// why it is required
        why: &'static str,
        /// what came instead
        found: String,
    },
    /// a keyword argument that is not allowed
    #[error("expected {expected} after `[{keyword}]`, found {found}")]
    BadKeywordValue {
        /// the keyword
        keyword: &'static str,
        /// allowed values
        expected: &'static str,
        /// what was there
        found: String,
    },
    /// `[Number of Ports]` 0 or too large
    #[error("expected a port count from 1 to {max}, found {0}", max = super::read::MAX_PORTS)]
    BadPortCount(String),
    /// a declared count that the data do not match
    #[error("expected {expected} {what} (`[{keyword}]` at line {keyword_line}), found {found}")]
    CountMismatch {
        /// the keyword
        keyword: &'static str,
        /// what is counted
        what: &'static str,
        /// the declared count
        expected: u64,
        /// what the data hold
        found: String,
        /// where the count was declared
        keyword_line: usize,
    },
    /// `[Mixed-Mode Order]`
    #[error("expected single-ended data, found `[Mixed-Mode Order]` (mixed-mode files are not supported; convert the data to single-ended S-parameters first)")]
    MixedMode,
    /// `[Version]` other than 2.0 or 2.1
    #[error("expected `[Version] 2.0` or `[Version] 2.1`, found {0}")]
    UnsupportedVersion(String),
    /// data after `[End]`
    #[error("expected only comments and blank lines after `[End]` (line {0}), found more")]
    ContentAfterEnd(usize),
    /// `[Begin Information]` without `[End Information]`
    #[error("expected `[End Information]` closing the block opened at line {0}, found the end of the file")]
    UnclosedInformation(usize),
    /// an option line where none may stand
    #[error("expected the option line right after `[Version]` and before `[Number of Ports]`, found it {0}")]
    MisplacedOptionLine(&'static str),
    /// data before `[Network Data]` in a version-2 file
    #[error("expected a keyword (data must follow `[Network Data]`), found `{0}`")]
    DataBeforeNetworkData(String),
}
