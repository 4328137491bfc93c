package sqlsource

import (
	"database/sql"
	"errors"
	"fmt"
	"strings"
)

// dialect says how one database writes comments, string literals and quoted
// names: the guard must find the end of each exactly as the server will, or
// text it takes for a string could be code to the server.
type dialect struct {
	nestedComments bool // /* /* */ */ nests (PostgreSQL, SQL Server)
	hashComments   bool // # starts a comment (MySQL)
	// dashNeedsSpace: "--" starts a comment only before a space or a
	// control character (MySQL); elsewhere "--" always does.
	dashNeedsSpace bool
	// backslash: a backslash can escape a quote inside a literal. MySQL
	// does so unless sql_mode has NO_BACKSLASH_ESCAPES; PostgreSQL does in
	// E'...' always and in '...' when standard_conforming_strings is off.
	// Where it depends on a server setting, a quote preceded by an odd
	// number of backslashes is refused, so that both readings agree.
	backslash    bool
	dollarQuotes bool // $tag$ ... $tag$ (PostgreSQL)
	brackets     bool // [name] (SQL Server, SQLite)
	backticks    bool // `name` (MySQL, SQLite)
	// execComments: /*! ... */ is executed, not ignored (MySQL).
	execComments bool
}

var dialects = map[string]dialect{
	"postgres":  {nestedComments: true, dollarQuotes: true, backslash: true},
	"mysql":     {hashComments: true, dashNeedsSpace: true, backslash: true, backticks: true, execComments: true},
	"sqlserver": {nestedComments: true, brackets: true},
	"sqlite":    {brackets: true, backticks: true},
}

// writeWords begin or embed a statement that writes, in at least one of the
// four dialects. They are refused anywhere outside literals, comments and
// quoted names: a PostgreSQL WITH may hold INSERT, UPDATE, DELETE or MERGE;
// SELECT ... INTO creates a table (PostgreSQL, SQL Server) or a file (MySQL
// INTO OUTFILE); SQL Server runs a batch of statements that need no ';'
// between them (SELECT 1 DROP TABLE t is two statements); FOR UPDATE locks
// rows. A column that happens to be called like one of them can be quoted
// ("update", [update], `update`).
var writeWords = map[string]bool{
	"INSERT": true, "UPDATE": true, "DELETE": true, "MERGE": true, "UPSERT": true,
	"INTO": true, "CREATE": true, "DROP": true, "ALTER": true, "TRUNCATE": true,
	"GRANT": true, "REVOKE": true, "DENY": true, "EXEC": true, "EXECUTE": true,
	"ATTACH": true, "DETACH": true, "BACKUP": true, "RESTORE": true, "DBCC": true,
	"SHUTDOWN": true, "KILL": true, "RECONFIGURE": true, "WRITETEXT": true, "UPDATETEXT": true,
	"OPENQUERY": true, "OPENROWSET": true, "OPENDATASOURCE": true,
}

// sideEffectFunctions, per driver, are functions a SELECT can call that
// write, or reach beyond the query, where neither the words above nor the
// read-only transaction see it: PostgreSQL's dblink runs its command (a
// string to the guard) in a session of its own, outside the source's READ
// ONLY transaction; others read or write the server's files, or run its
// programs. They are refused by name, anywhere outside literals and
// comments, and inside quoted names too ("dblink_exec", [writefile]). The
// list cannot be complete: a function of the database's own that calls one
// of them shows the guard only its own name. Only a login that can do no
// more than read closes that (README, SQL databases; checkLogin).
var sideEffectFunctions = map[string]map[string]bool{
	"postgres": set("dblink", "dblink_exec", "dblink_connect", "dblink_connect_u", "dblink_open", "dblink_fetch",
		"dblink_send_query", "dblink_get_result",
		"pg_read_file", "pg_read_binary_file", "pg_ls_dir", "pg_stat_file",
		"pg_file_write", "pg_file_rename", "pg_file_unlink", "pg_file_sync",
		"lo_import", "lo_export", "lo_from_bytea", "lo_put", "lo_create", "lo_creat", "lo_unlink", "lo_open",
		"pg_terminate_backend", "pg_cancel_backend", "pg_reload_conf", "pg_rotate_logfile", "pg_promote",
		"pg_switch_wal", "pg_create_restore_point", "pg_logical_emit_message"),
	"mysql":     set("load_file", "sys_exec", "sys_eval"),
	"sqlserver": set("xp_cmdshell", "sp_oacreate", "sp_oamethod"),
	"sqlite":    set("load_extension", "writefile", "readfile", "edit", "fts3_tokenizer"),
}

func set(names ...string) map[string]bool {
	m := make(map[string]bool, len(names))
	for _, n := range names {
		m[n] = true
	}
	return m
}

// watermarkName is the placeholder a watermark query compares against.
const watermarkName = ":watermark"

// CheckQuery refuses a query that is not exactly one SELECT or WITH
// statement, or that contains a word that writes, in the given driver's
// dialect (postgres, mysql, sqlserver or sqlite). It sends nothing.
func CheckQuery(driver, query string) error {
	_, err := check(driver, query)
	return err
}

