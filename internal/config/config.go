package config

import (
	"fmt"
	"path/filepath"
)

// Config is the whole configuration. The mapstructure tags are the key names
// of the YAML file, which are a contract: keys may be added, never renamed.
type Config struct {
	Store    string   `mapstructure:"store"`
	Currency string   `mapstructure:"currency"`
	Calendar Calendar `mapstructure:"calendar"`
	Sources  Sources  `mapstructure:"sources"`
	Analysis Analysis `mapstructure:"analysis"`
	Alerts   Alerts   `mapstructure:"alerts"`
	Mail     Mail     `mapstructure:"mail"`
	Schedule Schedule `mapstructure:"schedule"`
	HTTP     HTTP     `mapstructure:"http"`
	Log      Log      `mapstructure:"log"`

	// File is the path the config was loaded from; relative paths in the
	// config are relative to its folder.
	File string `mapstructure:"-"`
	// Warnings are what Load noticed that did not stop it: COSTDRIFT_*
	// variables that set no key. The commands show them.
	Warnings []string `mapstructure:"-"`
}

// Calendar says how posting dates map to periods.
type Calendar struct {
	Period          string `mapstructure:"period"`
	FiscalYearStart int    `mapstructure:"fiscal_year_start"`
	CloseAfterDays  int    `mapstructure:"close_after_days"`
}

// Sources lists the inputs by role.
type Sources struct {
	Ledger   []Source `mapstructure:"ledger"`
	Activity []Source `mapstructure:"activity"`
	Accounts []Source `mapstructure:"accounts"`
}

// Source is one configured input.
type Source struct {
	Name string `mapstructure:"name"`
	Kind string `mapstructure:"kind"`
	Path string `mapstructure:"path"` // a file or a glob, relative to the config file

	// Columns maps a canonical column name (entry_id, date, amount, ...) to
	// the header the file uses instead.
	Columns map[string]string `mapstructure:"columns"`
	// Delimiter is "," ";" or "\t"; empty means detect from the header line.
	Delimiter string `mapstructure:"delimiter"`
	// DateFormat spells the date layout with YYYY, MM, DD (e.g. DD.MM.YYYY).
	DateFormat string `mapstructure:"date_format"`
	// DecimalComma accepts 1234,50 as one thousand two hundred and thirty-four and a half.
	DecimalComma bool `mapstructure:"decimal_comma"`
	// ThousandsSeparator, when set, is removed from amounts before parsing.
	ThousandsSeparator string `mapstructure:"thousands_separator"`
	// Layout of an activity file: long or wide; empty means detect.
	Layout string `mapstructure:"layout"`
	// Encoding of a CSV file: utf-8 (default), windows-1252 or iso-8859-1.
	Encoding string `mapstructure:"encoding"`

	// Sheet of an XLSX workbook: its name, or its position from 1; empty
	// means the first sheet.
	Sheet string `mapstructure:"sheet"`

	// AnalysisType of a SAF-T file whose analysis IDs become cost centres
	// (often the department dimension); empty means lines carry none.
	AnalysisType string `mapstructure:"analysis_type"`

	// Driver of a SQL source: postgres, mysql, sqlserver or sqlite.
	Driver string `mapstructure:"driver"`
	// DSNEnv and DSNFile name where the connection string is read from: an
	// environment variable or a file. It never appears in the config.
	DSNEnv  string `mapstructure:"dsn_env"`
	DSNFile string `mapstructure:"dsn_file"`
	// Query is one SELECT (or WITH) statement returning the canonical
	// columns, or for an aggregated ledger period, account, cost_center, amount.
	Query string `mapstructure:"query"`
	// Aggregated says the ledger query returns per-period sums, not lines.
	Aggregated bool `mapstructure:"aggregated"`
	// Refresh of a SQL source: full (default: re-read all, store the
	// difference) or watermark (only rows whose WatermarkColumn is above the
	// last value seen).
	Refresh         string `mapstructure:"refresh"`
	WatermarkColumn string `mapstructure:"watermark_column"`
	// Timeout bounds a SQL query, e.g. "5m".
	Timeout string `mapstructure:"timeout"`
}

