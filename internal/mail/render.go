package mail

import (
	"bytes"
	"fmt"
	htmltemplate "html/template"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"text/template"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// Item is one alert in a digest, with its scatter chart as PNG bytes when
// the store has the data to draw one (nil otherwise).
type Item struct {
	Alert costdrift.Alert
	// Object is the alert's account and cost centre as the store holds
	// them; when zero, they are read from Alert.Object (SplitObject).
	Object      costdrift.CostObject
	AccountName string // the account's name from the chart of accounts, "" if unknown
	// Class and Driver are the object's current class and driver from the
	// store; the evidence's class_before/after and driver_before/after,
	// when a rule recorded them, take precedence.
	Class  string
	Driver string
	Chart  []byte
}

// Digest is one message: every alert due for one recipient in one cycle.
type Digest struct {
	To       string
	From     string
	Items    []Item
	Date     time.Time
	Cautions string // the footer every report carries
	Subject  string // "" = Subject(Items); set for a test message
}

// Subject says how many changes and where, e.g.
// "costdrift: 2 changes in cost behaviour (PAINT, ASSY)": the cost centres
// of the alerts, else their accounts, else the sources, at most three named.
func Subject(items []Item) string {
	n := len(items)
	what := "changes in cost behaviour"
	if n == 1 {
		what = "change in cost behaviour"
	}
	critical := 0
	var places []string
	seen := map[string]bool{}
	for _, it := range items {
		if it.Alert.Severity == costdrift.SeverityCritical {
			critical++
		}
		p := it.Alert.Object
		if !SourceKind(it.Alert.Kind) {
			o := it.Object
			if o == (costdrift.CostObject{}) {
				o = SplitObject(p)
			}
			p = o.Account
			if o.CostCenter != "" {
				p = o.CostCenter
			}
		} else {
			p = "source " + p
		}
		if !seen[p] {
			seen[p] = true
			places = append(places, p)
		}
	}
	s := fmt.Sprintf("costdrift: %d %s", n, what)
	if critical > 0 {
		s += fmt.Sprintf(", %d critical", critical)
	}
	if len(places) > 3 {
		places = append(places[:3], fmt.Sprintf("+%d more", len(places)-3))
	}
	if len(places) > 0 {
		s += " (" + strings.Join(places, ", ") + ")"
	}
	return oneLine(s)
}

func (d Digest) subject() string {
	if d.Subject != "" {
		return oneLine(d.Subject)
	}
	return Subject(d.Items)
}

// view is an Item as the templates show it; every field is plain text
// (html/template escapes it in the HTML part).
type view struct {
	ID       int64
	Title    string // "WARNING  reclassified  6200/PAINT Paint and coatings"
	Severity string
	Kind     string
	Object   string
	Message  string
	Since    string
	Changes  []row // what changed: before and after
	Evidence []row // test, p-value, R², n
	Explain  string
	Show     string
	CID      string // content id of the chart, "" without one
}

type row struct{ Name, Before, After string }

// kindText is how each kind is named in the mail.
var kindText = map[costdrift.AlertKind]string{
	costdrift.AlertReclassified:    "class changed",
	costdrift.AlertDriverChanged:   "driver changed",
	costdrift.AlertFixedShift:      "fixed part shifted",
	costdrift.AlertRateShift:       "rate shifted",
	costdrift.AlertSpendingOutlier: "spending outside the prediction",
	costdrift.AlertOutOfRange:      "activity outside the relevant range",
	costdrift.AlertDataGap:         "postings missing",
	costdrift.AlertStaleSource:     "source behind",
	costdrift.AlertSourceFailure:   "source failing",
}

// MaxCharts is how many charts one digest embeds at most. A chart is
// 50-80 kB of PNG; a digest after a large analysis can hold hundreds of
// alerts, and mail servers commonly refuse messages over 10-25 MB (common
// practice), so the digest would never arrive. 20 charts keep a digest
// near 1.5 MB.
const MaxCharts = 20

// Important is the ids of the at most n most important alerts among those
// for which ok is true (nil ok: every alert): critical before warning
// before info and, within a severity, the newest (last first raised)
// first. Source alerts have no chart and are never chosen.
func Important(alerts []costdrift.Alert, n int, ok func(costdrift.Alert) bool) map[int64]bool {
	var cand []costdrift.Alert
	for _, a := range alerts {
		if !SourceKind(a.Kind) && (ok == nil || ok(a)) {
			cand = append(cand, a)
		}
	}
	sort.SliceStable(cand, func(i, j int) bool {
		a, b := cand[i], cand[j]
		if ra, rb := a.Severity.Rank(), b.Severity.Rank(); ra != rb {
			return ra > rb
		}
		if !a.CreatedAt.Equal(b.CreatedAt) {
			return a.CreatedAt.After(b.CreatedAt)
		}
		return a.ID > b.ID
	})
	out := make(map[int64]bool, min(n, len(cand)))
	for _, a := range cand[:min(n, len(cand))] {
		out[a.ID] = true
	}
	return out
}

// charted is the ids of the alerts whose charts the digest embeds.
func charted(items []Item) map[int64]bool {
	alerts := make([]costdrift.Alert, len(items))
	drawn := map[int64]bool{}
	for i, it := range items {
		alerts[i] = it.Alert
		if len(it.Chart) > 0 {
			drawn[it.Alert.ID] = true
		}
	}
	return Important(alerts, MaxCharts, func(a costdrift.Alert) bool { return drawn[a.ID] })
}

func views(items []Item) []view {
	out := make([]view, 0, len(items))
	embed := charted(items)
	for _, it := range items {
		a := it.Alert
		ev := a.Evidence
		v := view{ID: a.ID, Severity: strings.ToUpper(string(a.Severity)), Kind: kindText[a.Kind], Object: oneLine(a.Object),
			Message: oneLine(a.Message), Since: oneLine(a.Period), Show: fmt.Sprintf("costdrift alerts show %d", a.ID)}
		if it.AccountName != "" {
			v.Object += " " + oneLine(it.AccountName)
		}
		if v.Kind == "" {
			v.Kind = string(a.Kind)
		}
		if !SourceKind(a.Kind) {
			v.Explain = "costdrift explain " + shellQuote(a.Object)
		}
		if s := text(value(ev.Break)); s != "" {
			v.Since = s
		} else if s := text(value(ev.Since)); s != "" {
			v.Since = s
		}
		driverBefore, driverAfter := text(value(ev.DriverBefore)), text(value(ev.DriverAfter))
		if driverBefore == "" && driverAfter == "" {
			driverBefore = text(value(ev.Driver))
			if driverBefore == "" {
				driverBefore = oneLine(it.Driver)
			}
			driverAfter = driverBefore
		}
		if c0, c1 := text(value(ev.ClassBefore)), text(value(ev.ClassAfter)); c0 != "" || c1 != "" {
			v.Changes = append(v.Changes, row{"class", words(c0), words(c1)})
		} else if it.Class != "" && !SourceKind(a.Kind) {
			v.Changes = append(v.Changes, row{"class", words(it.Class), words(it.Class)})
		}
		if driverBefore != "" || driverAfter != "" {
			v.Changes = append(v.Changes, row{"driver", driverWords(driverBefore), driverWords(driverAfter)})
		}
		if ev.FixedBefore != nil {
			v.Changes = append(v.Changes, row{"formula per period",
				formula(value(ev.FixedBefore), value(ev.RateBefore), driverBefore), formula(value(ev.FixedAfter), value(ev.RateAfter), driverAfter)})
		}
		if ev.Expected != nil {
			v.Changes = append(v.Changes, row{"cost in " + text(value(ev.Period)),
				"expected " + number(value(ev.Expected)) + " (95 %: " + number(value(ev.Low95)) + " to " + number(value(ev.High95)) + ")",
				"actual " + number(value(ev.Actual))})
		}
		if ev.RangeMin != nil {
			v.Changes = append(v.Changes, row{"activity in " + text(value(ev.Period)),
				"relevant range " + activity(value(ev.RangeMin)) + " to " + activity(value(ev.RangeMax)), activity(value(ev.Activity))})
		}
		v.Evidence = evidenceRows(ev)
		if embed[a.ID] {
			v.CID = fmt.Sprintf("chart-%d@costdrift", a.ID)
		}
		v.Title = v.Severity + "  " + v.Kind + "  " + v.Object
		out = append(out, v)
	}
	return out
}

type page struct {
	Subject string
	Items   []view
	// ChartNote, when the digest embeds MaxCharts charts and leaves out
	// others, says which were embedded and how to draw the rest.
	ChartNote string
	Cautions  []string // paragraphs
	Caution   string
}

func newPage(d Digest) page {
	p := page{Subject: d.subject(), Items: views(d.Items), Caution: strings.TrimSpace(d.Cautions)}
	embedded, without := 0, 0
	for _, v := range p.Items {
		switch {
		case v.CID != "":
			embedded++
		case v.Explain != "":
			without++
		}
	}
	if embedded == MaxCharts && without > 0 {
		p.ChartNote = fmt.Sprintf("Charts are attached for the %d most important alerts (most severe first, then newest); "+
			"draw the chart of any other with: costdrift explain OBJECT --chart FILE", MaxCharts)
	}
	for _, para := range strings.Split(d.Cautions, "\n\n") {
		if t := strings.Join(strings.Fields(para), " "); t != "" {
			p.Cautions = append(p.Cautions, t)
		}
	}
	return p
}

var textTmpl = template.Must(template.New("text").Parse(`{{.Subject}}
{{- if .ChartNote}}

{{.ChartNote}}{{end}}
{{range $i, $v := .Items}}
{{"--"}} {{$v.Title}}
{{$v.Message}}
{{- if $v.Since}}
Since: {{$v.Since}}{{end}}
{{- range $v.Changes}}
{{.Name}}:
    was  {{.Before}}
    now  {{.After}}
{{- end}}
{{- if $v.Evidence}}
Evidence:{{range $v.Evidence}}
    {{.Name}}: {{.After}}{{end}}{{end}}
{{- if $v.Explain}}
To see more: {{$v.Explain}}{{end}}
Alert: {{$v.Show}}
{{end}}
{{.Caution}}
`))

// Text renders the plain-text part.
func Text(d Digest) (string, error) {
	var b bytes.Buffer
	if err := textTmpl.Execute(&b, newPage(d)); err != nil {
		return "", fmt.Errorf("mail: text part: %w", err)
	}
	return b.String(), nil
}

var htmlTmpl = htmltemplate.Must(htmltemplate.New("html").Parse(`<!DOCTYPE html>
<html><head><meta charset="utf-8"><title>{{.Subject}}</title></head>
<body style="margin:0;padding:16px;background:#ffffff;color:#1a1a1a;font-family:Arial,Helvetica,sans-serif;font-size:14px;line-height:1.4">
<table role="presentation" width="100%" cellpadding="0" cellspacing="0" style="max-width:760px">
<tr><td><h1 style="font-size:18px;margin:0 0 12px 0">{{.Subject}}</h1></td></tr>
{{if .ChartNote}}<tr><td><p style="margin:0 0 12px 0">{{.ChartNote}}</p></td></tr>{{end}}
{{range .Items}}
<tr><td style="border-top:2px solid #444444;padding:12px 0">
<p style="margin:0 0 4px 0"><strong style="{{if eq .Severity "CRITICAL"}}color:#9b0000{{else if eq .Severity "WARNING"}}color:#7a4a00{{else}}color:#1f4e79{{end}}">{{.Severity}}</strong>
&nbsp;{{.Kind}} &nbsp;<strong>{{.Object}}</strong></p>
<p style="margin:0 0 8px 0">{{.Message}}</p>
{{if .Since}}<p style="margin:0 0 8px 0">Since: <strong>{{.Since}}</strong></p>{{end}}
{{if .Changes}}<table cellpadding="4" cellspacing="0" style="border-collapse:collapse;margin:0 0 8px 0">
<tr><th align="left" style="border-bottom:1px solid #999999"></th><th align="left" style="border-bottom:1px solid #999999">was</th><th align="left" style="border-bottom:1px solid #999999">now</th></tr>
{{range .Changes}}<tr><td style="color:#555555">{{.Name}}</td><td>{{.Before}}</td><td><strong>{{.After}}</strong></td></tr>
{{end}}</table>{{end}}
{{if .Evidence}}<table cellpadding="2" cellspacing="0" style="margin:0 0 8px 0;color:#333333">
{{range .Evidence}}<tr><td style="color:#555555;padding-right:12px">{{.Name}}</td><td>{{.After}}</td></tr>
{{end}}</table>{{end}}
{{if .CID}}<p style="margin:0 0 8px 0"><img src="cid:{{.CID}}" width="600" alt="chart of the cost of {{.Object}} with its formula: against activity, or over time for a cost without a driver" style="max-width:100%;height:auto;border:1px solid #cccccc"></p>{{end}}
{{if .Explain}}<p style="margin:0">To see more: <code style="background:#f2f2f2;padding:2px 4px">{{.Explain}}</code></p>{{end}}
<p style="margin:0;color:#555555">Alert: <code>{{.Show}}</code></p>
</td></tr>
{{end}}
<tr><td style="border-top:1px solid #999999;padding-top:12px;color:#555555;font-size:12px">{{range .Cautions}}<p style="margin:0 0 6px 0">{{.}}</p>{{end}}</td></tr>
</table>
</body></html>
`))

// HTML renders the HTML part: tables and inline styles only, no remote
// content; charts are referenced by content id (cid:) and travel inside
// the message. html/template escapes every value.
func HTML(d Digest) (string, error) {
	var b bytes.Buffer
	if err := htmlTmpl.Execute(&b, newPage(d)); err != nil {
		return "", fmt.Errorf("mail: html part: %w", err)
	}
	return b.String(), nil
}

// evidenceRows are the test, its statistic and p-value, the fit and the
// other figures a rule recorded, in that order, each with its name; an
// entry not recorded, or not a finite number, has no row.
func evidenceRows(ev costdrift.AlertEvidence) []row {
	var rows []row
	for _, e := range []struct {
		name  string
		value any
		show  func(any) string
	}{
		{"test", value(ev.Test), text},
		{"statistic", value(ev.Statistic), statistic},
		{"p-value", value(ev.P), pValue},
		{"R²", value(ev.R2), func(v any) string { return fixed(v, 3) }},
		{"n (periods)", value(ev.N), text},
		{"periods after the change", value(ev.PeriodsAfter), text},
		{"pinned fixed part", value(ev.PinnedFixed), func(v any) string { return fixed(v, 2) }},
		{"pinned rate", value(ev.PinnedRate), text},
		{"pinned until", value(ev.PinnedUntil), text},
		{"the data's fixed part", value(ev.DataFixed), func(v any) string { return fixed(v, 2) }},
		{"the data's rate", value(ev.DataRate), text},
		{"reason", value(ev.Reason), text},
		{"failures in a row", value(ev.FailuresInARow), text},
		{"last error", value(ev.Error), text},
		{"newest period", value(ev.NewestPeriod), text},
		{"closed periods behind", value(ev.ClosedPeriodsBehind), text},
		{"rows read", value(ev.RowsRead), text},
		{"rows rejected", value(ev.RowsRejected), text},
		{"file", value(ev.File), text},
	} {
		if e.value == nil {
			continue
		}
		if s := e.show(e.value); s != "" {
			rows = append(rows, row{Name: e.name, After: s})
		}
	}
	if ev.Provisional != nil && *ev.Provisional {
		rows = append(rows, row{Name: "provisional", After: "yes: few periods after the change so far"})
	}
	return rows
}

// value is an evidence entry for the formatting below: nil when it was not
// recorded or is a number that is not finite (stored as null).
func value[T any](p *T) any {
	if p == nil {
		return nil
	}
	if f, ok := any(*p).(float64); ok && (math.IsNaN(f) || math.IsInf(f, 0)) {
		return nil
	}
	return *p
}

// statistic shows a test statistic (present.Statistic): one decimal, or
// "exact fit" beyond a sane range.
func statistic(v any) string {
	f, ok := float(v)
	if !ok {
		return ""
	}
	return present.Statistic(f)
}

// text shows an evidence value: strings as they are, whole numbers without
// decimals, other numbers with up to four significant decimals.
func text(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return oneLine(x)
	case bool:
		return strconv.FormatBool(x)
	case int:
		return strconv.Itoa(x)
	case int64:
		return strconv.FormatInt(x, 10)
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return ""
		}
		if x == math.Trunc(x) && math.Abs(x) < 1e15 {
			return strconv.FormatFloat(x, 'f', 0, 64)
		}
		return present.Significant(x, 6)
	}
	return oneLine(fmt.Sprint(v))
}

