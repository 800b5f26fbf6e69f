//! Options of `hubwatch sql`.

use clap::Args;

/// `hubwatch sql`: the SQL that makes the aggregate tables in a database engine.
#[derive(Debug, Args)]
pub struct SqlArgs {
    /// The engine's SQL dialect: duckdb or spark.
    #[arg(long, value_name = "ENGINE")]
    pub dialect: String,
    /// The exposures table, as the engine names it (it may be qualified: db.schema.table).
    #[arg(long = "exposures", value_name = "TABLE")]
    pub exposures: String,
    /// The people table, if there is one.
    #[arg(long = "people", value_name = "TABLE")]
    pub people: Option<String>,
    /// The exposures table's columns, comma-separated: they are then mapped to fields the way
    /// a file's header is (synonyms, then --column), and a quarantined row shows all of them.
    /// Without it, source_id and target_id are the columns of those names (or --column), and
    /// only fields given with --column are read.
    #[arg(long, value_name = "COLUMNS", value_delimiter = ',')]
    pub exposures_columns: Vec<String>,
    /// The people table's columns, comma-separated (as --exposures-columns).
    #[arg(long, value_name = "COLUMNS", value_delimiter = ',')]
    pub people_columns: Vec<String>,
    /// A column of both tables giving each row's place in the export (a line number). The
    /// first spelling of an ID or setting, the value kept for a repeated person and the node
    /// numbers follow it; without it they follow the engine's own row order.
    #[arg(long, value_name = "COLUMN")]
    pub row_order: Option<String>,
    /// Write the aggregate tables as Parquet into this folder (as the engine sees paths).
    #[arg(long, value_name = "DIR")]
    pub parquet: Option<String>,
}
