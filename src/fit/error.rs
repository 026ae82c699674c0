//! The errors of `fit`: each names the file, the line, the season and the column where it can.

/// Everything that can go wrong in `fit`.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// The CSV itself is malformed.
    #[error("{file}{}: {message}", line.map(|l| format!(", line {l}")).unwrap_or_default())]
    Csv {
        file: String,
        line: Option<u64>,
        message: String,
    },
    /// A column named on the command line is not in the header.
    #[error("{file}: no column `{column}` (asked for by {role}); available columns: {available}{suggestion}")]
    UnknownColumn {
        file: String,
        role: String,
        column: String,
        available: String,
        suggestion: String,
    },
    /// An empty or NA cell in a column that is used.
    #[error("{file}, line {line} (season {season}), column `{column}`: missing value; every season needs a value in every column used (fill the gap or shorten the history)")]
    MissingValue {
        file: String,
        line: u64,
        season: String,
        column: String,
    },
    /// A cell that is not a finite number.
    #[error("{file}, line {line} (season {season}), column `{column}`: `{value}` is not a finite number")]
    NotANumber {
        file: String,
        line: u64,
        season: String,
        column: String,
        value: String,
    },
    /// A zero or negative price or quantity in a log model.
    #[error("{file}, line {line} (season {season}), column `{column}`: {value} must be > 0 for --form log (it takes logarithms); correct the value or use --form linear")]
    NonPositive {
        file: String,
        line: u64,
        season: String,
        column: String,
        value: f64,
    },
    /// Season labels that are not consecutive integers.
    #[error("{file}, line {line}: {message}")]
    Season {
        file: String,
        line: u64,
        message: String,
    },
    /// Fewer seasons than the equation needs.
    #[error("{file}: the {equation} equation has {parameters} parameters ({terms}) and needs at least {needed} seasons, but has {observations}{note}")]
    TooFewSeasons {
        file: String,
        equation: String,
        parameters: usize,
        terms: String,
        needed: usize,
        observations: usize,
        note: String,
    },
    /// A regressor that is constant or a combination of others.
    #[error("{file}: in the {equation} equation, {what} `{column}` is constant over the sample or a linear combination of the columns before it ({before}); drop it")]
    Collinear {
        file: String,
        equation: String,
        what: String,
        column: String,
        before: String,
    },
    /// 2SLS without an excluded instrument.
    #[error("--method 2sls needs at least one supply-only shifter (--supply-shifter COL, e.g. rainfall or an input price) to instrument the price in the demand equation; none was given")]
    NoInstruments,
    /// The same column in two roles.
    #[error(
        "column `{column}` is given twice ({first} and {second}); each column can play one role"
    )]
    DuplicateColumn {
        column: String,
        first: String,
        second: String,
    },
    /// Arithmetic failure (non-finite result).
    #[error("{file}: the {equation} equation could not be computed (non-finite result); check the data's scale")]
    NonFinite { file: String, equation: String },
    /// Rows where the balance-sheet identity fails.
    #[error("{file}: the balance sheet does not add up (production + imports − exports − stock change = use, tolerance {tolerance} of use) in {count} row(s): {rows}; correct the rows, name the right columns, or widen --balance-tolerance")]
    Balance {
        file: String,
        tolerance: f64,
        count: usize,
        rows: String,
    },
    /// Options that do not go together, or a value outside its range.
    #[error("{0}")]
    Options(String),
    /// A column whose values squares would underflow or overflow.
    #[error("{file}, column `{column}`: values of order {magnitude} are outside what the estimator can square without losing them (largest magnitude must lie in 1e-100..1e100); rescale the column (another unit, e.g. thousands of tonnes) and fit again")]
    Scale {
        file: String,
        column: String,
        magnitude: String,
    },
    /// A shifter has no value in the projection season.
    #[error("{file}: shifter `{column}` has no value in season {season} (the data cover {first}-{last}) and is not a straight line in the season, so it cannot be extended; choose --at-season within the data, or declare it --stochastic-shifter")]
    NoProjection {
        file: String,
        column: String,
        season: i64,
        first: i64,
        last: i64,
    },
    /// The estimates cannot make a valid market file.
    #[error("cannot write a market file: {message}")]
    Market { message: String },
}
