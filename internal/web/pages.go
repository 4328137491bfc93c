package web

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"html"
	"html/template"
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/present"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// view is what every page's template gets: the page's own data and what
// the layout shows around it.
type view struct {
	Title    string
	Nav      string // the menu entry of the page
	User     string
	SignOut  bool // signed in with the users file, so a form signs out
	CSRF     string
	Currency string
	Data     any
}

// handlerFunc builds one page: its title, menu entry and data; an error
// with a status of its own (notFound) answers with that status.
type handlerFunc func(ctx context.Context, e *pipeline.Env, r *http.Request) (title, nav string, data any, err error)

// notFound is an error a page answers 404 with.
type notFound struct{ error }

func (s *Server) page(build handlerFunc) http.Handler {
	return s.guard(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		e := s.env()
		title, nav, data, err := build(r.Context(), e, r)
		var nf notFound
		switch {
		case errors.As(err, &nf):
			w.Header().Set("Content-Type", "text/html; charset=utf-8")
			w.WriteHeader(http.StatusNotFound)
			s.render(w, "error", view{Title: "Not found", User: s.user(r), Currency: e.Currency.Code, Data: err.Error()})
			return
		case err != nil:
			s.opt.Log.Error("web page", "path", r.URL.Path, "error", err)
			w.Header().Set("Content-Type", "text/html; charset=utf-8")
			w.WriteHeader(http.StatusInternalServerError)
			s.render(w, "error", view{Title: "Error", User: s.user(r), Currency: e.Currency.Code, Data: err.Error()})
			return
		}
		v := view{Title: title, Nav: nav, User: s.user(r), SignOut: s.opt.UsersFile != "" && s.sessionUser(r) != "", CSRF: s.csrfToken(w, r), Currency: e.Currency.Code, Data: data}
		var buf bytes.Buffer
		if err := s.pages[nav].ExecuteTemplate(&buf, "layout.html", v); err != nil {
			s.opt.Log.Error("web template", "page", nav, "error", err)
			http.Error(w, "the page could not be drawn", http.StatusInternalServerError)
			return
		}
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		w.Write(buf.Bytes())
	}))
}

func (s *Server) render(w http.ResponseWriter, name string, v view) {
	if err := s.pages[name].ExecuteTemplate(w, "layout.html", v); err != nil {
		s.opt.Log.Error("web template", "page", name, "error", err)
	}
}

func (s *Server) overview(ctx context.Context, e *pipeline.Env, _ *http.Request) (string, string, any, error) {
	o, err := pipeline.ViewOverview(ctx, e, s.db)
	if err != nil {
		return "", "", nil, err
	}
	return "Overview", "overview", overviewView(o), nil
}

// classOrder is the order of the classes' columns.
var classOrder = []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained, costdrift.InsufficientData}

type overviewData struct {
	Classes    []costdrift.Class
	Centres    []centreRow
	Total      centreRow
	Severities []severityCount
	Proposals  int
	Overview   pipeline.Overview
}

type centreRow struct {
	CostCenter string
	Counts     []int
	Total      int
}

type severityCount struct {
	Severity costdrift.Severity
	Open     int
}

func overviewView(o pipeline.Overview) overviewData {
	d := overviewData{Classes: classOrder, Proposals: o.Proposals, Overview: o,
		Total: centreRow{CostCenter: "All", Counts: make([]int, len(classOrder))}}
	at := map[string]int{}
	for _, c := range o.Classes {
		i, ok := at[c.CostCenter]
		if !ok {
			i = len(d.Centres)
			at[c.CostCenter] = i
			d.Centres = append(d.Centres, centreRow{CostCenter: c.CostCenter, Counts: make([]int, len(classOrder))})
		}
		for j, k := range classOrder {
			if k == c.Class {
				d.Centres[i].Counts[j] += c.Objects
				d.Total.Counts[j] += c.Objects
			}
		}
		d.Centres[i].Total += c.Objects
		d.Total.Total += c.Objects
	}
	for _, sv := range []costdrift.Severity{costdrift.SeverityCritical, costdrift.SeverityWarning, costdrift.SeverityInfo} {
		d.Severities = append(d.Severities, severityCount{sv, o.Open[sv]})
	}
	return d
}

// pageSize is how many objects a page of the list shows.
const pageSize = 50

type objectsData struct {
	Query     sqlite.ObjectQuery
	Sort      string
	Rows      []report.Row
	Total     int
	From, To  int
	Prev      string // link to the page before, "" on the first
	Next      string
	Classes   []costdrift.Class
	Sorts     []string
	SortLinks map[string]string // a column heading's link: sorts by it, or reverses
}