// check returns the query masked (same length, with every comment, literal
// and quoted name blanked out) after checking it.
func check(driver, query string) (string, error) {
	d, ok := dialects[driver]
	if !ok {
		return "", fmt.Errorf("driver %q is not one of postgres, mysql, sqlserver, sqlite", driver)
	}
	masked, names, err := maskNames(query, d)
	if err != nil {
		return "", fmt.Errorf("query refused: %v", err)
	}
	body := strings.TrimRight(masked, " \t\r\n\f")
	body = strings.TrimSuffix(body, ";") // one statement may end with ';'
	if i := strings.IndexByte(body, ';'); i >= 0 {
		return "", errors.New("query refused: it holds more than one statement (a ';' before its end); a source query is one SELECT or WITH")
	}
	first := ""
	for _, w := range words(body) {
		first = strings.ToUpper(w.text)
		break
	}
	if first != "SELECT" && first != "WITH" {
		if first == "" {
			return "", errors.New("query refused: it is empty once comments are removed; write one SELECT or WITH statement")
		}
		return "", fmt.Errorf("query refused: it begins with %s; a source query is one SELECT or WITH statement", first)
	}
	for _, w := range words(body) {
		if u := strings.ToUpper(w.text); writeWords[u] {
			return "", fmt.Errorf("query refused: it contains %s, which writes or can write; a source only reads (quote a column of that name)", u)
		}
	}
	refused := sideEffectFunctions[driver]
	for _, w := range words(body) {
		names = append(names, w.text)
	}
	for _, n := range names {
		if l := strings.ToLower(n); refused[l] {
			return "", fmt.Errorf("query refused: it calls %s, which can write or reach beyond the query (through a session of its own, the server's files or its programs); a source only reads", l)
		}
	}
	return masked, nil
}

type word struct {
	text  string
	start int
}

// words lists the bare words of masked text: letters, digits, '_' and '$'
// not starting with a digit. Leading parentheses are skipped like any
// punctuation.
func words(masked string) []word {
	var out []word
	for i := 0; i < len(masked); {
		c := masked[i]
		if isWordStart(c) {
			j := i + 1
			for j < len(masked) && isWordChar(masked[j]) {
				j++
			}
			out = append(out, word{masked[i:j], i})
			i = j
			continue
		}
		if isDigit(c) { // a number such as 1e5 is not a word
			j := i + 1
			for j < len(masked) && isWordChar(masked[j]) {
				j++
			}
			i = j
			continue
		}
		i++
	}
	return out
}

func isWordStart(c byte) bool {
	return c == '_' || c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= 0x80
}
func isWordChar(c byte) bool { return isWordStart(c) || isDigit(c) || c == '$' }
func isDigit(c byte) bool    { return c >= '0' && c <= '9' }

// mask blanks out comments, string literals and quoted names, keeping the
// length so that positions in the result are positions in the query.
func mask(q string, d dialect) (string, error) {
	m, _, err := maskNames(q, d)
	return m, err
}

// maskNames is mask that also returns what each quoted name holds, its
// doubled quotes undone: "dblink_exec" names the function as the bare word
// does. A "..." that is a string in MySQL counts as a name here too.
func maskNames(q string, d dialect) (string, []string, error) {
	var names []string
	name := func(from, to int, quote byte) {
		inner := q[from+1 : to-1]
		names = append(names, strings.ReplaceAll(inner, string([]byte{quote, quote}), string(quote)))
	}
	b := []byte(q)
	blank := func(from, to int) {
		for k := from; k < to; k++ {
			if b[k] != '\n' {
				b[k] = ' '
			}
		}
	}
	for i := 0; i < len(q); {
		c := q[i]
		switch {
		case c == '-' && i+1 < len(q) && q[i+1] == '-':
			if d.dashNeedsSpace && i+2 < len(q) && q[i+2] > ' ' {
				i++ // MySQL: 1--1 is one minus minus one
				continue
			}
			end := lineEnd(q, i)
			blank(i, end)
			i = end
		case c == '#' && d.hashComments:
			end := lineEnd(q, i)
			blank(i, end)
			i = end
		case c == '/' && i+1 < len(q) && q[i+1] == '*':
			if d.execComments && i+2 < len(q) && q[i+2] == '!' {
				return "", nil, errors.New("MySQL runs the text of a /*! ... */ comment; remove it")
			}
			end, err := commentEnd(q, i, d.nestedComments)
			if err != nil {
				return "", nil, err
			}
			blank(i, end)
			i = end
		case c == '\'':
			// E'...' (PostgreSQL) always takes backslash escapes and a plain
			// literal may, depending on the server's settings: both are
			// read the same way, refusing the ambiguous \'.
			end, err := literalEnd(q, i, '\'', d.backslash, "string literal")
			if err != nil {
				return "", nil, err
			}
			blank(i, end)
			i = end
		case c == '"':
			end, err := literalEnd(q, i, '"', d.backslash, "quoted name or string")
			if err != nil {
				return "", nil, err
			}
			blank(i, end)
			name(i, end, '"')
			i = end
		case c == '`' && d.backticks:
			end, err := literalEnd(q, i, '`', false, "quoted name")
			if err != nil {
				return "", nil, err
			}
			blank(i, end)
			name(i, end, '`')
			i = end
		case c == '[' && d.brackets:
			end, err := literalEnd(q, i, ']', false, "bracketed name")
			if err != nil {
				return "", nil, err
			}
			blank(i, end)
			name(i, end, ']')
			i = end
		case c == '$' && d.dollarQuotes && (i == 0 || !isWordChar(q[i-1])):
			tag, ok := dollarTag(q, i)
			if !ok {
				i++ // $1 or a lone $
				continue
			}
			close := strings.Index(q[i+len(tag):], tag)
			if close < 0 {
				return "", nil, fmt.Errorf("the dollar-quoted string opened by %s at byte %d is not closed", tag, i)
			}
			end := i + len(tag) + close + len(tag)
			blank(i, end)
			i = end
		case isWordStart(c) || isDigit(c):
			// Skip a whole word so that a quote inside a PostgreSQL
			// identifier such as a$b is not taken for a dollar quote.
			j := i + 1
			for j < len(q) && isWordChar(q[j]) {
				j++
			}
			i = j
		default:
			i++
		}
	}
	return string(b), names, nil
}

