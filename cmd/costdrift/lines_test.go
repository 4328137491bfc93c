package main

import (
	"database/sql"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"path/filepath"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/present"
)

// The object page links each period of its cost to the ledger lines
// behind it; the lines page shows them a page at a time, with the count
// and net amount of the whole period as the store adds them up, and a
// hostile description or entry as text.
func TestWebLedgerLines(t *testing.T) {
	dir := filepath.Dir(ownDemo(t))
	store := filepath.Join(dir, "costdrift.db")
	db, err := sql.Open("sqlite3", store)
	if err != nil {
		t.Fatal(err)
	}
	// The period of 6200/WELD with the most lines, and one line of it.
	var period, source string
	var run int64
	var file sql.NullInt64
	if err := db.QueryRow(`SELECT period, source, sync_run_id, source_file_id FROM gl_lines WHERE account = '6200' AND cost_center = 'WELD'
		GROUP BY period ORDER BY COUNT(*) DESC, period LIMIT 1`).Scan(&period, &source, &run, &file); err != nil {
		t.Fatal(err)
	}
	const evil = `Power <script>alert("x")</script> <img src=x onerror=alert(1)> & "quoted"`
	if _, err := db.Exec(`UPDATE gl_lines SET description = ? WHERE rowid = (SELECT MIN(rowid) FROM gl_lines WHERE account = '6200' AND cost_center = 'WELD' AND period = ?)`, evil, period); err != nil {
		t.Fatal(err)
	}
	// 450 more lines in the period, so that it fills three pages, one of
	// them with a hostile entry number; the last day of the month sorts
	// them after the demo's own.
	for i := range 450 {
		entry := fmt.Sprintf("BULK-%03d", i)
		if i == 449 {
			entry = `<img src=y onerror=alert(2)>`
		}
		if _, err := db.Exec(`INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, cost_center, amount_minor, description, sync_run_id, source_file_id)
			VALUES (?, ?, 1, ?, ?, '6200', 'WELD', ?, 'meter reading', ?, ?)`, source, entry, period+"-28", period, 1000+i, run, file); err != nil {
			t.Fatal(err)
		}
	}
	var count int
	var total int64
	if err := db.QueryRow(`SELECT COUNT(*), SUM(amount_minor) FROM gl_lines WHERE account = '6200' AND cost_center = 'WELD' AND period = ?`, period).Scan(&count, &total); err != nil {
		t.Fatal(err)
	}
	type line struct {
		entry  string
		amount int64
	}
	var want []line
	rows, err := db.Query(`SELECT entry_id, amount_minor FROM gl_lines WHERE account = '6200' AND cost_center = 'WELD' AND period = ?
		ORDER BY posted_on, source, entry_id, line`, period)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var l line
		rows.Scan(&l.entry, &l.amount)
		want = append(want, l)
	}
	rows.Close()
	db.Close()
	if count != len(want) || count <= 400 || count > 600 {
		t.Fatalf("%d lines in %s, want 401 to 600 for three pages", count, period)
	}

	v, e, _ := webView(t, dir, "")
	srv := httptest.NewServer(v.Handler())
	defer srv.Close()
	cur := e.Currency.Code
	link := "/object/lines?" + url.Values{"o": {"6200/WELD"}, "p": {period}}.Encode()
	_, obj := fetch(t, srv, "/object?o=6200%2FWELD")
	if !strings.Contains(obj, `href="`+strings.ReplaceAll(link, "&", "&amp;")+`"`) {
		t.Fatalf("the object page does not link %s", link)
	}
	if text := tagText(obj); !strings.Contains(text, period+" "+present.Money(float64(total)/100, cur)) {
		t.Errorf("the object page's period %s does not show its cost %s", period, present.Money(float64(total)/100, cur))
	}

	seen, hostileEntry := 0, false
	for page := 1; page <= 3; page++ {
		path := link
		if page > 1 {
			path += "&page=" + itoa(page)
		}
		res, body := fetch(t, srv, path)
		if res.StatusCode != http.StatusOK {
			t.Fatalf("%s: %d", path, res.StatusCode)
		}
		for _, bad := range []string{"<script", "<img"} {
			if strings.Contains(body, bad) {
				t.Errorf("%s: the page holds %q unescaped", path, bad)
			}
		}
		text := tagText(body)
		head := fmt.Sprintf("Lines in %s %d Net amount %s Page %d of 3", period, count, present.Money(float64(total)/100, cur), page)
		if !strings.Contains(text, head) {
			t.Errorf("page %d does not say %q:\n%.600s", page, head, text)
		}
		// The page's lines in the store's order, each with its number and
		// amount.
		n := min(200, count-seen)
		for i := 0; i < n; i++ {
			l := want[seen+i]
			cell := fmt.Sprintf("%d %s 1", seen+i+1, l.entry)
			if i == 0 || i == n-1 {
				if !strings.Contains(text, cell) || !strings.Contains(text, present.Money(float64(l.amount)/100, cur)) {
					t.Errorf("page %d lacks line %d (%s, %s)", page, seen+i+1, l.entry, present.Money(float64(l.amount)/100, cur))
				}
			}
		}
		if got := strings.Count(body, "<tr>") - 1; got != n { // less the header row
			t.Errorf("page %d: %d lines, want %d", page, got, n)
		}
		if page == 1 && !strings.Contains(text, evil) {
			t.Errorf("the hostile description is not shown as text")
		}
		hostileEntry = hostileEntry || strings.Contains(text, `<img src=y onerror=alert(2)>`)
		seen += n
	}
	if !hostileEntry {
		t.Errorf("the hostile entry is not shown as text")
	}
	for _, path := range []string{link + "&page=4", link + "&page=0", link + "&page=x",
		"/object/lines?o=6200%2FWELD&p=2025-13", "/object/lines?o=6200%2FWELD&p=" + url.QueryEscape("<script>"),
		"/object/lines?o=" + url.QueryEscape("<script>alert(3)</script>") + "&p=" + period} {
		res, body := fetch(t, srv, path)
		if res.StatusCode != http.StatusNotFound || strings.Contains(body, "<script") {
			t.Errorf("%s: %d, want 404 with nothing unescaped", path, res.StatusCode)
		}
	}
}
