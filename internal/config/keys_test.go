package config

import (
	"reflect"
	"strings"
	"testing"

	"github.com/spf13/viper"
)

// Every scalar field of Config is declared in keys and every declaration is
// a field, in the same order (the starter's), so that a key cannot be added
// in one place only.
func TestKeysAreConfigFields(t *testing.T) {
	var fieldNames, declared []string
	for _, f := range fields(reflect.TypeOf(Config{}), "", nil) {
		if !f.records {
			fieldNames = append(fieldNames, f.name)
		}
	}
	for _, k := range keys {
		declared = append(declared, k.name)
	}
	for _, name := range missingFrom(declared, fieldNames) {
		t.Errorf("Config has a field for %s, keys no declaration", name)
	}
	for _, name := range missingFrom(fieldNames, declared) {
		t.Errorf("keys declares %s, Config has no field for it", name)
	}
	if !t.Failed() && !reflect.DeepEqual(fieldNames, declared) {
		t.Errorf("keys are not in the order of Config's fields:\nfields   %v\ndeclared %v", fieldNames, declared)
	}
}

// missingFrom lists the names of want that list lacks.
func missingFrom(list, want []string) []string {
	have := map[string]bool{}
	for _, n := range list {
		have[n] = true
	}
	var out []string
	for _, n := range want {
		if !have[n] {
			out = append(out, n)
		}
	}
	return out
}

// Each default (and each example the starter shows instead) has the type of
// its field, is what Default decodes, and passes the key's own check.
func TestDefaultsPassTheirChecks(t *testing.T) {
	c := Default()
	for _, k := range keys {
		got := k.value(c)
		if reflect.TypeOf(k.def) != reflect.TypeOf(got) {
			t.Errorf("%s: default is a %T, the field a %T", k.name, k.def, got)
			continue
		}
		if yamlValue(got) != yamlValue(k.def) {
			t.Errorf("%s: Default() has %s, the declaration %s", k.name, yamlValue(got), yamlValue(k.def))
		}
		if k.check == nil {
			continue
		}
		if msg := k.check(got, c); msg != "" {
			t.Errorf("%s: the default %s fails its check: %s", k.name, yamlValue(got), msg)
		}
		if k.example == nil {
			continue
		}
		if reflect.TypeOf(k.example) != reflect.TypeOf(got) {
			t.Errorf("%s: example is a %T, the field a %T", k.name, k.example, got)
		} else if msg := k.check(k.example, c); msg != "" {
			t.Errorf("%s: the example %s fails its check: %s", k.name, yamlValue(k.example), msg)
		}
	}
}