func float(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, !math.IsNaN(x) && !math.IsInf(x, 0)
	case int:
		return float64(x), true
	case int64:
		return float64(x), true
	}
	return 0, false
}

func fixed(v any, digits int) string {
	f, ok := float(v)
	if !ok {
		return ""
	}
	return present.Number(f, digits)
}

// number is an amount with two decimals and thousands separators.
func number(v any) string { return fixed(v, 2) }

// activity is a driver value (present.Activity).
func activity(v any) string {
	f, ok := float(v)
	if !ok {
		return ""
	}
	return present.Activity(f)
}

// pValue shows p with three decimals, or "< 0.001": the finest the
// analysis's tests resolve (present.PValue).
func pValue(v any) string {
	f, ok := float(v)
	if !ok {
		return ""
	}
	return present.PValue(f, present.AnalyticResolution)
}

// formula writes fixed + rate × driver, the cost per period.
func formula(fixedPart, rate any, driver string) string {
	f, okF := float(fixedPart)
	r, okR := float(rate)
	switch {
	case !okF && !okR:
		return "none"
	case !okR || r == 0 || driver == "":
		return number(f)
	case !okF || f == 0:
		return rateText(r) + " × " + words(driver)
	}
	return number(f) + " + " + rateText(r) + " × " + words(driver)
}

// rateText shows a rate (present.Rate): 14.48, 0.0412.
func rateText(r float64) string { return present.Rate(r) }

func words(s string) string { return strings.ReplaceAll(s, "_", " ") }

func driverWords(s string) string {
	if s == "" {
		return "none"
	}
	return words(s)
}

// oneLine keeps a value from breaking the layout or a header: control
// characters become spaces.
func oneLine(s string) string {
	return strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f {
			return ' '
		}
		return r
	}, s)
}

var shellSafe = regexp.MustCompile(`^[A-Za-z0-9_./:=@%+-]+$`)

// shellQuote makes object one word for a POSIX shell, so the command can be
// pasted as it stands.
func shellQuote(s string) string {
	if shellSafe.MatchString(s) {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
