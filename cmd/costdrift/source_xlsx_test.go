package main

import (
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"
)

// The xlsx kind end to end: the config keys sheet (by name and by
// position), columns, date_format, decimal_comma and thousands_separator
// and layout reach the reader, and the rows land in the store. Expected
// values are worked out by hand from the invented cells below (EUR has two
// decimals, ISO 4217).
func TestSyncXLSXSources(t *testing.T) {
	dir := t.TempDir()
	if err := os.Mkdir(filepath.Join(dir, "data"), 0o700); err != nil {
		t.Fatal(err)
	}
	f := excelize.NewFile()
	defer f.Close()
	put := func(sheet string, rows [][]any) {
		t.Helper()
		if idx, _ := f.GetSheetIndex(sheet); idx < 0 {
			if _, err := f.NewSheet(sheet); err != nil {
				t.Fatal(err)
			}
		}
		for r, row := range rows {
			if err := f.SetSheetRow(sheet, "A"+strconv.Itoa(r+1), &row); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := f.SetSheetName("Sheet1", "Buchungen"); err != nil {
		t.Fatal(err)
	}
	put("Buchungen", [][]any{
		{"Beleg", "Datum", "Konto", "Betrag"},
		{"B1", time.Date(2026, 1, 5, 0, 0, 0, 0, time.UTC), "6100", "1.234,50"}, // date cell, text amount
		{"B2", "06.01.2026", 6100, 99.5},                                        // text date, number cell
		{"B3", "07.01.2026", "6100", 0.125},                                     // a third decimal: rejected
	})
	put("Aktivität", [][]any{
		{"period", "frames_built", "machine_hours"},
		{"2026-01", 100, 412.5},
	})
	put("Konten", [][]any{{"account", "name"}, {6100, "Rent"}})
	if err := f.SaveAs(filepath.Join(dir, "data", "books.xlsx")); err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, "costdrift.yaml")
	yaml := `store: costdrift.db
currency: EUR
sources:
  ledger:
    - name: gl
      kind: xlsx
      path: data/books.xlsx
      sheet: Buchungen
      date_format: DD.MM.YYYY
      decimal_comma: true
      thousands_separator: "."
      columns: {entry_id: Beleg, date: Datum, account: Konto, amount: Betrag}
  activity:
    - name: ops
      kind: xlsx
      path: data/books.xlsx
      sheet: "2"
      layout: wide
  accounts:
    - name: coa
      kind: xlsx
      path: data/books.xlsx
      sheet: Konten
`
	if err := os.WriteFile(cfg, []byte(yaml), 0o600); err != nil {
		t.Fatal(err)
	}
	out := mustRun(t, "--config", cfg, "sync")
	store := filepath.Join(dir, "costdrift.db")
	for _, c := range []struct {
		query string
		want  int
	}{
		{"SELECT COUNT(*) FROM gl_lines WHERE entry_id = 'B1' AND posted_on = '2026-01-05' AND amount_minor = 123450", 1},
		{"SELECT COUNT(*) FROM gl_lines WHERE entry_id = 'B2' AND posted_on = '2026-01-06' AND account = '6100' AND amount_minor = 9950", 1},
		{"SELECT COUNT(*) FROM rejects WHERE location = 'data/books.xlsx:Buchungen!4' AND reason LIKE 'bad amount: number 0.125: more decimals%'", 1},
		{"SELECT COUNT(*) FROM activity WHERE period = '2026-01' AND ((driver = 'frames_built' AND value = 100) OR (driver = 'machine_hours' AND value = 412.5))", 2},
		{"SELECT COUNT(*) FROM accounts WHERE account = '6100' AND name = 'Rent'", 1},
	} {
		if n := count(t, store, c.query); n != c.want {
			t.Errorf("%s: %d, want %d\nsync printed:\n%s", c.query, n, c.want, out)
		}
	}
}