func (s *Server) objects(ctx context.Context, e *pipeline.Env, r *http.Request) (string, string, any, error) {
	v := r.URL.Query()
	q := sqlite.ObjectQuery{
		CostCenter: strings.TrimSpace(v.Get("cost_center")), Account: strings.TrimSpace(v.Get("account")),
		Class: costdrift.Class(v.Get("class")), ChangedSince: strings.TrimSpace(v.Get("changed_since")),
		Search: v.Get("q"), Sort: v.Get("sort"), Descending: v.Get("dir") == "desc", Limit: pageSize,
	}
	if _, ok := sqlite.ObjectSorts[q.Sort]; !ok {
		q.Sort = "object"
	}
	if q.Class != "" && !validClass(q.Class) {
		q.Class = ""
	}
	pageNo, _ := strconv.Atoi(v.Get("page"))
	pageNo = max(pageNo, 1)
	q.Offset = (pageNo - 1) * pageSize
	list, err := pipeline.ViewObjects(ctx, e, s.db, q)
	if err != nil {
		return "", "", nil, err
	}
	d := objectsData{Query: q, Rows: list.Rows, Total: list.Total, Classes: classOrder, SortLinks: map[string]string{}}
	if len(list.Rows) > 0 {
		d.From, d.To = q.Offset+1, q.Offset+len(list.Rows)
	}
	link := func(change func(url.Values)) string {
		c := url.Values{}
		for k, vs := range v {
			c[k] = vs
		}
		change(c)
		return "/objects?" + c.Encode()
	}
	if pageNo > 1 {
		d.Prev = link(func(c url.Values) { c.Set("page", strconv.Itoa(pageNo-1)) })
	}
	if q.Offset+len(list.Rows) < list.Total {
		d.Next = link(func(c url.Values) { c.Set("page", strconv.Itoa(pageNo+1)) })
	}
	for name := range sqlite.ObjectSorts {
		dir := "asc"
		if name == q.Sort && !q.Descending {
			dir = "desc"
		}
		d.SortLinks[name] = link(func(c url.Values) { c.Set("sort", name); c.Set("dir", dir); c.Del("page") })
	}
	return "Objects", "objects", d, nil
}

func validClass(c costdrift.Class) bool {
	for _, k := range classOrder {
		if k == c {
			return true
		}
	}
	return false
}

type objectData struct {
	Ex        report.Explanation
	History   report.History
	Decisions []costdrift.Decision
	Timeline  template.HTML
	Scatter   template.HTML
	Periods   []periodRow
}

// periodRow is one period of the cost-over-time chart as a table row,
// with the address of its ledger lines.
type periodRow struct {
	Period string
	// Posted is the cost as the ledger lines add up, when Cost is that
	// cost restated at the formula's prices (README, Prices and
	// inflation); nil otherwise.
	Posted          *float64
	Cost            float64
	Formula         *float64 // nil where the formula gives nothing
	Before, Outlier bool
	Lines           string
}

func (s *Server) object(ctx context.Context, e *pipeline.Env, r *http.Request) (string, string, any, error) {
	name := r.URL.Query().Get("o")
	if name == "" {
		return "", "", nil, notFound{errors.New("no object named: open one from the list of objects")}
	}
	known, err := pipeline.ObjectAnalysed(ctx, s.db, name)
	if err != nil {
		return "", "", nil, err
	}
	if !known {
		return "", "", nil, notFound{fmt.Errorf("no analysed cost object %q", name)}
	}
	ex, charts, err := pipeline.Explain(ctx, e, s.db, name, true)
	if err != nil {
		return "", "", nil, err
	}
	h, _, err := pipeline.History(ctx, e, s.db, name, false)
	if err != nil {
		return "", "", nil, err
	}
	ds, err := pipeline.ViewDecisions(ctx, s.db, name)
	if err != nil {
		return "", "", nil, err
	}
	d := objectData{Ex: ex, History: h, Decisions: ds}
	if charts != nil && charts.Timeline != nil {
		var buf bytes.Buffer
		if err := charts.Timeline.WriteSVG(&buf, chart.DefaultWidthPt, chart.DefaultHeightPt); err != nil {
			return "", "", nil, fmt.Errorf("object %s: chart: %w", name, err)
		}
		d.Timeline = labelled(buf.Bytes(), "Chart of the cost of "+name+" over the periods, with the formula of each period")
		posted := map[string]float64{}
		if ex.Prices != nil {
			for _, c := range ex.Prices.Periods {
				posted[c.Period] = c.Posted
			}
		}
		for _, p := range charts.Timeline.Points {
			row := periodRow{Period: p.Period, Cost: p.Cost, Before: p.Before, Outlier: p.Outlier, Lines: linesLink(name, p.Period, 1)}
			if v, ok := posted[p.Period]; ok {
				row.Posted = &v
			}
			if !math.IsNaN(p.Formula) {
				f := p.Formula
				row.Formula = &f
			}
			d.Periods = append(d.Periods, row)
		}
	}
	if charts != nil && charts.Scatter != nil {
		var buf bytes.Buffer
		if err := charts.Scatter.WriteSVG(&buf, chart.DefaultWidthPt, chart.DefaultHeightPt); err != nil {
			return "", "", nil, fmt.Errorf("object %s: chart: %w", name, err)
		}
		d.Scatter = labelled(buf.Bytes(), "Chart of the cost of "+name+" against its driver, with the formula's line")
	}
	return ex.Object, "object", d, nil
}

