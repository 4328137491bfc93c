package config

import (
	"fmt"
	"net"
	"reflect"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// key declares one scalar key of the config file (a value or a list of
// values; the lists of records, sources and recipients, are checked in
// validate.go). Viper's defaults, the checks of Validate, the key's line in
// Starter and its line in Settings all come from here, so a new key is a
// field of Config and one entry in keys; a test fails when the two disagree.
type key struct {
	name   string // dotted, as in the file: analysis.window
	def    any    // the default, of the Go type of the Config field
	check  check  // what the value must be; nil accepts any value of the type
	secret bool   // its value is redacted wherever the config is printed
	doc    string // one line; the key's comment in the starter

	// example, when set, is the value the starter shows instead of the
	// default: a place to start that differs from what an absent key means.
	example any
}

// A check returns what is wrong with a key's value, or "" when nothing is.
// It is given the whole config for the keys whose rule names another key.
type check func(value any, c *Config) string

// leastMinPeriods is the smallest analysis.min_periods, so that a fit on
// that many periods has residual degrees of freedom left for its tests.
const leastMinPeriods = 4

// keys is in the order of the fields of Config, which is the order of the
// starter file (a test keeps the two the same).
var keys = []key{
	{name: "store", def: "costdrift.db", check: notBlank("must name the SQLite file, e.g. costdrift.db"),
		doc: "The SQLite store. It is created owner-only (mode 0600): ledger data is confidential and can include payroll by cost centre."},
	{name: "currency", def: "EUR", check: parses(func(s string) error { _, err := money.ParseCurrency(s); return err }),
		doc: "Functional currency (ISO 4217). Amounts are stored as integer minor units."},

	{name: "calendar.period", def: "month", check: oneOf("month", "week", "4-4-5", "4-5-4", "5-4-4"),
		doc: "month | week | 4-4-5 | 4-5-4 | 5-4-4 (see README)"},
	{name: "calendar.fiscal_year_start", def: 1, check: intFrom(1, 12, "a month number"),
		doc: "month number the fiscal year starts in"},
	{name: "calendar.close_after_days", def: 10, check: intAtLeast(0, ""),
		doc: "a period is analysed only this many days after its end"},

	{name: "analysis.grain", def: string(costdrift.GrainAccountCostCenter),
		check: oneOf(string(costdrift.GrainAccount), string(costdrift.GrainAccountCostCenter)),
		doc:   "account | account_cost_center"},
	{name: "analysis.accounts", def: []string{}, example: []string{"5000-6999"}, check: accountScope,
		doc: "ranges and globs of accounts analysed; empty (the default) = all"},
	{name: "analysis.window", def: 36, check: windowCoversMinPeriods,
		doc: "periods analysed, ending at the newest closed period"},
	{name: "analysis.min_periods", def: 12, check: intAtLeast(leastMinPeriods, "so that a fit has residual degrees of freedom"),
		doc: "fewer periods than this: insufficient_data"},
	{name: "analysis.lags", def: []int{0, 1}, check: lagList,
		doc: "periods a driver may lead the cost"},
	{name: "analysis.alpha", def: 0.05, check: floatIn(0, 0.2, true, ""),
		doc: "significance level, after correction for the drivers tried"},
	{name: "analysis.break_alpha", def: 0.01, check: floatIn(0, 0.1, false, "(0 turns the break test off)"),
		doc: "a change in behaviour counts at this level (0: no break test)"},
	{name: "analysis.bootstrap_replicates", def: 999, check: intFrom(99, 99999, ""),
		doc: "resamples behind a break's p-value"},
	{name: "analysis.approval", def: "none", check: oneOf("none", "required"),
		doc: "none | required: a new class, driver or formula waits for costdrift approve before budgets use it"},
	{name: "analysis.max_rejected_share", def: 0.01, check: floatIn(0, 1, false, "(0 holds back at any reject)"),
		doc: "a source period with more of its rows rejected is held back"},
	{name: "analysis.deflator", def: "", check: deflatorName,
		doc: "company-wide price index series among the activity data; costs are restated at the newest period's prices (empty: none)"},
	{name: "analysis.deflator_exempt", def: []string{}, check: deflatorExempt,
		doc: "objects (ACCOUNT/COSTCENTRE) or accounts whose costs are fixed by contract and stay as posted"},

	{name: "mail.smtp.host", def: "",
		doc: "empty: messages go to the outbox folder"},
	// No comment on the port: cmd/costdrift's mail tests rewrite the
	// starter's host, port, tls and username lines as they stand.
	{name: "mail.smtp.port", def: 587, check: intFrom(1, 65535, "a TCP port")},
	{name: "mail.smtp.tls", def: "starttls", check: oneOf("starttls", "tls", "none"),
		doc: "starttls | tls | none (none only to a loopback host)"},
	{name: "mail.smtp.username", def: "",
		doc: "set to log in (AUTH) with the password below"},
	{name: "mail.smtp.password_env", def: "COSTDRIFT_SMTP_PASSWORD",
		doc: "the password is never written here"},
	{name: "mail.smtp.password_file", def: "",
		doc: "or a file holding it, owner-only; used instead when set"},
	{name: "mail.smtp.from", def: "costdrift <costdrift@example.test>",
		doc: "sender of every message"},
	{name: "mail.outbox", def: "outbox", check: outboxWithoutServer,
		doc: "folder of .eml files while mail.smtp.host is empty"},

	{name: "schedule.cron", def: "0 6 * * *", check: cronExpression,
		doc: "every day at 06:00; @daily, @every 30s or six fields also work"},
	{name: "schedule.timezone", def: "UTC", check: timeZone,
		doc: "zone the cron times are in, e.g. Europe/Oslo"},

	{name: "http.listen", def: "", check: listenAddress,
		doc: "e.g. 127.0.0.1:9464 for /healthz and /metrics"},
	{name: "http.allow_remote", def: false,
		doc: "true to listen on an address other than loopback"},
	{name: "http.auth_header", def: "",
		doc: "header a trusted reverse proxy sets to the user; allow_remote needs it or users_file"},
	{name: "http.users_file", def: "",
		doc: "names and bcrypt hashes to sign in with (costdrift users add); allow_remote needs it or auth_header"},

	{name: "log.format", def: "text", check: oneOf("text", "json"),
		doc: "text | json"},
	{name: "log.level", def: "info", check: oneOf("debug", "info", "warn", "error"),
		doc: "debug | info | warn | error"},
}

// oneOf accepts the listed strings.
func oneOf(values ...string) check {
	return func(v any, _ *Config) string {
		s := v.(string)
		for _, x := range values {
			if s == x {
				return ""
			}
		}
		return fmt.Sprintf("must be %s, not %q", orList(values), s)
	}
}

// orList spells values as "a, b or c".
func orList(values []string) string {
	if len(values) == 1 {
		return values[0]
	}
	return strings.Join(values[:len(values)-1], ", ") + " or " + values[len(values)-1]
}

// intFrom accepts an integer from lo to hi; noun says what the number is.
func intFrom(lo, hi int, noun string) check {
	if noun != "" {
		noun += " "
	}
	return func(v any, _ *Config) string {
		if n := v.(int); n < lo || n > hi {
			return fmt.Sprintf("must be %sfrom %d to %d, not %d", noun, lo, hi, n)
		}
		return ""
	}
}

// intAtLeast accepts an integer of lo or more; why, when set, says why.
func intAtLeast(lo int, why string) check {
	if why != "" {
		why = " " + why
	}
	return func(v any, _ *Config) string {
		if n := v.(int); n < lo {
			return fmt.Sprintf("must be >= %d%s, not %d", lo, why, n)
		}
		return ""
	}
}

// floatIn accepts a number from lo to hi, lo itself excluded when openLow;
// note, when set, follows the interval in the message.
func floatIn(lo, hi float64, openLow bool, note string) check {
	left := "["
	if openLow {
		left = "("
	}
	interval := fmt.Sprintf("%s%g, %g]", left, lo, hi)
	if note != "" {
		interval += " " + note
	}
	return func(v any, _ *Config) string {
		// Written so that NaN, which compares false, is refused.
		x := v.(float64)
		if inside := x <= hi && (x > lo || !openLow && x == lo); !inside {
			return fmt.Sprintf("must be in %s, not %g", interval, x)
		}
		return ""
	}
}

// notBlank accepts any string with more than white space in it.
func notBlank(msg string) check {
	return func(v any, _ *Config) string {
		if strings.TrimSpace(v.(string)) == "" {
			return msg
		}
		return ""
	}
}

// parses accepts the strings parse accepts; its error is the message.
func parses(parse func(string) error) check {
	return func(v any, _ *Config) string {
		if err := parse(v.(string)); err != nil {
			return err.Error()
		}
		return ""
	}
}

func accountScope(v any, _ *Config) string {
	if _, err := costdrift.ParseAccountScope(v.([]string)); err != nil {
		return err.Error()
	}
	return ""
}

// windowCoversMinPeriods measures the window against a valid min_periods
// only; an invalid one is reported under its own key, which is the one to fix.
func windowCoversMinPeriods(v any, c *Config) string {
	least := c.Analysis.MinPeriods
	if w := v.(int); least >= leastMinPeriods && w < least {
		return fmt.Sprintf("must be >= analysis.min_periods (%d), not %d", least, w)
	}
	return ""
}

// deflatorName accepts no series or the name of one; the activity data
// holding it is checked when the analysis reads them.
func deflatorName(v any, _ *Config) string {
	name := v.(string)
	if name != "" && strings.TrimSpace(name) == "" {
		return "must name an activity series such as cpi, or be empty"
	}
	return ""
}

// deflatorExempt accepts objects and accounts once each, and only with a
// deflator to be exempt from.
func deflatorExempt(v any, c *Config) string {
	objects := v.([]string)
	if len(objects) > 0 && c.Analysis.Deflator == "" {
		return "lists objects exempt from restating, but analysis.deflator names no price index"
	}
	seen := map[string]bool{}
	for _, o := range objects {
		account, costCenter, cut := strings.Cut(o, "/")
		if strings.TrimSpace(account) == "" || (cut && strings.TrimSpace(costCenter) == "") {
			return fmt.Sprintf("each entry must be an account or ACCOUNT/COSTCENTRE, not %q", o)
		}
		if seen[o] {
			return fmt.Sprintf("%q is listed twice", o)
		}
		seen[o] = true
	}
	return ""
}

func lagList(v any, _ *Config) string {
	lags := v.([]int)
	if len(lags) == 0 {
		return "must list at least one lag, e.g. [0, 1]"
	}
	seen := map[int]bool{}
	for _, l := range lags {
		if l < 0 || l > 12 {
			return fmt.Sprintf("each lag must be from 0 to 12 periods, not %d", l)
		}
		if seen[l] {
			return fmt.Sprintf("lag %d is listed twice", l)
		}
		seen[l] = true
	}
	return ""
}

// outboxWithoutServer asks for a folder when there is no server to send to.
func outboxWithoutServer(v any, c *Config) string {
	if c.Mail.SMTP.Host == "" && strings.TrimSpace(v.(string)) == "" {
		return "must name a folder when mail.smtp.host is empty, or alerts would be lost"
	}
	return ""
}

func cronExpression(v any, _ *Config) string {
	spec := v.(string)
	if strings.TrimSpace(spec) == "" {
		return "must be a cron expression such as \"0 6 * * *\""
	}
	if _, err := CronParser.Parse(spec); err != nil {
		return fmt.Sprintf("%q is not a cron expression (five fields such as \"0 6 * * *\", an optional leading seconds field, or @every 30s): %v", spec, err)
	}
	return ""
}

func timeZone(v any, _ *Config) string {
	if _, err := time.LoadLocation(v.(string)); err != nil {
		return fmt.Sprintf("%q is not a known time zone (e.g. UTC, Europe/Oslo)", v)
	}
	return ""
}

// listenAddress accepts host:port, and a host beyond loopback only when
// http.allow_remote says so.
func listenAddress(v any, c *Config) string {
	listen := v.(string)
	if listen == "" {
		return ""
	}
	host, _, err := net.SplitHostPort(listen)
	if err != nil {
		return fmt.Sprintf("must be host:port such as 127.0.0.1:9464, not %q", listen)
	}
	if !c.HTTP.AllowRemote && !isLoopback(host) {
		return fmt.Sprintf("%q is not a loopback address; set http.allow_remote: true to listen beyond this machine", listen)
	}
	return ""
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

// field is a key of the file that holds a value rather than more keys: a
// scalar, a list of scalars, or a list of records.
type field struct {
	name    string
	index   []int // for reflect.Value.FieldByIndex on a Config
	records bool  // a list of records (sources, recipients): no declaration
}

// fields lists the value-holding keys of the struct type t in field order,
// named by their mapstructure tags.
func fields(t reflect.Type, prefix string, index []int) []field {
	var out []field
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		tag := f.Tag.Get("mapstructure")
		if tag == "" || tag == "-" {
			continue
		}
		at := append(append([]int(nil), index...), i)
		switch {
		case f.Type.Kind() == reflect.Struct:
			out = append(out, fields(f.Type, prefix+tag+".", at)...)
		case f.Type.Kind() == reflect.Slice && f.Type.Elem().Kind() == reflect.Struct:
			out = append(out, field{name: prefix + tag, index: at, records: true})
		default:
			out = append(out, field{name: prefix + tag, index: at})
		}
	}
	return out
}

// configFields are the fields of Config by key name.
var configFields = func() map[string]field {
	m := map[string]field{}
	for _, f := range fields(reflect.TypeOf(Config{}), "", nil) {
		m[f.name] = f
	}
	return m
}()

// sections are the top-level keys of the file, in the order of Config.
var sections = func() []string {
	var out []string
	for _, f := range fields(reflect.TypeOf(Config{}), "", nil) {
		top, _, _ := strings.Cut(f.name, ".")
		if len(out) == 0 || out[len(out)-1] != top {
			out = append(out, top)
		}
	}
	return out
}()

// keysIn are the declared keys of one top-level key, in declaration order.
func keysIn(section string) []key {
	var out []key
	for _, k := range keys {
		if k.name == section || strings.HasPrefix(k.name, section+".") {
			out = append(out, k)
		}
	}
	return out
}

// value is the key's value in c; it panics on a key Config has no field
// for, which the declaration test rules out.
func (k key) value(c *Config) any {
	f, ok := configFields[k.name]
	if !ok {
		panic("config: no field of Config for key " + k.name)
	}
	return reflect.ValueOf(c).Elem().FieldByIndex(f.index).Interface()
}

// checkValue returns the key's problem in c, if any. A secret value is
// redacted from the message.
func (k key) checkValue(c *Config) *Error {
	if k.check == nil {
		return nil
	}
	v := k.value(c)
	msg := k.check(v, c)
	if msg == "" {
		return nil
	}
	if s := fmt.Sprint(v); k.secret && s != "" {
		msg = strings.ReplaceAll(msg, s, redacted)
	}
	return &Error{Key: k.name, Msg: msg}
}

// redacted stands for a secret value wherever the config is printed.
const redacted = "<redacted>"

// Setting is one scalar key with its value as the file spells it.
type Setting struct {
	Key   string
	Value string
}

// Settings lists every scalar key of c with its value, secrets redacted:
// the form in which a config may be printed or logged.
func (c *Config) Settings() []Setting { return settings(c, keys) }

func settings(c *Config, declared []key) []Setting {
	out := make([]Setting, 0, len(declared))
	for _, k := range declared {
		v := yamlValue(k.value(c))
		if k.secret {
			v = redacted
		}
		out = append(out, Setting{Key: k.name, Value: v})
	}
	return out
}

// yamlValue spells v as a YAML value: a string plain where YAML would read
// it back as that string, and double-quoted otherwise; lists in flow style.
func yamlValue(v any) string {
	switch x := v.(type) {
	case string:
		if plainYAML(x) {
			return x
		}
		return strconv.Quote(x)
	case []string:
		items := make([]string, len(x))
		for i, s := range x {
			items[i] = strconv.Quote(s)
		}
		return "[" + strings.Join(items, ", ") + "]"
	case []int:
		items := make([]string, len(x))
		for i, n := range x {
			items[i] = strconv.Itoa(n)
		}
		return "[" + strings.Join(items, ", ") + "]"
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	default:
		return fmt.Sprint(x)
	}
}

// plainYAML reports whether s can be written unquoted: a word of letters,
// digits and _ . / - that starts with a letter and that YAML does not read
// as a boolean or null.
func plainYAML(s string) bool {
	if s == "" || !(s[0] >= 'a' && s[0] <= 'z' || s[0] >= 'A' && s[0] <= 'Z') {
		return false
	}
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("_./-", r)) {
			return false
		}
	}
	switch strings.ToLower(s) {
	case "true", "false", "yes", "no", "on", "off", "y", "n", "null":
		return false
	}
	return true
}
