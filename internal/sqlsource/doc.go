// Package sqlsource reads general-ledger lines, activity (long form) and the
// chart of accounts from a SQL database through database/sql: PostgreSQL
// (pgx), MySQL, SQL Server and SQLite.
//
// What it owns:
//
//   - The query guard. A source query must be exactly one SELECT or WITH
//     statement. Before anything is sent, comments, string literals and
//     quoted names are masked out in the driver's own dialect, and the rest
//     must start with SELECT or WITH, hold no ';' before its end, and contain
//     none of the words that begin or embed a write (INSERT, UPDATE, DELETE,
//     MERGE, INTO, CREATE, DROP, EXEC, ...). That last rule is what refuses a
//     PostgreSQL data-modifying WITH (WITH x AS (DELETE ... RETURNING ...))
//     and a SQL Server batch that appends a statement without a ';'. It
//     also refuses, by name, functions known to write or reach beyond the
//     query (dblink_exec, pg_read_file, lo_import, LOAD_FILE,
//     load_extension, ...; sideEffectFunctions), a list that cannot be
//     complete.
//   - The read-only transaction. The query runs inside
//     sql.TxOptions{ReadOnly: true} (PostgreSQL: BEGIN READ ONLY, so the
//     server refuses a write the guard could not see, such as nextval() or a
//     function that deletes; MySQL: START TRANSACTION READ ONLY; SQLite:
//     PRAGMA query_only on the connection, on a file opened with mode=ro).
//     SQL Server's driver has no read-only transactions. Every transaction
//     is rolled back, never committed. Neither reaches a write made in
//     another session, as dblink_exec makes one.
//   - The login check. Guard and transaction are a first line; a login
//     that can only read is what stops every write. After connecting, a
//     query of the server's privileges (loginChecks) lists what the login
//     could write, and Result.Warnings says so, naming the source; the read
//     goes on.
//   - The timeout: one context deadline over connecting, querying and
//     streaming (Options.Timeout, 5 minutes by default).
//   - The connection string. It is read from an environment variable or an
//     owner-only file (LoadDSN), never from the config, and it never appears
//     in an error: every driver message is stripped of the connection string
//     and of its password in each spelling, and errors do not wrap driver
//     errors (a caller unwrapping would find the raw text again).
//   - Turning the values the driver gives into canon.Cells: NUMERIC and
//     DECIMAL text, integers and doubles into exact amounts (a double that
//     is not a short decimal is rejected), dates and timestamps into days,
//     text as text. Columns are bound to canonical ones, and rows read, by
//     the rules every source kind shares (internal/canon); a query result
//     with two columns of one canonical name is refused.
//   - The watermark: with Options.WatermarkColumn set, the query's
//     :watermark placeholder is bound to Options.Watermark (NULL on the first
//     run) and the largest value of that column seen is returned in
//     Result.Watermark. Keeping it between runs is the caller's job, in the
//     same transaction as the batch.
//
// Rows are streamed (rows.Next) to a costdrift.SourceWriter one at a time, so
// memory does not grow with the result: that is also why a ledger query must
// return a line column rather than have lines numbered here. A row that
// cannot be used becomes a Reject located "<source> row N (key)"; a problem
// with the whole query (refused, cannot connect, timed out, a required
// column missing) is a returned error, and the caller keeps nothing.
//
// It must not open or write the store, read the config file, or log.
package sqlsource
