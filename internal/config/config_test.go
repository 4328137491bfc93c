package config

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func writeConfig(t *testing.T, text string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "costdrift.yaml")
	if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// The reference config in the repository is what `costdrift init` writes,
// and it loads with the documented defaults.
func TestExampleConfigLoads(t *testing.T) {
	example := filepath.Join("..", "..", "config", "costdrift.example.yaml")
	got, err := os.ReadFile(example)
	if err != nil {
		t.Fatal(err)
	}
	if string(got) != Starter {
		t.Fatalf("%s differs from config.Starter; copy Starter into it", example)
	}
	c, err := Load(example, testKinds)
	if err != nil {
		t.Fatalf("Load(%s): %v", example, err)
	}
	if c.Store != "costdrift.db" || c.Currency != "EUR" || c.Analysis.Window != 36 || c.Analysis.MinPeriods != 12 ||
		c.Analysis.Alpha != 0.05 || len(c.Analysis.Lags) != 2 || c.Analysis.Lags[1] != 1 ||
		c.Calendar.CloseAfterDays != 10 || c.Mail.SMTP.Port != 587 || c.Schedule.Cron != "0 6 * * *" {
		t.Errorf("example config decoded to %+v", c)
	}
	if len(c.Sources.Ledger) != 1 || c.Sources.Ledger[0].Path != "data/gl/*.csv" || c.Sources.Ledger[0].Kind != "csv" {
		t.Errorf("ledger sources = %+v", c.Sources.Ledger)
	}
	if c.StorePath() != filepath.Join("..", "..", "config", "costdrift.db") {
		t.Errorf("StorePath() = %q, want it relative to the config file", c.StorePath())
	}
}

