package sqlsource

import (
	"reflect"
	"strings"
	"testing"
)

// The dialect rules below are facts of each database's documented lexical
// syntax (common practice): '' doubles a quote everywhere; PostgreSQL and
// SQL Server nest block comments, MySQL and SQLite do not; MySQL's "--"
// needs a following space and it runs /*! */; SQL Server runs a batch of
// statements that need no ';'.

func TestCheckQuery(t *testing.T) {
	tests := []struct {
		name, driver, query string
		refused             string // "" when accepted; else part of the reason
	}{
		// accepted
		{"plain select", "postgres", "SELECT entry_id, amount FROM gl", ""},
		{"lower case, leading comment and space", "postgres", "  -- the ledger\n/* lines */ select * from gl", ""},
		{"one trailing semicolon", "mysql", "SELECT 1;  \n", ""},
		{"trailing semicolon then comment", "postgres", "SELECT 1; -- done", ""},
		{"with", "postgres", "WITH s AS (SELECT account, SUM(amount) AS amount FROM gl GROUP BY account) SELECT * FROM s", ""},
		{"parenthesised union", "postgres", "(SELECT 1) UNION ALL (SELECT 2)", ""},
		{"semicolon and DROP inside a string", "postgres", "SELECT 'a; DROP TABLE x' AS d", ""},
		{"doubled quote in a string", "sqlite", "SELECT 'it''s; DELETE' AS d", ""},
		{"DELETE inside a comment", "sqlserver", "SELECT 1 /* DELETE FROM gl; */ AS x", ""},
		{"nested comment, postgres", "postgres", "SELECT 1 /* a /* b */ ; DROP */ AS x", ""},
		{"quoted name that is a keyword", "postgres", `SELECT "update", "group" FROM gl`, ""},
		{"bracketed keyword", "sqlserver", "SELECT [delete] FROM gl", ""},
		{"backticked keyword", "mysql", "SELECT `into` FROM gl", ""},
		{"dollar-quoted string", "postgres", "SELECT $q$; DELETE FROM gl$q$ AS d", ""},
		{"empty dollar quote", "postgres", "SELECT $$it's$$ AS d", ""},
		{"parameter is no dollar quote", "postgres", "SELECT * FROM gl WHERE id > $1", ""},
		{"dollar inside a name", "postgres", "SELECT a$b$ FROM gl", ""},
		{"MySQL double dash without space is minus minus", "mysql", "SELECT 1--1 AS x", ""},
		{"MySQL hash comment", "mysql", "SELECT 1 # ; DROP TABLE gl\n AS x", ""},
		{"words that contain write words", "postgres", "SELECT updated_at, deleted, inserted_by, intos FROM gl", ""},
		{"escaped backslash before quote", "mysql", `SELECT 'C:\\' AS path`, ""},
		{"watermark placeholder", "postgres", "SELECT * FROM gl WHERE updated_at > :watermark", ""},
		{"names that contain a refused function's name", "postgres", "SELECT dblink_count, my_pg_read_file, lo_importer FROM gl", ""},
		{"a string that names a refused function", "postgres", "SELECT 'dblink_exec' AS account", ""},

		// refused
		{"second statement", "postgres", "SELECT 1; DROP TABLE x", "more than one statement"},
		{"second statement after a string", "mysql", "SELECT 'a'; DELETE FROM gl", "more than one statement"},
		{"data-modifying WITH, DELETE", "postgres", "WITH x AS (DELETE FROM gl RETURNING *) SELECT * FROM x", "contains DELETE"},
		{"data-modifying WITH, INSERT", "postgres", "WITH x AS (INSERT INTO gl (a) VALUES (1) RETURNING a) SELECT a FROM x", "contains INSERT"},
		{"data-modifying WITH, UPDATE", "postgres", "with x as (update gl set a = 1 returning a) select a from x", "contains UPDATE"},
		{"data-modifying WITH, MERGE", "postgres", "WITH x AS (MERGE INTO gl USING s ON true WHEN MATCHED THEN DELETE RETURNING *) SELECT 1", "contains MERGE"},
		{"SELECT INTO creates a table", "postgres", "SELECT * INTO copy_of_gl FROM gl", "contains INTO"},
		{"INTO OUTFILE writes a file", "mysql", "SELECT * FROM gl INTO OUTFILE '/tmp/gl.csv'", "contains INTO"},
		{"FOR UPDATE locks rows", "postgres", "SELECT * FROM gl FOR UPDATE", "contains UPDATE"},
		{"SQL Server batch without semicolon", "sqlserver", "SELECT 1 AS x DROP TABLE gl", "contains DROP"},
		{"SQL Server EXEC in a batch", "sqlserver", "SELECT 1 AS x EXEC sp_who", "contains EXEC"},
		{"SQL Server OPENQUERY", "sqlserver", "SELECT * FROM OPENQUERY(srv, 'x')", "contains OPENQUERY"},
		{"SQLite ATTACH", "sqlite", "SELECT 1 FROM gl WHERE 0 ATTACH", "contains ATTACH"},
		{"begins with DELETE", "postgres", "DELETE FROM gl", "begins with DELETE"},
		{"begins with SET", "postgres", "SET TRANSACTION READ WRITE", "begins with SET"},
		{"begins with CALL", "mysql", "CALL purge()", "begins with CALL"},
		{"begins with EXPLAIN", "postgres", "EXPLAIN ANALYZE DELETE FROM gl", "begins with EXPLAIN"},
		{"only a comment", "postgres", "-- nothing", "empty"},
		{"empty", "sqlite", "", "empty"},
		{"unclosed string", "postgres", "SELECT 'a; DROP TABLE gl", "not closed"},
		{"unclosed comment", "sqlite", "SELECT 1 /* ; DROP TABLE gl", "not closed"},
		{"unclosed dollar quote", "postgres", "SELECT $a$ x", "not closed"},
		{"MySQL comments do not nest", "mysql", "SELECT 1 /* /* */ ; DROP TABLE gl */", "more than one statement"},
		{"SQLite comments do not nest", "sqlite", "SELECT 1 /* /* */ ; DROP TABLE gl", "more than one statement"},
		{"MySQL double dash with space is a comment", "mysql", "SELECT 1 -- ; DROP TABLE gl\n; DROP TABLE gl", "more than one statement"},
		{"MySQL executable comment", "mysql", "SELECT 1 /*!50000 ; DROP TABLE gl */", "/*!"},
		{"backslash before quote, mysql", "mysql", `SELECT '\' ; DROP TABLE gl; -- ' AS x`, "backslash before a quote"},
		{"backslash before quote, postgres E string", "postgres", `SELECT E'\' ; DROP TABLE gl; -- ' AS x`, "backslash before a quote"},
		{"unknown driver", "oracle", "SELECT 1 FROM dual", `driver "oracle"`},

		// refused by name: functions that write or reach beyond the
		// query, through a session of their own (dblink_exec's DELETE is a
		// string to the guard, and dblink runs it outside the read-only
		// transaction), the server's files or its programs.
		{"dblink_exec", "postgres", "SELECT dblink_exec('dbname=books', 'DELETE FROM victim') AS account", "calls dblink_exec"},
		{"dblink_exec in upper case", "postgres", "SELECT DBLINK_EXEC('dbname=books', 'DELETE FROM victim') AS account", "calls dblink_exec"},
		{"dblink_exec qualified", "postgres", "SELECT public.dblink_exec('dbname=books', 'DELETE FROM victim') AS account", "calls dblink_exec"},
		{"dblink_exec quoted", "postgres", `SELECT "dblink_exec"('dbname=books', 'DELETE FROM victim') AS account`, "calls dblink_exec"},
		{"dblink as a table", "postgres", "SELECT * FROM dblink('dbname=books', 'SELECT purge()') AS t(account text)", "calls dblink"},
		{"pg_read_file", "postgres", "SELECT pg_read_file('/etc/passwd') AS account", "calls pg_read_file"},
		{"lo_import", "postgres", "SELECT lo_import('/etc/passwd')::text AS account", "calls lo_import"},
		{"lo_export", "postgres", "SELECT lo_export(1, '/tmp/x') AS account", "calls lo_export"},
		{"LOAD_FILE", "mysql", "SELECT LOAD_FILE('/etc/passwd') AS account", "calls load_file"},
		{"sys_exec", "mysql", "SELECT sys_exec('rm -rf /srv') AS account", "calls sys_exec"},
		{"load_extension", "sqlite", "SELECT load_extension('/tmp/evil.so') AS account", "calls load_extension"},
		{"writefile", "sqlite", "SELECT writefile('/tmp/x', 'y') AS account", "calls writefile"},
		{"writefile bracketed", "sqlite", "SELECT [writefile]('/tmp/x', 'y') AS account", "calls writefile"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := CheckQuery(tc.driver, tc.query)
			if tc.refused == "" {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				return
			}
			wantError(t, err, tc.refused)
		})
	}
}

