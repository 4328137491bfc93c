package main

import (
	"database/sql"
	"fmt"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"
)

// grownDemo copies the demo and adds current behaviours until the store
// holds objects of them: copies of the demo's rows under invented accounts
// 90000 and up, so that the list pages and the counts work on that many
// rows while the demo's own objects keep their ledger for the object page.
func grownDemo(b *testing.B, objects int) string {
	b.Helper()
	dir := b.TempDir()
	if err := os.CopyFS(dir, os.DirFS(demoDirB(b))); err != nil {
		b.Fatal(err)
	}
	os.Remove(filepath.Join(dir, "costdrift.db.lock"))
	db, err := sql.Open("sqlite3", filepath.Join(dir, "costdrift.db"))
	if err != nil {
		b.Fatal(err)
	}
	defer db.Close()
	rows, err := db.Query(`SELECT name FROM pragma_table_info('behaviour_history') WHERE name NOT IN ('id', 'object', 'account')`)
	if err != nil {
		b.Fatal(err)
	}
	var cols []string
	for rows.Next() {
		var c string
		if err := rows.Scan(&c); err != nil {
			b.Fatal(err)
		}
		cols = append(cols, c)
	}
	rows.Close()
	var demo int
	if err := db.QueryRow(`SELECT COUNT(*) FROM behaviour_history WHERE valid_to_run_at IS NULL`).Scan(&demo); err != nil {
		b.Fatal(err)
	}
	list := strings.Join(cols, ", ")
	// Copy k of the demo's current rows: account 90000+k, its cost centre
	// kept, so that filters by cost centre and class stay meaningful.
	_, err = db.Exec(fmt.Sprintf(`WITH RECURSIVE k(n) AS (SELECT 0 UNION ALL SELECT n + 1 FROM k WHERE n + 1 < ?),
		src AS (SELECT row_number() OVER (ORDER BY object) - 1 AS i, * FROM behaviour_history WHERE valid_to_run_at IS NULL)
		INSERT INTO behaviour_history (object, account, %[1]s)
		SELECT printf('%%d', 90000 + k.n) || CASE WHEN src.cost_center = '' THEN '' ELSE '/' || src.cost_center END,
		       printf('%%d', 90000 + k.n), %[2]s
		FROM k JOIN src ON src.i = k.n %% ?`, list, "src."+strings.Join(cols, ", src.")), objects-demo, demo)
	if err != nil {
		b.Fatal(err)
	}
	return dir
}

func demoDirB(b *testing.B) string {
	b.Helper()
	dir, err := demoStore()
	if err != nil {
		b.Fatal(err)
	}
	return dir
}

// The objects and object pages at 10,000 and 100,000 objects, server time
// only (the handler, the store and the template; no network): a page of
// the list unfiltered, filtered and searched, sorted by R²; one object
// with its charts; one period of its ledger lines. Each reports the 95th
// percentile of its requests (p95-ms) beside the mean, and the page's
// weight with and without its charts (inline SVG). README "The web view"
// holds a run's figures. It is a benchmark, run only with -bench:
//
//	go test -run '^$' -bench WebPages -benchtime 200x ./cmd/costdrift/
func BenchmarkWebPages(b *testing.B) {
	for _, objects := range []int{10_000, 100_000} {
		b.Run(fmt.Sprintf("objects=%d", objects), func(b *testing.B) { benchWebPages(b, objects) })
	}
}

func benchWebPages(b *testing.B, objects int) {
	dir := grownDemo(b, objects)
	v, _, _ := webView(b, dir, "")
	h := v.Handler()
	r := httptest.NewRequest("GET", "/objects", nil)
	r.RemoteAddr = "127.0.0.1:40000"
	w := httptest.NewRecorder()
	h.ServeHTTP(w, r)
	if !strings.Contains(w.Body.String(), fmt.Sprintf("Objects 1–50 of %d", objects)) {
		b.Fatalf("the grown store does not list %d objects", objects)
	}
	lastPage := (objects + 49) / 50
	var period string
	sdb, err := sql.Open("sqlite3", filepath.Join(dir, "costdrift.db"))
	if err != nil {
		b.Fatal(err)
	}
	err = sdb.QueryRow(`SELECT period FROM gl_lines WHERE account = '6200' AND cost_center = 'WELD' GROUP BY period ORDER BY COUNT(*) DESC, period DESC LIMIT 1`).Scan(&period)
	sdb.Close()
	if err != nil {
		b.Fatal(err)
	}
	for _, path := range []string{"/objects", fmt.Sprintf("/objects?page=%d", lastPage), "/objects?cost_center=WELD&class=mixed&sort=r2&dir=desc",
		"/objects?q=power", "/object?o=6200%2FWELD", "/object/lines?o=6200%2FWELD&p=" + period, "/"} {
		b.Run(path, func(b *testing.B) {
			var body string
			var took []time.Duration
			for b.Loop() {
				r := httptest.NewRequest("GET", path, nil)
				r.RemoteAddr = "127.0.0.1:40000"
				w := httptest.NewRecorder()
				start := time.Now()
				h.ServeHTTP(w, r)
				took = append(took, time.Since(start))
				if w.Code != http.StatusOK {
					b.Fatalf("%s: %d\n%s", path, w.Code, w.Body)
				}
				body = w.Body.String()
			}
			slices.Sort(took)
			// The nearest-rank 95th percentile (common practice).
			p95 := took[(len(took)*95+99)/100-1]
			b.ReportMetric(float64(p95.Microseconds())/1000, "p95-ms")
			b.ReportMetric(float64(len(body))/1024, "KiB/page")
			b.ReportMetric(float64(len(svgElement.ReplaceAllString(body, "")))/1024, "KiB-without-charts")
		})
	}
}

// svgElement is a chart drawn inline.
var svgElement = regexp.MustCompile(`(?s)<svg.*?</svg>`)
