package sqlsource

import (
	"context"
	"database/sql"
	"fmt"
	"strings"
	"unicode"
)

// The query guard and the read-only transaction are a first line only: a
// function can write through a session of its own (PostgreSQL's
// dblink_exec), and a function of the database's own shows the guard no
// more than its name. What stops every write is a login that cannot write.
// checkLogin asks the server, after connecting, what the source's login
// could write, and turns the answer into a warning for the sync to show
// and record; it does not fail the read.
//
// loginChecks holds, per driver, one query that returns a row of text for
// each right to write it finds, and no row for a login that can only read.
// They ask the server's own privilege functions and views, so that rights
// held through a role count where the server counts them:
//
//   - PostgreSQL: superuser (rolsuper; then nothing else is listed, a
//     superuser may do anything) or CREATEROLE (rolcreaterole); membership of pg_write_server_files, pg_execute_server_program or
//     pg_write_all_data (pg_has_role); CREATE on the database
//     (has_database_privilege) or on a schema (has_schema_privilege);
//     INSERT, UPDATE, DELETE or TRUNCATE on any table, view or foreign
//     table it can see (has_any_column_privilege, has_table_privilege,
//     which take inherited role membership into account). System schemas
//     (pg_*, information_schema) are left out.
//   - MySQL and MariaDB: the current account's (CURRENT_USER()) INSERT,
//     UPDATE, DELETE, CREATE, DROP, ALTER, INDEX, TRIGGER, EXECUTE, FILE,
//     SUPER and CREATE USER rights, globally, on a schema, a table or a
//     column (information_schema USER_, SCHEMA_, TABLE_ and
//     COLUMN_PRIVILEGES). Rights the account holds only through a role
//     (MySQL 8, MariaDB) are not listed there and go unseen.
//   - SQL Server: membership of sysadmin (IS_SRVROLEMEMBER), of db_owner,
//     db_datawriter or db_ddladmin (IS_ROLEMEMBER); INSERT, UPDATE, DELETE,
//     ALTER, CONTROL, EXECUTE or CREATE TABLE, PROCEDURE, FUNCTION or VIEW
//     on the database (fn_my_permissions); INSERT, UPDATE or DELETE on any
//     table (HAS_PERMS_BY_NAME).
//
// The MySQL and SQL Server queries have not run against a server in this
// repository's tests; a query the server refuses becomes a warning that the
// rights could not be checked. SQLite has no login: its file is opened
// read-only (sqliteReadOnly) instead.
var loginChecks = map[string]string{
	"postgres": `
WITH me AS (SELECT rolsuper, rolcreaterole FROM pg_roles WHERE rolname = current_user),
     rest AS (SELECT NOT COALESCE((SELECT rolsuper FROM me), false) AS shown)
SELECT 'it is a superuser' FROM me WHERE rolsuper
UNION ALL
SELECT 'it may create roles' FROM me, rest WHERE shown AND rolcreaterole
UNION ALL
SELECT 'it belongs to ' || rolname FROM pg_roles, rest
WHERE shown AND rolname IN ('pg_write_server_files', 'pg_execute_server_program', 'pg_write_all_data')
  AND pg_has_role(current_user, oid, 'USAGE')
UNION ALL
SELECT 'CREATE on database ' || quote_ident(current_database()) FROM rest
WHERE shown AND has_database_privilege(current_database(), 'CREATE')
UNION ALL
(SELECT 'CREATE on schema ' || quote_ident(nspname) FROM pg_namespace, rest
 WHERE shown AND left(nspname, 3) <> 'pg_' AND nspname <> 'information_schema' AND has_schema_privilege(oid, 'CREATE')
 ORDER BY nspname)
UNION ALL
(SELECT concat_ws(', ',
        CASE WHEN has_any_column_privilege(c.oid, 'INSERT') THEN 'INSERT' END,
        CASE WHEN has_any_column_privilege(c.oid, 'UPDATE') THEN 'UPDATE' END,
        CASE WHEN has_table_privilege(c.oid, 'DELETE') THEN 'DELETE' END,
        CASE WHEN has_table_privilege(c.oid, 'TRUNCATE') THEN 'TRUNCATE' END)
        || ' on ' || quote_ident(n.nspname) || '.' || quote_ident(c.relname)
 FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace, rest
 WHERE shown AND c.relkind IN ('r', 'p', 'v', 'f')
   AND left(n.nspname, 3) <> 'pg_' AND n.nspname <> 'information_schema'
   AND has_schema_privilege(n.oid, 'USAGE')
   AND (has_any_column_privilege(c.oid, 'INSERT') OR has_any_column_privilege(c.oid, 'UPDATE')
        OR has_table_privilege(c.oid, 'DELETE') OR has_table_privilege(c.oid, 'TRUNCATE'))
 ORDER BY n.nspname, c.relname)`,

	"mysql": `
SELECT CONCAT(PRIVILEGE_TYPE, ' on *.*') FROM information_schema.USER_PRIVILEGES
WHERE GRANTEE = CONCAT('''', SUBSTRING_INDEX(CURRENT_USER(), '@', 1), '''@''', SUBSTRING_INDEX(CURRENT_USER(), '@', -1), '''')
  AND PRIVILEGE_TYPE IN ('INSERT', 'UPDATE', 'DELETE', 'CREATE', 'DROP', 'ALTER', 'INDEX', 'TRIGGER', 'EXECUTE', 'FILE', 'SUPER', 'CREATE USER')
UNION ALL
SELECT CONCAT(PRIVILEGE_TYPE, ' on ', TABLE_SCHEMA, '.*') FROM information_schema.SCHEMA_PRIVILEGES
WHERE GRANTEE = CONCAT('''', SUBSTRING_INDEX(CURRENT_USER(), '@', 1), '''@''', SUBSTRING_INDEX(CURRENT_USER(), '@', -1), '''')
  AND PRIVILEGE_TYPE IN ('INSERT', 'UPDATE', 'DELETE', 'CREATE', 'DROP', 'ALTER', 'INDEX', 'TRIGGER', 'EXECUTE')
UNION ALL
SELECT CONCAT(PRIVILEGE_TYPE, ' on ', TABLE_SCHEMA, '.', TABLE_NAME) FROM information_schema.TABLE_PRIVILEGES
WHERE GRANTEE = CONCAT('''', SUBSTRING_INDEX(CURRENT_USER(), '@', 1), '''@''', SUBSTRING_INDEX(CURRENT_USER(), '@', -1), '''')
  AND PRIVILEGE_TYPE IN ('INSERT', 'UPDATE', 'DELETE', 'DROP', 'ALTER', 'INDEX', 'TRIGGER')
UNION ALL
SELECT DISTINCT CONCAT(PRIVILEGE_TYPE, ' on columns of ', TABLE_SCHEMA, '.', TABLE_NAME) FROM information_schema.COLUMN_PRIVILEGES
WHERE GRANTEE = CONCAT('''', SUBSTRING_INDEX(CURRENT_USER(), '@', 1), '''@''', SUBSTRING_INDEX(CURRENT_USER(), '@', -1), '''')
  AND PRIVILEGE_TYPE IN ('INSERT', 'UPDATE')`,

	"sqlserver": `
SELECT 'it is a member of sysadmin' AS finding WHERE IS_SRVROLEMEMBER('sysadmin') = 1
UNION ALL
SELECT 'it is a member of ' + r.name FROM (VALUES ('db_owner'), ('db_datawriter'), ('db_ddladmin')) AS r(name)
WHERE IS_ROLEMEMBER(r.name) = 1
UNION ALL
SELECT permission_name + ' on the database' FROM fn_my_permissions(NULL, 'DATABASE')
WHERE permission_name IN ('INSERT', 'UPDATE', 'DELETE', 'ALTER', 'CONTROL', 'EXECUTE',
                          'CREATE TABLE', 'CREATE PROCEDURE', 'CREATE FUNCTION', 'CREATE VIEW')
UNION ALL
SELECT 'INSERT, UPDATE or DELETE on ' + QUOTENAME(SCHEMA_NAME(t.schema_id)) + '.' + QUOTENAME(t.name) FROM sys.tables AS t
WHERE HAS_PERMS_BY_NAME(QUOTENAME(SCHEMA_NAME(t.schema_id)) + '.' + QUOTENAME(t.name), 'OBJECT', 'INSERT') = 1
   OR HAS_PERMS_BY_NAME(QUOTENAME(SCHEMA_NAME(t.schema_id)) + '.' + QUOTENAME(t.name), 'OBJECT', 'UPDATE') = 1
   OR HAS_PERMS_BY_NAME(QUOTENAME(SCHEMA_NAME(t.schema_id)) + '.' + QUOTENAME(t.name), 'OBJECT', 'DELETE') = 1`,
}

