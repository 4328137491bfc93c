package config

import (
	"fmt"
	"net"
	"sort"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// SourceKinds lists the kinds of source this build reads, with the roles
// each can fill. A kind's package registers itself in cmd/costdrift.
var SourceKinds = map[string][]string{
	"csv":  {"ledger", "activity", "accounts"},
	"xlsx": {"ledger", "activity", "accounts"},
	"sql":  {"ledger", "activity", "accounts"},
	"saft": {"ledger", "accounts"},
}

// Validate checks every key and returns the first problem, naming the key and
// the file.
func (c *Config) Validate() error {
	err := c.validate()
	if err != nil {
		err.File = c.File
		return err
	}
	return nil
}

func (c *Config) validate() *Error {
	bad := func(key, format string, args ...any) *Error {
		return &Error{Key: key, Msg: fmt.Sprintf(format, args...)}
	}
	if strings.TrimSpace(c.Store) == "" {
		return bad("store", "must name the SQLite file, e.g. costdrift.db")
	}
	if _, err := money.ParseCurrency(c.Currency); err != nil {
		return bad("currency", "%v", err)
	}

	switch c.Calendar.Period {
	case "month", "week", "4-4-5", "4-5-4", "5-4-4":
	default:
		return bad("calendar.period", "must be month, week, 4-4-5, 4-5-4 or 5-4-4, not %q", c.Calendar.Period)
	}
	if c.Calendar.FiscalYearStart < 1 || c.Calendar.FiscalYearStart > 12 {
		return bad("calendar.fiscal_year_start", "must be a month number from 1 to 12, not %d", c.Calendar.FiscalYearStart)
	}
	if c.Calendar.CloseAfterDays < 0 {
		return bad("calendar.close_after_days", "must be >= 0, not %d", c.Calendar.CloseAfterDays)
	}

	names := map[string]string{}
	for _, role := range []struct {
		name string
		list []Source
	}{{"ledger", c.Sources.Ledger}, {"activity", c.Sources.Activity}, {"accounts", c.Sources.Accounts}} {
		for i, s := range role.list {
			roleKey := "sources." + role.name
			key := fmt.Sprintf("%s[%d]", roleKey, i)
			if strings.TrimSpace(s.Name) == "" {
				return bad(key+".name", "every source needs a name")
			}
			if prev, dup := names[s.Name]; dup {
				return bad(key+".name", "%q is already the name of %s; names must be unique", s.Name, prev)
			}
			names[s.Name] = key
			roles, known := SourceKinds[s.Kind]
			if !known {
				return bad(key+".kind", "must be one of %s, not %q", kindList(), s.Kind)
			}
			if !contains(roles, role.name) {
				return bad(key+".kind", "a %s source cannot deliver %s", s.Kind, role.name)
			}
			if err := validateKind(key, s, bad); err != nil {
				return err
			}
			if s.Aggregated && role.name != "ledger" {
				return bad(key+".aggregated", "applies to a ledger source only")
			}
			switch strings.ToLower(s.Encoding) {
			case "", "utf-8", "utf8", "windows-1252", "cp1252", "iso-8859-1", "latin1":
			default:
				return bad(key+".encoding", "must be utf-8, windows-1252 or iso-8859-1, not %q", s.Encoding)
			}
			switch s.Delimiter {
			case "", ",", ";", "\t":
			default:
				return bad(key+".delimiter", "must be \",\", \";\" or \"\\t\", not %q", s.Delimiter)
			}
			if s.DateFormat != "" {
				if _, err := GoDateLayout(s.DateFormat); err != nil {
					return bad(key+".date_format", "%v", err)
				}
			}
			if s.DecimalComma && s.ThousandsSeparator == "," {
				return bad(key+".thousands_separator", "cannot be \",\" when decimal_comma is true")
			}
			if !s.DecimalComma && s.ThousandsSeparator == "." {
				return bad(key+".thousands_separator", "cannot be \".\" unless decimal_comma is true")
			}
			if err := (money.Notation{DecimalComma: s.DecimalComma, ThousandsSeparator: s.ThousandsSeparator}).Validate(); err != nil {
				return bad(key+".thousands_separator", "%v", err)
			}
			switch s.Layout {
			case "", "long", "wide":
			default:
				return bad(key+".layout", "must be long or wide, not %q", s.Layout)
			}
		}
	}

	a := c.Analysis
	if a.Grain != string(costdrift.GrainAccount) && a.Grain != string(costdrift.GrainAccountCostCenter) {
		return bad("analysis.grain", "must be account or account_cost_center, not %q", a.Grain)
	}
	if _, err := costdrift.ParseAccountScope(a.Accounts); err != nil {
		return bad("analysis.accounts", "%v", err)
	}
	if a.MinPeriods < 4 {
		return bad("analysis.min_periods", "must be >= 4 so that a fit has residual degrees of freedom, not %d", a.MinPeriods)
	}
	if a.Window < a.MinPeriods {
		return bad("analysis.window", "must be >= analysis.min_periods (%d), not %d", a.MinPeriods, a.Window)
	}
	if len(a.Lags) == 0 {
		return bad("analysis.lags", "must list at least one lag, e.g. [0, 1]")
	}
	seen := map[int]bool{}
	for _, l := range a.Lags {
		if l < 0 || l > 12 {
			return bad("analysis.lags", "each lag must be from 0 to 12 periods, not %d", l)
		}
		if seen[l] {
			return bad("analysis.lags", "lag %d is listed twice", l)
		}
		seen[l] = true
	}
	if !(a.Alpha > 0 && a.Alpha <= 0.2) {
		return bad("analysis.alpha", "must be in (0, 0.2], not %g", a.Alpha)
	}
	if !(a.BreakAlpha >= 0 && a.BreakAlpha <= 0.1) {
		return bad("analysis.break_alpha", "must be in [0, 0.1] (0 turns the break test off), not %g", a.BreakAlpha)
	}
	if a.BootstrapReplicates < 99 || a.BootstrapReplicates > 99999 {
		return bad("analysis.bootstrap_replicates", "must be from 99 to 99999, not %d", a.BootstrapReplicates)
	}

	for i, r := range c.Alerts.Recipients {
		key := fmt.Sprintf("alerts.recipients[%d]", i)
		if !strings.Contains(r.Email, "@") {
			return bad(key+".email", "must be an email address, not %q", r.Email)
		}
		switch r.MinSeverity {
		case "", "info", "warning", "critical":
		default:
			return bad(key+".min_severity", "must be info, warning or critical, not %q", r.MinSeverity)
		}
		// A pattern that is not a glob would match nothing, and the alerts
		// it was meant for would never be mailed.
		for _, list := range []struct {
			name     string
			patterns []string
		}{{"cost_centers", r.CostCenters}, {"accounts", r.Accounts}} {
			for _, p := range list.patterns {
				if _, err := costdrift.ParseGlob(p); err != nil {
					return bad(key+"."+list.name, "%q is not a valid glob: %v", p, err)
				}
			}
		}
	}

	switch c.Mail.SMTP.TLS {
	case "starttls", "tls", "none":
	default:
		return bad("mail.smtp.tls", "must be starttls, tls or none, not %q", c.Mail.SMTP.TLS)
	}
	if c.Mail.SMTP.Port < 1 || c.Mail.SMTP.Port > 65535 {
		return bad("mail.smtp.port", "must be a TCP port from 1 to 65535, not %d", c.Mail.SMTP.Port)
	}
	if c.Mail.SMTP.Host == "" && strings.TrimSpace(c.Mail.Outbox) == "" {
		return bad("mail.outbox", "must name a folder when mail.smtp.host is empty, or alerts would be lost")
	}

	if strings.TrimSpace(c.Schedule.Cron) == "" {
		return bad("schedule.cron", "must be a cron expression such as \"0 6 * * *\"")
	}
	if _, err := time.LoadLocation(c.Schedule.Timezone); err != nil {
		return bad("schedule.timezone", "%q is not a known time zone (e.g. UTC, Europe/Oslo)", c.Schedule.Timezone)
	}
	if _, err := CronParser.Parse(c.Schedule.Cron); err != nil {
		return bad("schedule.cron", "%q is not a cron expression (five fields such as \"0 6 * * *\", an optional leading seconds field, or @every 30s): %v", c.Schedule.Cron, err)
	}
	if c.HTTP.Listen != "" {
		host, _, err := net.SplitHostPort(c.HTTP.Listen)
		if err != nil {
			return bad("http.listen", "must be host:port such as 127.0.0.1:9464, not %q", c.HTTP.Listen)
		}
		if !c.HTTP.AllowRemote && !isLoopback(host) {
			return bad("http.listen", "%q is not a loopback address; set http.allow_remote: true to listen beyond this machine", c.HTTP.Listen)
		}
	}
	switch c.Log.Format {
	case "text", "json":
	default:
		return bad("log.format", "must be text or json, not %q", c.Log.Format)
	}
	switch c.Log.Level {
	case "debug", "info", "warn", "error":
	default:
		return bad("log.level", "must be debug, info, warn or error, not %q", c.Log.Level)
	}
	return nil
}

// GoDateLayout turns a date format spelt with YYYY, MM and DD (the way a
// user writes it, e.g. DD.MM.YYYY) into a Go time layout.
func GoDateLayout(format string) (string, error) {
	if !strings.Contains(format, "YYYY") || !strings.Contains(format, "MM") || !strings.Contains(format, "DD") {
		return "", fmt.Errorf("%q must contain YYYY, MM and DD, e.g. DD.MM.YYYY", format)
	}
	r := strings.NewReplacer("YYYY", "2006", "MM", "01", "DD", "02")
	layout := r.Replace(format)
	if strings.ContainsAny(layout, "YMD") {
		return "", fmt.Errorf("%q: only YYYY, MM and DD may be used", format)
	}
	return layout, nil
}

// validateKind checks the keys a kind of source needs.
func validateKind(key string, s Source, bad func(key, format string, args ...any) *Error) *Error {
	if s.Kind == "sql" {
		switch s.Driver {
		case "postgres", "mysql", "sqlserver", "sqlite":
		default:
			return bad(key+".driver", "must be postgres, mysql, sqlserver or sqlite, not %q", s.Driver)
		}
		if (s.DSNEnv == "") == (s.DSNFile == "") {
			return bad(key+".dsn_env", "set exactly one of dsn_env or dsn_file: the connection string never goes in the config")
		}
		if strings.TrimSpace(s.Query) == "" {
			return bad(key+".query", "must be one SELECT or WITH statement")
		}
		if s.Path != "" {
			return bad(key+".path", "a sql source reads no file; remove path")
		}
		switch s.Refresh {
		case "", "full":
		case "watermark":
			if s.WatermarkColumn == "" {
				return bad(key+".watermark_column", "must name a column when refresh is watermark")
			}
		default:
			return bad(key+".refresh", "must be full or watermark, not %q", s.Refresh)
		}
		if s.Timeout != "" {
			if d, err := time.ParseDuration(s.Timeout); err != nil || d <= 0 {
				return bad(key+".timeout", "must be a duration such as 30s or 5m, not %q", s.Timeout)
			}
		}
		return nil
	}
	if strings.TrimSpace(s.Path) == "" {
		return bad(key+".path", "must name a file or a glob such as data/gl/*.csv")
	}
	return nil
}

func kindList() string {
	kinds := make([]string, 0, len(SourceKinds))
	for k := range SourceKinds {
		kinds = append(kinds, k)
	}
	sort.Strings(kinds)
	return strings.Join(kinds, ", ")
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// isLoopback reports whether host names only this machine; an empty host
// (":9464") listens on every interface and so is not loopback.
func isLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}
