package config

import (
	"fmt"
	"sort"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Kinds lists the kinds of source a build reads, with the roles each can
// fill (ledger, activity, accounts). The application layer's registry of
// source readers gives it to Load, so that a kind is declared in one place.
type Kinds map[string][]string

// Validate checks every key, the sources' kinds against kinds, and returns
// the first problem, naming the key and the file.
func (c *Config) Validate(kinds Kinds) error {
	err := c.validate(kinds)
	if err != nil {
		err.File = c.File
		return err
	}
	return nil
}

// recordChecks check the lists of records. Each runs after the declared
// keys of its top-level key, so problems come in the order of the file.
var recordChecks = map[string]func(*Config, Kinds) *Error{
	"sources": (*Config).validateSources,
	"alerts":  func(c *Config, _ Kinds) *Error { return c.validateRecipients() },
}

func (c *Config) validate(kinds Kinds) *Error {
	for _, section := range sections {
		for _, k := range keysIn(section) {
			if err := k.checkValue(c); err != nil {
				return err
			}
		}
		if records := recordChecks[section]; records != nil {
			if err := records(c, kinds); err != nil {
				return err
			}
		}
	}
	return nil
}

func bad(key, format string, args ...any) *Error {
	return &Error{Key: key, Msg: fmt.Sprintf(format, args...)}
}

// validateSources checks each source of each role; a name may be used once
// across all roles, since commands and the store name sources by it.
func (c *Config) validateSources(kinds Kinds) *Error {
	names := map[string]string{} // source name -> the key that used it first
	for _, role := range []struct {
		name string
		list []Source
	}{{"ledger", c.Sources.Ledger}, {"activity", c.Sources.Activity}, {"accounts", c.Sources.Accounts}} {
		for i, s := range role.list {
			key := fmt.Sprintf("sources.%s[%d]", role.name, i)
			if strings.TrimSpace(s.Name) == "" {
				return bad(key+".name", "every source needs a name")
			}
			if prev, dup := names[s.Name]; dup {
				return bad(key+".name", "%q is already the name of %s; names must be unique", s.Name, prev)
			}
			names[s.Name] = key
			if err := validateSource(key, role.name, s, kinds); err != nil {
				return err
			}
		}
	}
	return nil
}

// validateSource checks one source: its kind against its role, the keys
// its kind needs, and how its file spells text, dates and amounts.
func validateSource(key, role string, s Source, kinds Kinds) *Error {
	roles, known := kinds[s.Kind]
	if !known {
		return bad(key+".kind", "must be one of %s, not %q", kinds.list(), s.Kind)
	}
	if !contains(roles, role) {
		return bad(key+".kind", "a %s source cannot deliver %s", s.Kind, role)
	}
	if err := validateKind(key, s); err != nil {
		return err
	}
	if s.Aggregated && role != "ledger" {
		return bad(key+".aggregated", "applies to a ledger source only")
	}
	return validateNotation(key, s)
}

// validateNotation checks the keys that say how a source's file is written.
func validateNotation(key string, s Source) *Error {
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
	return nil
}

// validateKind checks the keys a kind of source needs: a file for the
// file kinds, a driver, connection and query for sql.
func validateKind(key string, s Source) *Error {
	if s.Kind == "sql" {
		return validateSQL(key, s)
	}
	if strings.TrimSpace(s.Path) == "" {
		return bad(key+".path", "must name a file or a glob such as data/gl/*.csv")
	}
	return nil
}

func validateSQL(key string, s Source) *Error {
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

func (c *Config) validateRecipients() *Error {
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
		if msg := globList(r.CostCenters); msg != "" {
			return bad(key+".cost_centers", "%s", msg)
		}
		if msg := globList(r.Accounts); msg != "" {
			return bad(key+".accounts", "%s", msg)
		}
	}
	return nil
}

// globList returns what is wrong with the first of patterns that is not a
// glob. Such a pattern would match nothing, and the alerts it was meant for
// would never be mailed.
func globList(patterns []string) string {
	for _, p := range patterns {
		if _, err := costdrift.ParseGlob(p); err != nil {
			return fmt.Sprintf("%q is not a valid glob: %v", p, err)
		}
	}
	return ""
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

func (k Kinds) list() string {
	kinds := make([]string, 0, len(k))
	for name := range k {
		kinds = append(kinds, name)
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
