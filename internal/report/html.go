package report

import (
	"bytes"
	"html/template"
	"io"
	"regexp"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/internal/present"
)

// HTMLReport is the report as one self-contained HTML page: the table of
// every object, then a section per object with its reason and its charts
// inline as SVG. Nothing is fetched from elsewhere, so the file can be
// mailed or archived as it is; it prints on A4.
type HTMLReport struct {
	Rows     []Row
	Currency string
	Version  string // costdrift's
	Created  string // when, as the reader should see it
	Filter   string // the filters applied, in words; "" for none
	// Charts are each object's charts as SVG documents, by object: the
	// cost over time first, then the cost against its driver.
	Charts map[string][][]byte
}

var htmlPage = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="generator" content="costdrift {{.Version}}">
<title>Cost behaviour — costdrift report</title>
<style>
@page { size: A4 portrait; margin: 14mm 12mm; }
body { font-family: "Liberation Sans", Arial, sans-serif; color: #2b2b2b; font-size: 10pt; margin: 0 auto; max-width: 186mm; }
h1 { font-size: 16pt; margin: 0 0 2mm 0; }
h2 { font-size: 12pt; margin: 0 0 1mm 0; }
p.meta { color: #5c5c5c; margin: 0 0 4mm 0; }
table { border-collapse: collapse; width: 100%; font-size: 8pt; }
th, td { text-align: left; padding: 1mm 1.5mm; border-bottom: 0.2mm solid #d9d5cc; vertical-align: top; }
th { background: #f3f1ec; }
td.num { text-align: right; white-space: nowrap; }
td.period, td.object { white-space: nowrap; }
thead { display: table-header-group; }
tr { page-break-inside: avoid; }
section.object { page-break-inside: avoid; break-inside: avoid; margin-top: 6mm; }
section.object p { margin: 0 0 1.5mm 0; }
.formula { font-weight: bold; }
.charts { display: flex; gap: 2mm; }
.charts svg { width: 50%; height: auto; border: 0.2mm solid #d9d5cc; }
.charts svg:only-child { width: 70%; }
footer { margin-top: 6mm; color: #5c5c5c; font-size: 8pt; white-space: pre-line; }
</style>
</head>
<body>
<h1>Cost behaviour of {{len .Rows}} cost objects</h1>
<p class="meta">Amounts in {{.Currency}} per period. Written by costdrift {{.Version}}{{if .Created}} on {{.Created}}{{end}}.{{if .Filter}} Objects shown: {{.Filter}}.{{end}}</p>
<table>
<thead><tr><th>Object</th><th>Account</th><th>Class</th><th>Formula ({{.Currency}} per period)</th><th>R²</th><th>N</th><th>Relevant range</th><th>Since</th></tr></thead>
<tbody>
{{range .Lines}}<tr><td class="object"><a href="#{{.Anchor}}">{{.Object}}</a></td><td>{{.AccountName}}</td><td>{{.Class}}</td><td>{{.Formula}}</td><td class="num">{{.R2}}</td><td class="num">{{.N}}</td><td class="num">{{.Range}}</td><td class="period">{{.Since}}</td></tr>
{{end}}</tbody>
</table>
{{range .Lines}}
<section class="object" id="{{.Anchor}}">
<h2>{{.Object}} {{.AccountName}}</h2>
<p class="formula">{{.Formula}}</p>
<p>{{.Reason}}</p>
{{range .Notes}}<p>{{.}}</p>
{{end}}{{if .Charts}}<div class="charts">{{range .Charts}}{{.}}{{end}}</div>{{end}}
</section>
{{end}}
<footer>{{.Cautions}}</footer>
</body>
</html>
`))

type htmlLine struct {
	Anchor, Object, AccountName, Class, Formula, R2, N, Range, Since, Reason string
	Notes                                                                    []string
	Charts                                                                   []template.HTML
}

// HTML writes the report as one self-contained HTML page.
func HTML(w io.Writer, r HTMLReport) error {
	page := struct {
		HTMLReport
		Lines    []htmlLine
		Cautions string
	}{HTMLReport: r, Cautions: Caution}
	for i, row := range r.Rows {
		l := htmlLine{Anchor: "object-" + strconv.Itoa(i+1), Object: row.Object, AccountName: row.AccountName,
			Class: string(row.Class), Formula: row.Formula, R2: "-", N: present.Number(float64(row.N), 0), Range: "-",
			Since: row.Since, Reason: row.Reason}
		if row.R2 != nil {
			l.R2 = present.Number(*row.R2, 2)
		}
		if row.RangeMin != nil && row.RangeMax != nil {
			l.Range = present.ActivityRange(*row.RangeMin, *row.RangeMax)
		}
		if row.Gaps != "" {
			l.Notes = append(l.Notes, sentence(row.Gaps)+".")
		}
		if hl := row.HighLow; hl != nil && row.Driver != nil {
			l.Notes = append(l.Notes, "High-low, through "+hl.HighPeriod+" and "+hl.LowPeriod+" only: "+
				lineFormula(hl.Fixed, hl.Rate, present.UnitOf(row.Unit, *row.Driver)+lagText(*row.Lag))+".")
		}
		for _, svg := range r.Charts[row.Object] {
			l.Charts = append(l.Charts, template.HTML(InlineSVG(svg))) // our own chart, its text escaped by the SVG writer
		}
		page.Lines = append(page.Lines, l)
	}
	var buf bytes.Buffer
	if err := htmlPage.Execute(&buf, page); err != nil {
		return err
	}
	_, err := w.Write(buf.Bytes())
	return err
}

var (
	svgStart    = regexp.MustCompile(`(?s)^.*?<svg\b`)
	svgSize     = regexp.MustCompile(`\s(width|height)="[^"]*"`)
	svgNamspace = regexp.MustCompile(`\s+xmlns(:\w+)?="[^"]*"`)
)

// InlineSVG makes an SVG document an element of an HTML page: the XML
// declaration and comments before it dropped, its namespace declarations
// too (HTML gives an inline svg its namespace), and its fixed size left to
// the page's style (the viewBox keeps its proportions).
func InlineSVG(doc []byte) string {
	s := svgStart.ReplaceAllString(string(doc), "<svg")
	head, rest, ok := strings.Cut(s, ">")
	if !ok {
		return ""
	}
	head = svgSize.ReplaceAllString(head, "")
	head = svgNamspace.ReplaceAllString(head, "")
	return head + ` role="img">` + rest
}
