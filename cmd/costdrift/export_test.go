package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"
)

// needTool finds an outside program a test checks the exports with: in CI
// (CI=true) its absence fails the test, elsewhere it skips with how to
// install it.
func needTool(t *testing.T, name, debianPackage string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err == nil {
		return path
	}
	msg := fmt.Sprintf("%s not found: install the Debian package %s (apt-get install %s)", name, debianPackage, debianPackage)
	if os.Getenv("CI") == "true" {
		t.Fatal(msg + " (CI=true: tests may not be skipped)")
	}
	t.Skip(msg)
	return ""
}

// reportJSON is the demo report as JSON, by object.
func reportJSON(t *testing.T, cfg string) map[string]map[string]any {
	t.Helper()
	var rows []map[string]any
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &rows); err != nil {
		t.Fatal(err)
	}
	out := map[string]map[string]any{}
	for _, r := range rows {
		out[r["object"].(string)] = r
	}
	return out
}

// The report's filters and its CSV on the demo: one cost centre, one
// class, the objects changed since 2025-01 (the lease renewed in 2025-07
// and the freight cost from 2025-02, as internal/demo designs them).
func TestReportFormatsAndFilters(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	for _, tc := range []struct {
		args []string
		want []string
	}{
		{[]string{"--cost-center", "PAINT"}, []string{"5200/PAINT", "6100/PAINT", "6110/PAINT", "6200/PAINT"}},
		{[]string{"--class", "step"}, []string{"6300/ASSY"}},
		{[]string{"--account", "6100"}, []string{"6100/ASSY", "6100/PAINT", "6100/WELD"}},
		{[]string{"--changed-since", "2025-01"}, []string{"6110/PAINT", "6400/ASSY"}},
		{[]string{"--class", "mixed", "--cost-center", "WELD"}, []string{"6200/WELD", "6500/WELD"}},
	} {
		recs, err := csv.NewReader(strings.NewReader(mustRun(t, append([]string{"--config", cfg, "report", "--format", "csv"}, tc.args...)...))).ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		var got []string
		for _, r := range recs[1:] {
			got = append(got, r[0])
		}
		if strings.Join(got, " ") != strings.Join(tc.want, " ") {
			t.Errorf("report %v: %v, want %v", tc.args, got, tc.want)
		}
	}
	for _, bad := range [][]string{{"--format", "pdf"}, {"--class", "semi"}, {"--changed-since", "2025-13"}, {"--format", "xlsx"}} {
		if _, err := run(t, append([]string{"--config", cfg, "report"}, bad...)...); err == nil {
			t.Errorf("report %v succeeded", bad)
		}
	}
}

// xlsxCells reads the first sheet of a workbook as text, as excelize shows
// its values (without number formats).
func xlsxCells(t *testing.T, path string) (*excelize.File, [][]string) {
	t.Helper()
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	rows, err := f.GetRows(f.GetSheetName(0))
	if err != nil {
		t.Fatal(err)
	}
	return f, rows
}

// Every XLSX export names costdrift and its version as author, not the
// library's; freezes its header row; gives money two decimals with
// thousands separators; and holds the JSON's figures.
func TestXLSXExports(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	out := t.TempDir()
	files := map[string][]string{
		"report.xlsx":   {"report"},
		"budget.xlsx":   {"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv")},
		"variance.xlsx": {"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv")},
	}
	for name, args := range files {
		path := filepath.Join(out, name)
		mustRun(t, append(append([]string{"--config", cfg}, args...), "--format", "xlsx", "--output", path)...)
		f, rows := xlsxCells(t, path)
		props, err := f.GetDocProps()
		if err != nil {
			t.Fatal(err)
		}
		if props.Creator != "costdrift "+version || props.LastModifiedBy != "costdrift "+version || props.Title == "" ||
			!strings.HasPrefix(props.Created, "2026-") {
			t.Errorf("%s: document properties %+v, want costdrift %s as creator", name, props, version)
		}
		sheet := f.GetSheetName(0)
		panes, err := f.GetPanes(sheet)
		if err != nil || !panes.Freeze || panes.YSplit != 1 {
			t.Errorf("%s: header row not frozen: %+v %v", name, panes, err)
		}
		// The money columns show two decimals and thousands separators.
		for c, h := range rows[0] {
			if h != "fixed_per_period" && h != "budget" && h != "actual" {
				continue
			}
			at, _ := excelize.CoordinatesToCellName(c+1, 2)
			style, _ := f.GetCellStyle(sheet, at)
			s, _ := f.GetStyle(style)
			if s == nil || s.CustomNumFmt == nil || *s.CustomNumFmt != "#,##0.00" {
				t.Errorf("%s: %s at %s has no money format: %+v", name, h, at, s)
			}
			col, _ := excelize.ColumnNumberToName(c + 1)
			if w, _ := f.GetColWidth(sheet, col); w < 10 {
				t.Errorf("%s: column %s (%s) %v wide", name, col, h, w)
			}
		}
	}
	// The report's figures are the JSON's.
	_, rows := xlsxCells(t, filepath.Join(out, "report.xlsx"))
	checked := eachReportFigure(rows, reportJSON(t, cfg), func(object, column, cell string, want float64) {
		got, err := strconv.ParseFloat(cell, 64)
		if err != nil || math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("report.xlsx %s %s = %q, JSON %v", object, column, cell, want)
		}
	})
	if checked < 13*5 { // five or more figures of each of the 13 objects
		t.Errorf("only %d figures compared", checked)
	}
}