// findingsShown is how many rights a warning lists before "and N more".
const findingsShown = 4

// checkLogin runs the driver's rights query on conn, outside the read's
// transaction, and returns the warnings for the caller: none for a login
// that can only read, one otherwise, naming the source.
func checkLogin(ctx context.Context, conn *sql.Conn, opt Options, hide redactor) []string {
	query, ok := loginChecks[opt.Driver]
	if !ok {
		return nil
	}
	findings, err := loginFindings(ctx, conn, query)
	if err != nil {
		return []string{fmt.Sprintf("source %s: could not check whether its login can write (%s); make sure it can only read (README: SQL databases)",
			opt.Source, joinLines(hide.clean(err.Error())))}
	}
	if len(findings) == 0 {
		return nil
	}
	shown := findings
	if len(shown) > findingsShown {
		shown = append(shown[:findingsShown:findingsShown], fmt.Sprintf("and %d more", len(findings)-findingsShown))
	}
	return []string{fmt.Sprintf("source %s: its login can write (%s); the query guard and the read-only transaction cannot stop every write "+
		"(dblink_exec, for one, writes through a session of its own): give the source a login that can only read (README: SQL databases)",
		opt.Source, strings.Join(shown, "; "))}
}

func loginFindings(ctx context.Context, conn *sql.Conn, query string) ([]string, error) {
	rows, err := conn.QueryContext(ctx, query)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var f sql.NullString
		if err := rows.Scan(&f); err != nil {
			return nil, err
		}
		if f.Valid && f.String != "" {
			// Names come from the database: a control character in one must
			// not reach a terminal, nor split the warning where the store
			// keeps one per line.
			out = append(out, strings.Map(func(r rune) rune {
				if unicode.IsControl(r) {
					return '?'
				}
				return r
			}, f.String))
		}
	}
	return out, rows.Err()
}