// The starter shows every key, so that the file `costdrift init` writes is
// where a user finds each one (its header says so), with the declared value.
func TestStarterShowsEveryKey(t *testing.T) {
	raw := viper.New()
	raw.SetConfigType("yaml")
	if err := raw.ReadConfig(strings.NewReader(Starter)); err != nil {
		t.Fatal(err)
	}
	c, err := Load(writeConfig(t, Starter), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range keys {
		if !raw.IsSet(k.name) {
			t.Errorf("the starter does not show %s", k.name)
			continue
		}
		if got, want := yamlValue(k.value(c)), yamlValue(k.shown()); got != want {
			t.Errorf("the starter's %s reads back as %s, want %s", k.name, got, want)
		}
	}
}

// How the starter spells values and comments: strings plain or quoted as YAML
// needs, lists in flow style, a nested key's doc aligned beside it, a
// top-level key's doc wrapped above it. Expected lines written by hand.
func TestStarterLines(t *testing.T) {
	for _, want := range []string{
		"# The SQLite store. It is created owner-only (mode 0600): ledger data is\n# confidential and can include payroll by cost centre.\nstore: costdrift.db\n",
		"  grain: account_cost_center   # account | account_cost_center\n",
		"  lags: [0, 1]                 # periods a driver may lead the cost\n",
		"  alpha: 0.05                  # significance level, after correction for the drivers tried\n",
		"mail:\n  smtp:\n    host: \"\"                   # empty: messages go to the outbox folder\n    port: 587\n",
		"    password_env: COSTDRIFT_SMTP_PASSWORD   # the password is never written here\n",
		"  outbox: outbox               # folder of .eml files while mail.smtp.host is empty\n",
		"  cron: \"0 6 * * *\"            # every day at 06:00",
		"  allow_remote: false          # true to listen on an address other than loopback\n",
	} {
		if !strings.Contains(Starter, want) {
			t.Errorf("the starter has no\n%s", want)
		}
	}
}

func TestYAMLValue(t *testing.T) {
	for _, tc := range []struct {
		in   any
		want string
	}{
		{"EUR", "EUR"},
		{"", `""`},
		{"0 6 * * *", `"0 6 * * *"`},
		{"costdrift <costdrift@example.test>", `"costdrift <costdrift@example.test>"`},
		{"true", `"true"`}, // plain, YAML would read a boolean
		{"No", `"No"`},
		{"4-4-5", `"4-4-5"`}, // a leading digit is quoted: a number might start there
		{[]string{}, "[]"},
		{[]string{"5000-6999", "6400/*"}, `["5000-6999", "6400/*"]`},
		{[]int{0, 1}, "[0, 1]"},
		{0.05, "0.05"},
		{999, "999"},
		{false, "false"},
	} {
		if got := yamlValue(tc.in); got != tc.want {
			t.Errorf("yamlValue(%#v) = %s, want %s", tc.in, got, tc.want)
		}
	}
}

func TestSettings(t *testing.T) {
	got := Default().Settings()
	if len(got) != len(keys) {
		t.Fatalf("%d settings, want one per key (%d)", len(got), len(keys))
	}
	want := map[string]string{"store": "costdrift.db", "analysis.lags": "[0, 1]", "schedule.cron": `"0 6 * * *"`, "http.allow_remote": "false"}
	for _, s := range got {
		if w, ok := want[s.Key]; ok && s.Value != w {
			t.Errorf("setting %s = %s, want %s", s.Key, s.Value, w)
		}
	}
}

// A key declared secret is printed redacted and its value is kept out of
// the messages of its check. No key of today's config is secret (passwords
// and connection strings are read from elsewhere), so a declaration is made
// up here.
func TestSecretsRedacted(t *testing.T) {
	declared := []key{
		{name: "mail.smtp.username", def: "", secret: true, check: oneOf("alice", "bob")},
		{name: "mail.smtp.host", def: ""},
	}
	c := Default()
	c.Mail.SMTP.Username = "hunter2"
	c.Mail.SMTP.Host = "mail.example.test"
	got := settings(c, declared)
	want := []Setting{{"mail.smtp.username", "<redacted>"}, {"mail.smtp.host", "mail.example.test"}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("settings = %v, want %v", got, want)
	}
	err := declared[0].checkValue(c)
	if err == nil || err.Error() != `mail.smtp.username: must be alice or bob, not "<redacted>"` {
		t.Errorf("check of a secret key: %v", err)
	}
}

// A key whose name says it holds a secret must be declared secret; keys
// ending in _env or _file name where a secret is kept and hold none.
func TestSecretLookingKeysAreSecret(t *testing.T) {
	for _, k := range keys {
		leaf := k.name[strings.LastIndex(k.name, ".")+1:]
		if strings.HasSuffix(leaf, "_env") || strings.HasSuffix(leaf, "_file") {
			continue
		}
		for _, word := range []string{"password", "secret", "token", "dsn"} {
			if strings.Contains(leaf, word) && !k.secret {
				t.Errorf("%s looks like a secret but is not declared secret", k.name)
			}
		}
	}
}

// The messages of the declared checks, other than those TestLoadErrors
// covers; each is the message the config gave before the keys were
// declared in one table.
func TestDeclaredCheckMessages(t *testing.T) {
	tests := []struct {
		name string
		yaml string
		want string // FILE stands for the file name
	}{
		{"blank store", "store: \" \"\n", "store: must name the SQLite file, e.g. costdrift.db (FILE)"},
		{"month 13", "calendar:\n  fiscal_year_start: 13\n", "calendar.fiscal_year_start: must be a month number from 1 to 12, not 13 (FILE)"},
		{"negative close", "calendar:\n  close_after_days: -1\n", "calendar.close_after_days: must be >= 0, not -1 (FILE)"},
		// An invalid min_periods is reported under its own key, not as a
		// window too short for it.
		{"min periods below 4", "analysis:\n  window: 1\n  min_periods: 2\n",
			"analysis.min_periods: must be >= 4 so that a fit has residual degrees of freedom, not 2 (FILE)"},
		{"no lags", "analysis:\n  lags: []\n", "analysis.lags: must list at least one lag, e.g. [0, 1] (FILE)"},
		{"lag 13", "analysis:\n  lags: [0, 13]\n", "analysis.lags: each lag must be from 0 to 12 periods, not 13 (FILE)"},
		{"alpha 0", "analysis:\n  alpha: 0\n", "analysis.alpha: must be in (0, 0.2], not 0 (FILE)"},
		{"alpha not a number", "analysis:\n  alpha: .nan\n", "analysis.alpha: must be in (0, 0.2], not NaN (FILE)"},
		{"alpha above", "analysis:\n  alpha: 0.25\n", "analysis.alpha: must be in (0, 0.2], not 0.25 (FILE)"},
		{"break alpha above", "analysis:\n  break_alpha: 0.2\n", "analysis.break_alpha: must be in [0, 0.1] (0 turns the break test off), not 0.2 (FILE)"},
		{"few replicates", "analysis:\n  bootstrap_replicates: 50\n", "analysis.bootstrap_replicates: must be from 99 to 99999, not 50 (FILE)"},
		{"port 0", "mail:\n  smtp:\n    port: 0\n", "mail.smtp.port: must be a TCP port from 1 to 65535, not 0 (FILE)"},
		{"no outbox, no server", "mail:\n  outbox: \"\"\n", "mail.outbox: must name a folder when mail.smtp.host is empty, or alerts would be lost (FILE)"},
		{"blank cron", "schedule:\n  cron: \"\"\n", `schedule.cron: must be a cron expression such as "0 6 * * *" (FILE)`},
		{"listen without port", "http:\n  listen: localhost\n", `http.listen: must be host:port such as 127.0.0.1:9464, not "localhost" (FILE)`},
		{"source without name", "sources:\n  ledger:\n    - {kind: csv, path: a.csv}\n", "sources.ledger[0].name: every source needs a name (FILE)"},
		{"saft activity", "sources:\n  activity:\n    - {name: a, kind: saft, path: a.xml}\n", "sources.activity[0].kind: a saft source cannot deliver activity (FILE)"},
		{"bad layout", "sources:\n  activity:\n    - {name: a, kind: csv, path: a.csv, layout: tall}\n", `sources.activity[0].layout: must be long or wide, not "tall" (FILE)`},
		{"sql timeout", "sources:\n  ledger:\n    - {name: erp, kind: sql, driver: mysql, dsn_file: dsn, query: SELECT 1, timeout: soon}\n",
			`sources.ledger[0].timeout: must be a duration such as 30s or 5m, not "soon" (FILE)`},
		{"bad severity", "alerts:\n  recipients:\n    - {email: a@example.test, min_severity: high}\n",
			`alerts.recipients[0].min_severity: must be info, warning or critical, not "high" (FILE)`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := writeConfig(t, tc.yaml)
			_, err := Load(path, testKinds)
			if err == nil {
				t.Fatal("Load succeeded, want an error")
			}
			if want := strings.ReplaceAll(tc.want, "FILE", path); err.Error() != want {
				t.Errorf("error\n got %s\nwant %s", err, want)
			}
		})
	}
}