// LibreOffice Calc opens every XLSX export and reads the JSON's figures,
// shown with the workbook's number formats; text that looks like a formula
// stays text. (LibreOffice is an outside reader of the format: the check
// is that another program than the one that wrote the file reads it so.)
func TestXLSXExportsInLibreOffice(t *testing.T) {
	soffice := needTool(t, "soffice", "libreoffice-calc-nogui")
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	out := t.TempDir()
	report := filepath.Join(out, "report.xlsx")
	mustRun(t, "--config", cfg, "report", "--format", "xlsx", "--output", report)
	budget := filepath.Join(out, "budget.xlsx")
	mustRun(t, "--config", cfg, "budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"), "--format", "xlsx", "--output", budget)
	variance := filepath.Join(out, "variance.xlsx")
	mustRun(t, "--config", cfg, "variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv"),
		"--format", "xlsx", "--output", variance)
	injection := filepath.Join(out, "injection.xlsx")
	var buf bytes.Buffer
	if err := writeXLSX(&buf, "injection", [][]any{{"text", "amount"}, {"=1+1", 2.5}, {"+2+3", 1234.5}, {"-4+5", 0.0}, {"@SUM(B2:B3)", 1.0}, {"\t=6+7", 3.0}},
		"formula injection", nil, time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC)); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(injection, buf.Bytes(), 0o600); err != nil {
		t.Fatal(err)
	}

	csvs := t.TempDir()
	cmd := exec.Command(soffice, "-env:UserInstallation=file://"+filepath.ToSlash(t.TempDir()), "--headless", "--norestore",
		"--convert-to", "csv", "--outdir", csvs, report, budget, variance, injection)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("soffice: %v\n%s", err, b)
	}
	read := func(name string) [][]string {
		f, err := os.Open(filepath.Join(csvs, name))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		r := csv.NewReader(f)
		r.FieldsPerRecord = -1
		recs, err := r.ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		return recs
	}

	// The report: every number LibreOffice shows is the JSON's at the
	// shown precision (money to the cent, R² to three decimals).
	rows := read("report.csv")
	checked := eachReportFigure(rows, reportJSON(t, cfg), func(object, column, cell string, want float64) {
		got, err := strconv.ParseFloat(strings.ReplaceAll(cell, ",", ""), 64)
		tol := 0.5e-2
		switch column {
		case "r2":
			tol = 0.5e-3
		case "variable_rate", "range_min", "range_max", "lag", "n":
			tol = 0.5e-6 * math.Max(1, math.Abs(want))
		}
		if err != nil || math.Abs(got-want) > tol {
			t.Errorf("LibreOffice reads report %s %s as %q, JSON %v", object, column, cell, want)
		}
	})
	if checked < 13*5 { // five or more figures of each of the 13 objects
		t.Errorf("only %d figures compared", checked)
	}
	if rows[1][rows0(rows, "fixed_per_period")] == "" || !strings.Contains(strings.Join(rows[0], ","), "fixed_per_period") {
		t.Errorf("report header %q", rows[0])
	}

	// The budget and the variances: each money cell is the JSON's.
	for _, c := range []struct {
		csv  string
		args []string
		cols []string
	}{
		{"budget.csv", []string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv")}, []string{"budget", "low95", "high95"}},
		{"variance.csv", []string{"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv")},
			[]string{"actual", "flexible_budget", "spending_variance"}},
	} {
		var js []map[string]any
		if err := json.Unmarshal([]byte(mustRun(t, append(append([]string{"--config", cfg}, c.args...), "--format", "json")...)), &js); err != nil {
			t.Fatal(err)
		}
		rows := read(c.csv)
		n := 0
		for i, j := range js {
			for _, col := range c.cols {
				want, ok := j[col].(float64)
				if !ok {
					continue
				}
				cell := rows[i+1][rows0(rows, col)]
				got, err := strconv.ParseFloat(strings.ReplaceAll(cell, ",", ""), 64)
				if err != nil || math.Abs(got-want) > 0.005 {
					t.Errorf("LibreOffice reads %s line %d %s as %q, JSON %v", c.csv, i+1, col, cell, want)
				}
				n++
			}
		}
		if n < 20 {
			t.Errorf("%s: only %d figures compared", c.csv, n)
		}
	}

	// Formula-looking text stays text: LibreOffice shows it as written.
	inj := read("injection.csv")
	for i, want := range []string{"=1+1", "+2+3", "-4+5", "@SUM(B2:B3)", "\t=6+7"} {
		if inj[i+1][0] != want {
			t.Errorf("LibreOffice reads %q as %q: a formula was evaluated", want, inj[i+1][0])
		}
	}
	if inj[2][1] != "1,234.50" && inj[2][1] != "1234.5" {
		t.Errorf("amount read as %q", inj[2][1])
	}
}