// lines serves one object's ledger lines in one period, a page at a time.
func (s *Server) lines(ctx context.Context, e *pipeline.Env, r *http.Request) (string, string, any, error) {
	q := r.URL.Query()
	name, period := q.Get("o"), q.Get("p")
	page := 1
	if v := q.Get("page"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 1 {
			return "", "", nil, notFound{fmt.Errorf("no page %q: pages count from 1", v)}
		}
		page = n
	}
	known, err := pipeline.ObjectAnalysed(ctx, s.db, name)
	if err != nil {
		return "", "", nil, err
	}
	if !known {
		return "", "", nil, notFound{fmt.Errorf("no analysed cost object %q", name)}
	}
	ls, err := pipeline.ViewPeriodLines(ctx, e, s.db, name, period, page)
	if errors.Is(err, pipeline.ErrNoSuchPeriod) {
		return "", "", nil, notFound{err}
	}
	if err != nil {
		return "", "", nil, err
	}
	if page > ls.Pages {
		return "", "", nil, notFound{fmt.Errorf("no page %d: the lines of %s in %s fill %d", page, name, period, ls.Pages)}
	}
	d := linesData{PeriodLines: ls, Back: objectLink(ls.Object)}
	if page > 1 {
		d.Prev = linesLink(ls.Object, period, page-1)
	}
	if page < ls.Pages {
		d.Next = linesLink(ls.Object, period, page+1)
	}
	return "Ledger lines of " + ls.Object + " in " + period, "lines", d, nil
}

type linesData struct {
	pipeline.PeriodLines
	Back, Prev, Next string
}

func linesLink(object, period string, page int) string {
	v := url.Values{"o": {object}, "p": {period}}
	if page > 1 {
		v.Set("page", strconv.Itoa(page))
	}
	return "/object/lines?" + v.Encode()
}

// labelled makes a chart's SVG document an element of the page with a
// text alternative for screen readers. The chart package drew it and
// escapes its own text; the label is escaped here.
func labelled(svg []byte, label string) template.HTML {
	inline := report.InlineSVG(svg)
	return template.HTML(strings.Replace(inline, "<svg", `<svg aria-label="`+html.EscapeString(label)+`"`, 1))
}

// funcs format figures the way the commands print them.
var funcs = template.FuncMap{
	"money": func(v float64, currency string) string { return present.Money(v, currency) },
	// signed is money with its sign, for a change: "+465.53 EUR".
	"signed": func(v float64, currency string) string {
		if v > 0 {
			return "+" + present.Money(v, currency)
		}
		return present.Money(v, currency)
	},
	"moneyp": func(v *float64, currency string) string {
		if v == nil {
			return "–"
		}
		return present.Money(*v, currency)
	},
	"num": func(v *float64, decimals int) string {
		if v == nil {
			return "–"
		}
		return present.Number(*v, decimals)
	},
	"rate": func(v *float64) string {
		if v == nil {
			return "–"
		}
		return present.Rate(*v)
	},
	"pvalue": func(v *float64) string {
		if v == nil {
			return "–"
		}
		return present.PValue(*v, 0)
	},
	"activity": present.Activity,
	"activityp": func(v *float64) string {
		if v == nil {
			return "–"
		}
		return present.Activity(*v)
	},
	"driver": report.DriverLabel,
	"words":  func(c costdrift.Class) string { return strings.ReplaceAll(string(c), "_", " ") },
	"objectURL": func(o string) string {
		return "/object?" + url.Values{"o": {o}}.Encode()
	},
	"time": func(t time.Time) string {
		if t.IsZero() {
			return "–"
		}
		return t.UTC().Format("2006-01-02 15:04 UTC")
	},
	"add": func(a, b int) int { return a + b },
	"breakText": func(b *report.BreakView) string {
		if b == nil {
			return ""
		}
		return report.BreakText(&b.Break)
	},
	// sourceKind: the alert is about a source, named by the source's name,
	// not about a cost object.
	"sourceKind": func(k costdrift.AlertKind) bool {
		return k == costdrift.AlertStaleSource || k == costdrift.AlertSourceFailure || k == costdrift.AlertDataQuality
	},
	"deref": func(s *string) string {
		if s == nil {
			return ""
		}
		return *s
	},
}