func TestDefaultsFillMissingKeys(t *testing.T) {
	c, err := Load(writeConfig(t, "currency: NOK\n"), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	if c.Currency != "NOK" || c.Analysis.Window != 36 || c.Analysis.Grain != "account_cost_center" || c.Mail.Outbox != "outbox" {
		t.Errorf("got %+v", c)
	}
}

func TestEnvironmentOverrides(t *testing.T) {
	t.Setenv("COSTDRIFT_STORE", "/var/lib/costdrift/books.db")
	t.Setenv("COSTDRIFT_ANALYSIS_WINDOW", "24")
	c, err := Load(writeConfig(t, "store: local.db\nanalysis:\n  window: 30\n"), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	if c.Store != "/var/lib/costdrift/books.db" || c.StorePath() != "/var/lib/costdrift/books.db" {
		t.Errorf("store = %q, want the environment's", c.Store)
	}
	if c.Analysis.Window != 24 {
		t.Errorf("analysis.window = %d, want 24 from the environment", c.Analysis.Window)
	}
}

func TestLoadErrors(t *testing.T) {
	tests := []struct {
		name string
		yaml string
		want string // the whole message, file name replaced by FILE
	}{
		{"window below min periods", "analysis:\n  window: 10\n  min_periods: 12\n",
			"analysis.window: must be >= analysis.min_periods (12), not 10 (FILE)"},
		{"unknown top-level key", "stor: x.db\n", "stor: unknown key; did you mean store? (FILE)"},
		{"unknown nested key", "analysis:\n  windw: 3\n", "analysis.windw: unknown key; did you mean analysis.window? (FILE)"},
		{"unknown key in a source", "sources:\n  ledger:\n    - {name: gl, kind: csv, pth: a.csv}\n",
			"sources.ledger[0].pth: unknown key; did you mean sources.ledger[0].path? (FILE)"},
		{"unknown key far from any", "colour: blue\n", "colour: unknown key (FILE)"},
		{"bad grain", "analysis:\n  grain: department\n", `analysis.grain: must be account or account_cost_center, not "department" (FILE)`},
		{"duplicate source names", "sources:\n  ledger:\n    - {name: gl, kind: csv, path: a.csv}\n  activity:\n    - {name: gl, kind: csv, path: b.csv}\n",
			`sources.activity[0].name: "gl" is already the name of sources.ledger[0]; names must be unique (FILE)`},
		{"bad account range", "analysis:\n  accounts: [\"6999-5000\"]\n", `analysis.accounts: account range "6999-5000" runs backwards (FILE)`},
		{"bad currency", "currency: euro\n", `currency: "euro" is not an ISO 4217 code (three capital letters, such as EUR) (FILE)`},
		{"bad date format", "sources:\n  ledger:\n    - {name: gl, kind: csv, path: a.csv, date_format: DD/MM/YY}\n",
			`sources.ledger[0].date_format: "DD/MM/YY" must contain YYYY, MM and DD, e.g. DD.MM.YYYY (FILE)`},
		{"bad tls", "mail:\n  smtp:\n    tls: maybe\n", `mail.smtp.tls: must be starttls, tls or none, not "maybe" (FILE)`},
		{"bad time zone", "schedule:\n  timezone: Mars/Olympus\n", `schedule.timezone: "Mars/Olympus" is not a known time zone (e.g. UTC, Europe/Oslo) (FILE)`},
		{"bad cron", "schedule:\n  cron: \"0 6 * *\"\n",
			`schedule.cron: "0 6 * *" is not a cron expression (five fields such as "0 6 * * *", an optional leading seconds field, or @every 30s): expected 5 to 6 fields, found 4: [0 6 * *] (FILE)`},
		{"remote listen", "http:\n  listen: 0.0.0.0:9464\n",
			`http.listen: "0.0.0.0:9464" is not a loopback address; set http.allow_remote: true to listen beyond this machine (FILE)`},
		{"every interface", "http:\n  listen: \":9464\"\n",
			`http.listen: ":9464" is not a loopback address; set http.allow_remote: true to listen beyond this machine (FILE)`},
		{"bad log format", "log:\n  format: xml\n", `log.format: must be text or json, not "xml" (FILE)`},
		{"bad log level", "log:\n  level: loud\n", `log.level: must be debug, info, warn or error, not "loud" (FILE)`},
		{"lag twice", "analysis:\n  lags: [0, 0]\n", "analysis.lags: lag 0 is listed twice (FILE)"},
		{"bad calendar period", "calendar:\n  period: quarter\n", `calendar.period: must be month, week, 4-4-5, 4-5-4 or 5-4-4, not "quarter" (FILE)`},
		{"bad cost centre glob", "alerts:\n  recipients:\n    - {email: a@example.test}\n    - {email: b@example.test, cost_centers: [\"PLANT/*\", \"X[1\"]}\n",
			`alerts.recipients[1].cost_centers: "X[1" is not a valid glob: the class opened by [ at byte 1 is not closed (FILE)`},
		{"bad account glob", "alerts:\n  recipients:\n    - {email: a@example.test, accounts: [\"61\\\\\"]}\n",
			`alerts.recipients[0].accounts: "61\\" is not a valid glob: it ends in a lone \ (write \\ for a backslash) (FILE)`},
		// With "-" as the separator, "1-234" could be 1234 or -1 and 234.
		{"thousands separator a sign", "sources:\n  ledger:\n    - {name: gl, kind: csv, path: a.csv, thousands_separator: \"-\"}\n",
			`sources.ledger[0].thousands_separator: thousands separator "-" cannot be told apart from the digits, signs, brackets, exponent or decimal mark "." of an amount (FILE)`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := writeConfig(t, tc.yaml)
			_, err := Load(path, testKinds)
			if err == nil {
				t.Fatal("Load succeeded, want an error")
			}
			want := strings.ReplaceAll(tc.want, "FILE", path)
			if err.Error() != want {
				t.Errorf("error\n got %s\nwant %s", err, want)
			}
		})
	}
}

// Every kind of calendar the calendar package builds is accepted, written
// unquoted as a user would.
func TestCalendarPeriodKinds(t *testing.T) {
	for _, kind := range []string{"month", "week", "4-4-5", "4-5-4", "5-4-4"} {
		c, err := Load(writeConfig(t, "calendar:\n  period: "+kind+"\n  fiscal_year_start: 2\n"), testKinds)
		if err != nil {
			t.Errorf("calendar.period %s: %v", kind, err)
			continue
		}
		if c.Calendar.Period != kind || c.Calendar.FiscalYearStart != 2 {
			t.Errorf("calendar.period %s decoded to %+v", kind, c.Calendar)
		}
	}
}

func TestUnknownSourceKind(t *testing.T) {
	path := writeConfig(t, "sources:\n  ledger:\n    - {name: gl, kind: parquet, path: q.pq}\n")
	_, err := Load(path, testKinds)
	if err == nil || !strings.HasPrefix(err.Error(), "sources.ledger[0].kind: must be one of csv") || !strings.HasSuffix(err.Error(), `not "parquet" (`+path+")") {
		t.Fatalf("got %v", err)
	}
}

func TestSQLSourceNeedsDSNOutsideConfig(t *testing.T) {
	path := writeConfig(t, "sources:\n  ledger:\n    - {name: erp, kind: sql, driver: postgres, query: SELECT 1}\n")
	_, err := Load(path, testKinds)
	if err == nil || !strings.Contains(err.Error(), "set exactly one of dsn_env or dsn_file") {
		t.Fatalf("got %v", err)
	}
}

func TestAggregatedOnlyForTheLedger(t *testing.T) {
	path := writeConfig(t, "sources:\n  activity:\n    - {name: erp, kind: sql, driver: postgres, dsn_env: ERP_DSN, aggregated: true, query: SELECT 1}\n")
	_, err := Load(path, testKinds)
	if err == nil || !strings.Contains(err.Error(), "sources.activity[0].aggregated: applies to a ledger source only") {
		t.Fatalf("got %v", err)
	}
}

func TestMissingFile(t *testing.T) {
	_, err := Load(filepath.Join(t.TempDir(), "nope.yaml"), testKinds)
	if err == nil || !strings.Contains(err.Error(), "not found") || !strings.Contains(err.Error(), "costdrift init") {
		t.Fatalf("got %v, want a not-found error that points to costdrift init", err)
	}
}

func TestInvalidYAML(t *testing.T) {
	_, err := Load(writeConfig(t, "store: [unclosed\n"), testKinds)
	if err == nil || !strings.Contains(err.Error(), "not valid YAML") {
		t.Fatalf("got %v, want a YAML error", err)
	}
}

func TestGoDateLayout(t *testing.T) {
	for in, want := range map[string]string{"YYYY-MM-DD": "2006-01-02", "DD.MM.YYYY": "02.01.2006", "MM/DD/YYYY": "01/02/2006"} {
		got, err := GoDateLayout(in)
		if err != nil || got != want {
			t.Errorf("GoDateLayout(%q) = %q, %v; want %q", in, got, err, want)
		}
	}
}

// Schedules the daemon accepts: five fields, a leading seconds field, a
// descriptor; a remote listener is allowed once http.allow_remote says so.
func TestScheduleAndListenAccepted(t *testing.T) {
	for _, yaml := range []string{
		"schedule:\n  cron: \"30 0 6 * * *\"\n",
		"schedule:\n  cron: \"@every 30s\"\n",
		"schedule:\n  cron: \"@daily\"\n  timezone: Europe/Oslo\n",
		"http:\n  listen: \"[::1]:9464\"\n",
		"http:\n  listen: localhost:9464\n",
		"http:\n  listen: 0.0.0.0:9464\n  allow_remote: true\n",
		"log:\n  format: json\n  level: debug\n",
	} {
		if _, err := Load(writeConfig(t, yaml), testKinds); err != nil {
			t.Errorf("%q: %v", yaml, err)
		}
	}
}
