package config

import (
	"reflect"
	"strings"
	"testing"
)

// A value an environment variable gives a key is reported under the
// variable's name, with "(environment)" where a file's errors name the file:
// the file holds nothing wrong and would be searched in vain.
func TestEnvironmentOverrideErrorsNameTheVariable(t *testing.T) {
	tests := []struct {
		name, variable, value string
		want                  string
	}{
		{"not a whole number", "COSTDRIFT_ANALYSIS_WINDOW", "abc",
			`COSTDRIFT_ANALYSIS_WINDOW: must be a whole number, not "abc" (environment)`},
		{"a fraction for a whole number", "COSTDRIFT_MAIL_SMTP_PORT", "25.5",
			`COSTDRIFT_MAIL_SMTP_PORT: must be a whole number, not "25.5" (environment)`},
		{"not a number", "COSTDRIFT_ANALYSIS_ALPHA", "five percent",
			`COSTDRIFT_ANALYSIS_ALPHA: must be a number, not "five percent" (environment)`},
		{"not a boolean", "COSTDRIFT_HTTP_ALLOW_REMOTE", "maybe",
			`COSTDRIFT_HTTP_ALLOW_REMOTE: must be true or false, not "maybe" (environment)`},
		{"not a list of whole numbers", "COSTDRIFT_ANALYSIS_LAGS", "0,one",
			`COSTDRIFT_ANALYSIS_LAGS: must be whole numbers separated by commas, such as 0,1, not "0,one" (environment)`},
		// A value of the right type that fails the key's check.
		{"below min periods", "COSTDRIFT_ANALYSIS_WINDOW", "10",
			"COSTDRIFT_ANALYSIS_WINDOW: must be >= analysis.min_periods (12), not 10 (environment)"},
		{"not one of the values", "COSTDRIFT_LOG_LEVEL", "loud",
			`COSTDRIFT_LOG_LEVEL: must be debug, info, warn or error, not "loud" (environment)`},
		{"lag twice", "COSTDRIFT_ANALYSIS_LAGS", "1, 1",
			"COSTDRIFT_ANALYSIS_LAGS: lag 1 is listed twice (environment)"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Setenv(tc.variable, tc.value)
			_, err := Load(writeConfig(t, "currency: EUR\n"), testKinds)
			if err == nil {
				t.Fatal("Load succeeded, want an error")
			}
			if err.Error() != tc.want {
				t.Errorf("error\n got %s\nwant %s", err, tc.want)
			}
		})
	}
}