// Analysis holds the method settings.
type Analysis struct {
	Grain      string   `mapstructure:"grain"`
	Accounts   []string `mapstructure:"accounts"`
	Window     int      `mapstructure:"window"`
	MinPeriods int      `mapstructure:"min_periods"`
	Lags       []int    `mapstructure:"lags"`
	Alpha      float64  `mapstructure:"alpha"`
	// BreakAlpha is the level at which a break in a cost's behaviour
	// counts; BootstrapReplicates the resamples of its p-value.
	BreakAlpha          float64 `mapstructure:"break_alpha"`
	BootstrapReplicates int     `mapstructure:"bootstrap_replicates"`
	// Approval is "required" when a new class, driver or formula must be
	// approved before budgets and variances use it, "none" otherwise
	// (README, The accountant's decisions).
	Approval string `mapstructure:"approval"`
	// MaxRejectedShare is the share of a source's rows in a period that may
	// be rejected before analysis holds back (README, When a sync goes wrong).
	MaxRejectedShare float64 `mapstructure:"max_rejected_share"`
	// Deflator names the company-wide price index series among the
	// activity data with which costs are restated at the newest analysed
	// period's prices; DeflatorExempt the objects (ACCOUNT/COSTCENTRE) or
	// accounts whose costs stay as posted (README, Prices and inflation).
	Deflator       string   `mapstructure:"deflator"`
	DeflatorExempt []string `mapstructure:"deflator_exempt"`
}

// Alerts holds the alert routing.
type Alerts struct {
	Recipients []Recipient `mapstructure:"recipients"`
}

// Recipient receives the alerts that match its patterns and severity.
type Recipient struct {
	Email       string   `mapstructure:"email"`
	CostCenters []string `mapstructure:"cost_centers"`
	Accounts    []string `mapstructure:"accounts"`
	MinSeverity string   `mapstructure:"min_severity"`
}

// Mail holds delivery settings.
type Mail struct {
	SMTP   SMTP   `mapstructure:"smtp"`
	Outbox string `mapstructure:"outbox"`
}

// SMTP is the mail server. The password never appears in the config: it is
// read from the environment variable PasswordEnv or the file PasswordFile.
type SMTP struct {
	Host         string `mapstructure:"host"`
	Port         int    `mapstructure:"port"`
	TLS          string `mapstructure:"tls"`
	Username     string `mapstructure:"username"`
	PasswordEnv  string `mapstructure:"password_env"`
	PasswordFile string `mapstructure:"password_file"`
	From         string `mapstructure:"from"`
}

// Schedule is when the daemon runs a cycle.
type Schedule struct {
	Cron     string `mapstructure:"cron"`
	Timezone string `mapstructure:"timezone"`
}

// HTTP is the optional health and metrics listener.
type HTTP struct {
	Listen string `mapstructure:"listen"`
	// AllowRemote permits a listen address other than loopback; the
	// endpoints carry no secrets but say how the books are doing.
	AllowRemote bool `mapstructure:"allow_remote"`
	// AuthHeader names the header a trusted reverse proxy sets to the
	// signed-in user; the web view needs it to listen beyond loopback.
	AuthHeader string `mapstructure:"auth_header"`
	// UsersFile holds the names and bcrypt hashes the web view's users
	// sign in with, kept by `costdrift users`; relative to the config.
	UsersFile string `mapstructure:"users_file"`
}

// Log is how the daemon writes its log lines.
type Log struct {
	Format string `mapstructure:"format"` // text | json
	Level  string `mapstructure:"level"`  // debug | info | warn | error
}

// Path resolves p against the folder of the config file; absolute paths are
// returned unchanged.
func (c *Config) Path(p string) string {
	if p == "" || filepath.IsAbs(p) || c.File == "" {
		return p
	}
	return filepath.Join(filepath.Dir(c.File), p)
}

// StorePath is the resolved path of the SQLite store.
func (c *Config) StorePath() string { return c.Path(c.Store) }

// Error is a configuration problem: the key, what is wrong, and the file.
type Error struct {
	Key  string
	Msg  string
	File string
}

func (e *Error) Error() string {
	if e.File == "" {
		return fmt.Sprintf("%s: %s", e.Key, e.Msg)
	}
	return fmt.Sprintf("%s: %s (%s)", e.Key, e.Msg, e.File)
}
