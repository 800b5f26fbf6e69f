//! `hubwatch sql`: print the SQL that makes the aggregate tables in DuckDB or Spark.

use crate::cli::args::SqlArgs;
use crate::cli::{emit, LoadArgs};
use crate::error::Result;
use crate::ingest::sql::{self, Dialect, SqlRequest, TableSpec};

/// Print the script.
pub fn run(load: &LoadArgs, a: &SqlArgs) -> Result<()> {
    let config = load.config()?;
    let opts = load.options(false)?;
    let table = |name: &str, columns: &[String]| TableSpec {
        name: name.to_string(),
        columns: (!columns.is_empty()).then(|| columns.to_vec()),
    };
    let req = SqlRequest {
        dialect: Dialect::parse(&a.dialect)?,
        exposures: table(&a.exposures, &a.exposures_columns),
        people: a.people.as_deref().map(|p| table(p, &a.people_columns)),
        row_order: a.row_order.clone(),
        overrides: opts.overrides,
        as_of: opts.as_of,
        view: opts.view,
        parquet_dir: a.parquet.clone(),
    };
    emit(&sql::generate(&req, &config)?)
}