func TestMaskKeepsPositions(t *testing.T) {
	q := "SELECT 'x' AS a, \"b\" -- c\nFROM t /* d */"
	m, err := check("postgres", q)
	if err != nil {
		t.Fatal(err)
	}
	want := "SELECT     AS a,         \nFROM t        "
	if m != want || len(m) != len(q) {
		t.Errorf("masked %q, want %q", m, want)
	}
}

func TestBindWatermark(t *testing.T) {
	const q = "SELECT * FROM gl WHERE (:watermark IS NULL OR updated_at >= :watermark) AND note <> ':watermark' AND x::watermark IS NOT NULL AND y = :watermarks"
	tests := []struct {
		driver, want string
		args         int
	}{
		// Each expected query is the input with its two real placeholders
		// replaced by hand.
		{"postgres", "SELECT * FROM gl WHERE ($1 IS NULL OR updated_at >= $1) AND note <> ':watermark' AND x::watermark IS NOT NULL AND y = :watermarks", 1},
		{"mysql", "SELECT * FROM gl WHERE (? IS NULL OR updated_at >= ?) AND note <> ':watermark' AND x::watermark IS NOT NULL AND y = :watermarks", 2},
		{"sqlserver", "SELECT * FROM gl WHERE (@watermark IS NULL OR updated_at >= @watermark) AND note <> ':watermark' AND x::watermark IS NOT NULL AND y = :watermarks", 1},
		{"sqlite", q, 1},
	}
	for _, tc := range tests {
		t.Run(tc.driver, func(t *testing.T) {
			m, err := mask(q, dialects[tc.driver])
			if err != nil {
				t.Fatal(err)
			}
			at := placeholders(m)
			if !reflect.DeepEqual(at, []int{strings.Index(q, ":watermark"), strings.Index(q, ">= :watermark") + 3}) {
				t.Fatalf("placeholders at %v", at)
			}
			got, args := bindWatermark(tc.driver, q, at, "2025-04-02")
			if got != tc.want || len(args) != tc.args {
				t.Errorf("got %q with %d args, want %q with %d", got, len(args), tc.want, tc.args)
			}
		})
	}
}