// The deflator's keys: exempt objects need a price index to be exempt from,
// and each names an account or an account and cost centre (README, Prices
// and inflation).
func TestDeflatorKeys(t *testing.T) {
	tests := []struct {
		name string
		yaml string
		want string // "" for a valid config; FILE stands for the file name
	}{
		{"deflator and exempt", "analysis:\n  deflator: cpi\n  deflator_exempt: [6300/ADMIN, \"6400\"]\n", ""},
		{"blank deflator", "analysis:\n  deflator: \" \"\n", "analysis.deflator: must name an activity series such as cpi, or be empty (FILE)"},
		{"exempt without deflator", "analysis:\n  deflator_exempt: [6300/ADMIN]\n",
			"analysis.deflator_exempt: lists objects exempt from restating, but analysis.deflator names no price index (FILE)"},
		{"exempt without cost centre", "analysis:\n  deflator: cpi\n  deflator_exempt: [6300/]\n",
			`analysis.deflator_exempt: each entry must be an account or ACCOUNT/COSTCENTRE, not "6300/" (FILE)`},
		{"exempt twice", "analysis:\n  deflator: cpi\n  deflator_exempt: [6300/ADMIN, 6300/ADMIN]\n",
			`analysis.deflator_exempt: "6300/ADMIN" is listed twice (FILE)`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := writeConfig(t, tc.yaml)
			c, err := Load(path, testKinds)
			if tc.want == "" {
				if err != nil {
					t.Fatal(err)
				}
				if c.Analysis.Deflator != "cpi" || len(c.Analysis.DeflatorExempt) != 2 || c.Analysis.DeflatorExempt[1] != "6400" {
					t.Errorf("deflator %q, exempt %q", c.Analysis.Deflator, c.Analysis.DeflatorExempt)
				}
				return
			}
			if err == nil {
				t.Fatal("Load succeeded, want an error")
			}
			if want := strings.ReplaceAll(tc.want, "FILE", path); err.Error() != want {
				t.Errorf("error\n got %s\nwant %s", err, want)
			}
		})
	}
}

// StarterWith shows the values given in place of the defaults, and the
// file it gives loads with them; the rest is the starter as it is.
func TestStarterWith(t *testing.T) {
	text, err := StarterWith(map[string]any{"analysis.deflator": "price_index", "analysis.deflator_exempt": []string{"6100", "6110/PAINT"}})
	if err != nil {
		t.Fatal(err)
	}
	c, err := Load(writeConfig(t, text), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	if c.Analysis.Deflator != "price_index" || strings.Join(c.Analysis.DeflatorExempt, " ") != "6100 6110/PAINT" {
		t.Errorf("deflator %q, exempt %q", c.Analysis.Deflator, c.Analysis.DeflatorExempt)
	}
	plain, err := StarterWith(nil)
	if err != nil || plain != Starter {
		t.Errorf("StarterWith(nil) differs from Starter (error %v)", err)
	}
	if _, err := StarterWith(map[string]any{"analysis.deflater": "cpi"}); err == nil || err.Error() != "config: starter: no key analysis.deflater" {
		t.Errorf("undeclared key: %v", err)
	}
	if _, err := StarterWith(map[string]any{"analysis.window": "24"}); err == nil || err.Error() != "config: starter: analysis.window takes a int, not a string" {
		t.Errorf("value of another type: %v", err)
	}
}