// sqliteReadOnly returns the connection string that opens a SQLite source
// read-only (mode=ro), whatever mode it asked for, and the mode it asked
// for when that was another ("" otherwise): a read then cannot change the
// file, not even by the checkpoint SQLite runs when the last read-write
// connection to a database in WAL mode closes. A plain path becomes a
// file: URI (with % and # escaped as a URI needs); the driver's own _name
// parameters are kept. An in-memory database is left as it is: there is no
// file to protect.
func sqliteReadOnly(dsn string) (string, string) {
	if strings.Contains(dsn, ":memory:") || strings.Contains(dsn, "mode=memory") {
		return dsn, ""
	}
	path, query, _ := strings.Cut(dsn, "?")
	if strings.HasPrefix(path, "file:") {
		path = strings.TrimPrefix(path, "file:")
	} else {
		path = strings.NewReplacer("%", "%25", "#", "%23").Replace(path)
	}
	params := []string{"mode=ro"}
	asked := ""
	for _, p := range strings.Split(query, "&") {
		switch {
		case p == "":
		case strings.HasPrefix(p, "mode="):
			if m := strings.TrimPrefix(p, "mode="); m != "ro" {
				asked = m
			}
		default:
			params = append(params, p)
		}
	}
	return "file:" + path + "?" + strings.Join(params, "&"), asked
}