func lineEnd(q string, i int) int {
	if j := strings.IndexByte(q[i:], '\n'); j >= 0 {
		return i + j
	}
	return len(q)
}

// commentEnd returns the index just past the block comment that starts at i.
func commentEnd(q string, i int, nested bool) (int, error) {
	depth := 0
	for j := i; j+1 < len(q); {
		switch {
		case q[j] == '/' && q[j+1] == '*':
			if nested || depth == 0 {
				depth++
			}
			j += 2
		case q[j] == '*' && q[j+1] == '/':
			depth--
			j += 2
			if depth == 0 {
				return j, nil
			}
		default:
			j++
		}
	}
	return 0, fmt.Errorf("the comment opened at byte %d is not closed", i)
}

// literalEnd returns the index just past the literal or quoted name that
// starts at i with an opening quote; a doubled closing quote is part of it.
// With escapes, a quote after an odd number of backslashes is refused,
// because whether it closes the literal depends on a server setting.
func literalEnd(q string, i int, closeQuote byte, escapes bool, what string) (int, error) {
	backslashes := 0
	for j := i + 1; j < len(q); j++ {
		c := q[j]
		if c == closeQuote {
			if escapes && backslashes%2 == 1 {
				return 0, fmt.Errorf("the %s at byte %d has a backslash before a quote, which the server reads one way or the other depending on its settings; double the quote instead", what, i)
			}
			if j+1 < len(q) && q[j+1] == closeQuote {
				j++
				backslashes = 0
				continue
			}
			return j + 1, nil
		}
		if c == '\\' {
			backslashes++
		} else {
			backslashes = 0
		}
	}
	return 0, fmt.Errorf("the %s opened at byte %d is not closed", what, i)
}

// dollarTag returns the $tag$ or $$ that opens a PostgreSQL dollar-quoted
// string at i.
func dollarTag(q string, i int) (string, bool) {
	j := i + 1
	if j < len(q) && isDigit(q[j]) {
		return "", false // $1 is a parameter
	}
	for j < len(q) && (isWordStart(q[j]) || isDigit(q[j])) {
		j++
	}
	if j < len(q) && q[j] == '$' {
		return q[i : j+1], true
	}
	return "", false
}

// placeholders returns where :watermark stands in the masked query: not
// inside a literal or comment, not part of a PostgreSQL cast (::) or of a
// longer name.
func placeholders(masked string) []int {
	var at []int
	for i := 0; ; {
		j := strings.Index(masked[i:], watermarkName)
		if j < 0 {
			return at
		}
		p := i + j
		end := p + len(watermarkName)
		before := p == 0 || (masked[p-1] != ':' && !isWordChar(masked[p-1]))
		after := end == len(masked) || !isWordChar(masked[end])
		if before && after {
			at = append(at, p)
		}
		i = end
	}
}

// bindWatermark replaces each :watermark by the driver's placeholder and
// returns the arguments that go with it: PostgreSQL $1 once; SQL Server and
// SQLite a named parameter; MySQL one ? per use.
func bindWatermark(driver, query string, at []int, value any) (string, []any) {
	if len(at) == 0 {
		return query, nil
	}
	var mark string
	var args []any
	switch driver {
	case "postgres":
		mark, args = "$1", []any{value}
	case "sqlserver":
		mark, args = "@watermark", []any{sql.Named("watermark", value)}
	case "sqlite":
		mark, args = ":watermark", []any{sql.Named("watermark", value)}
	default: // mysql
		mark = "?"
		for range at {
			args = append(args, value)
		}
	}
	var b strings.Builder
	prev := 0
	for _, p := range at {
		b.WriteString(query[prev:p])
		b.WriteString(mark)
		prev = p + len(watermarkName)
	}
	b.WriteString(query[prev:])
	return b.String(), args
}
