package csvsource

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

type countingWriter struct {
	lines, rejects int
	t              *testing.T
}

func (c *countingWriter) LedgerLine(l costdrift.LedgerLine) error {
	c.lines++
	if _, err := time.Parse("2006-01-02", l.PostedOn); err != nil {
		c.t.Fatalf("stored a line with date %q", l.PostedOn)
	}
	if l.Account == "" || l.EntryID == "" || l.Line < 1 || !utf8.ValidString(l.Description) {
		c.t.Fatalf("stored an incomplete line %+v", l)
	}
	return nil
}
func (c *countingWriter) Activity(costdrift.ActivityValue) error { return nil }
func (c *countingWriter) Account(costdrift.Account) error        { return nil }
func (c *countingWriter) Reject(r costdrift.Reject) error {
	c.rejects++
	if r.Reason == "" || strings.Contains(r.Reason, "\n") {
		c.t.Fatalf("reject without a one-line reason: %+v", r)
	}
	return nil
}

// FuzzReadLedger: whatever the bytes, reading never panics, every row read
// is either stored or rejected with a one-line reason, and a stored line
// has a real date, an account and valid text. Dates and amounts are the
// parsers under test.
func FuzzReadLedger(f *testing.F) {
	const h = "entry_id,line,date,account,cost_center,amount,description\n"
	for _, s := range []string{
		h + "A1,1,2026-01-05,6100,WELD,4200.00,rent\n",
		h + "A1,1,2026-02-30,6100,WELD,1.00,x\nA2,,2026-01-05,6100,,(1.00),y\n",
		"entry_id;date;account;debit;credit\nB1;05.01.2026;6100;1.234,50;\n",
		h + "Q1,1,2026-01-05,6100,WELD,1.00,\"a, b\nc\"\n",
		h + "S1,1,2026-01-05,6100,WELD,1e400,\"open\n",
		"\ufeff" + h + "C1,1,2026-12-31,6100,WELD,-0.01,caf\xe9\r\n",
	} {
		f.Add([]byte(s), "")
		f.Add([]byte(s), "DD.MM.YYYY")
	}
	eur, _ := money.ParseCurrency("EUR")
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte, dateFormat string) {
		layout := "2006-01-02"
		if dateFormat == "DD.MM.YYYY" {
			layout = "02.01.2006"
		}
		path := filepath.Join(dir, "gl.csv")
		if err := os.WriteFile(path, data, 0o600); err != nil {
			t.Fatal(err)
		}
		w := &countingWriter{t: t}
		opt := Options{Source: "gl", Currency: eur, DateLayout: layout, Notation: money.Notation{DecimalComma: dateFormat != "", ThousandsSeparator: map[bool]string{true: ".", false: ""}[dateFormat != ""]},
			Period: func(d time.Time) string { return d.Format("2006-01") }}
		read, err := ReadLedger(context.Background(), path, "gl.csv", opt, w)
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Fatalf("error is not one line: %q", err)
			}
			return
		}
		if read != w.lines+w.rejects {
			t.Fatalf("read %d rows, stored %d and rejected %d", read, w.lines, w.rejects)
		}
	})
}