// Lists are set from the environment as comma-separated values.
func TestEnvironmentOverridesLists(t *testing.T) {
	t.Setenv("COSTDRIFT_ANALYSIS_LAGS", "0, 2")
	t.Setenv("COSTDRIFT_ANALYSIS_ACCOUNTS", "5000-5999,62*")
	t.Setenv("COSTDRIFT_HTTP_ALLOW_REMOTE", "true")
	t.Setenv("COSTDRIFT_HTTP_LISTEN", "0.0.0.0:9464")
	c, err := Load(writeConfig(t, "analysis:\n  lags: [1]\n"), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(c.Analysis.Lags, []int{0, 2}) || !reflect.DeepEqual(c.Analysis.Accounts, []string{"5000-5999", "62*"}) || !c.HTTP.AllowRemote {
		t.Errorf("lags %v, accounts %q, allow_remote %v; want [0 2], [5000-5999 62*], true", c.Analysis.Lags, c.Analysis.Accounts, c.HTTP.AllowRemote)
	}
}

// A COSTDRIFT_ variable that sets no key is a warning naming the nearest
// variable that would; the config still loads, with the key it missed at
// its default.
func TestEnvironmentVariablesMatchingNoKeyAreWarned(t *testing.T) {
	t.Setenv("COSTDRIFT_ANALYSYS_WINDOW", "24")
	t.Setenv("COSTDRIFT_SMTP_HOST", "smtp.example.test")
	t.Setenv("COSTDRIFT_COLOUR", "blue")
	// The lists of records are set in the file only.
	t.Setenv("COSTDRIFT_SOURCES_LEDGER", "gl.csv")
	c, err := Load(writeConfig(t, "sources:\n  ledger:\n    - {name: gl, kind: csv, path: a.csv}\n"), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	want := []string{
		"COSTDRIFT_ANALYSYS_WINDOW matches no key; did you mean COSTDRIFT_ANALYSIS_WINDOW?",
		"COSTDRIFT_COLOUR matches no key that the environment can set; it is ignored",
		"COSTDRIFT_SMTP_HOST matches no key; did you mean COSTDRIFT_MAIL_SMTP_HOST?",
		"COSTDRIFT_SOURCES_LEDGER matches no key that the environment can set; it is ignored",
	}
	if !reflect.DeepEqual(c.Warnings, want) {
		t.Errorf("warnings\n got %q\nwant %q", c.Warnings, want)
	}
	if c.Analysis.Window != 36 || c.Mail.SMTP.Host != "" || len(c.Sources.Ledger) != 1 || c.Sources.Ledger[0].Path != "a.csv" {
		t.Errorf("window %d, host %q, ledger %+v: a variable that sets no key changed the config", c.Analysis.Window, c.Mail.SMTP.Host, c.Sources.Ledger)
	}
}

// Variables that hold something other than a key's value are not warned
// about: the config file's path, the SMTP password under its default name
// or the name mail.smtp.password_env gives (in the file or the
// environment), a SQL source's connection string, and the test suite's own.
func TestEnvironmentVariablesThatAreNotKeys(t *testing.T) {
	t.Setenv("COSTDRIFT_CONFIG", "/etc/costdrift/costdrift.yaml")
	t.Setenv("COSTDRIFT_SMTP_PASSWORD", "secret")
	t.Setenv("COSTDRIFT_RELAY_PASSWORD", "secret")
	t.Setenv("COSTDRIFT_ERP_DSN", "postgres://books")
	t.Setenv("COSTDRIFT_HOURS_DSN", "postgres://hours")
	t.Setenv("COSTDRIFT_TEST_AS_COMMAND", "1")
	t.Setenv("COSTDRIFT_MAIL_SMTP_PASSWORD_ENV", "COSTDRIFT_RELAY_PASSWORD")
	yaml := "mail:\n  smtp:\n    password_env: COSTDRIFT_FILE_PASSWORD\n" +
		"sources:\n  ledger:\n    - {name: erp, kind: sql, driver: postgres, dsn_env: COSTDRIFT_ERP_DSN, query: SELECT 1}\n" +
		"  activity:\n    - {name: hours, kind: sql, driver: postgres, dsn_env: COSTDRIFT_HOURS_DSN, query: SELECT 1}\n"
	c, err := Load(writeConfig(t, yaml), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Warnings) != 0 {
		t.Errorf("warnings %q, want none", c.Warnings)
	}
	if c.Mail.SMTP.PasswordEnv != "COSTDRIFT_RELAY_PASSWORD" {
		t.Errorf("password_env = %q, want the environment's", c.Mail.SMTP.PasswordEnv)
	}

	// The name in the file is overridden, so a variable of that name is
	// read by nothing.
	t.Setenv("COSTDRIFT_FILE_PASSWORD", "secret")
	c, err = Load(writeConfig(t, yaml), testKinds)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"COSTDRIFT_FILE_PASSWORD matches no key that the environment can set; it is ignored"}; !reflect.DeepEqual(c.Warnings, want) {
		t.Errorf("warnings %q, want %q", c.Warnings, want)
	}
}

// The starter's header names variables that are keys.
func TestStarterHeaderNamesKeys(t *testing.T) {
	for _, name := range []string{"COSTDRIFT_STORE", "COSTDRIFT_ANALYSIS_WINDOW"} {
		if !strings.Contains(starterHeader, name) {
			t.Errorf("starter header lacks %s", name)
		}
		if _, ok := envKeys()[name]; !ok {
			t.Errorf("%s sets no key", name)
		}
	}
}