// eachReportFigure hands check every cell of the report's rows (the header
// first) that the report's JSON gives a number for, by object and column,
// and returns how many it handed.
func eachReportFigure(rows [][]string, byObject map[string]map[string]any, check func(object, column, cell string, want float64)) int {
	checked := 0
	for _, r := range rows[1:] {
		if len(r) == 0 {
			continue
		}
		js, ok := byObject[r[0]]
		if !ok {
			continue
		}
		for c, h := range rows[0] {
			want, isNum := js[h].(float64)
			if !isNum || c >= len(r) {
				continue
			}
			check(r[0], h, r[c], want)
			checked++
		}
	}
	return checked
}

func rows0(rows [][]string, name string) int {
	for i, h := range rows[0] {
		if h == name {
			return i
		}
	}
	return 0
}

// The HTML report renders in headless Chromium at A4 width (210 mm at 96
// dpi: 794 px) into a PNG of the page's size.
func TestHTMLReportRendersInChromium(t *testing.T) {
	chromium := needTool(t, "chromium", "chromium")
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	out := t.TempDir()
	page := filepath.Join(out, "report.html")
	mustRun(t, "--config", cfg, "report", "--format", "html", "--output", page)
	html, err := os.ReadFile(page)
	if err != nil {
		t.Fatal(err)
	}
	for _, bad := range []string{"<script", "<link", "src=", "url(", "@import", `href="http`} {
		if bytes.Contains(html, []byte(bad)) {
			t.Errorf("the page holds %q: it must need nothing from elsewhere", bad)
		}
	}
	if n := bytes.Count(html, []byte("<svg ")); n != 14+8 { // every object over time, the 8 with a driver against it too
		t.Errorf("%d inline charts, want 22", n)
	}
	shot := filepath.Join(out, "report.png")
	cmd := exec.Command(chromium, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
		"--disable-component-update", "--disable-sync", "--no-first-run", "--user-data-dir="+t.TempDir(), "--hide-scrollbars",
		"--window-size=794,1123", "--screenshot="+shot, "file://"+page)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, b)
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != 794 || b.Dy() != 1123 {
		t.Errorf("screenshot %d×%d, want 794×1123", b.Dx(), b.Dy())
	}
	if dst := os.Getenv("REPORT_PNG_COPY"); dst != "" {
		if b, err := os.ReadFile(shot); err == nil {
			_ = os.WriteFile(dst, b, 0o600)
		}
	}
}
