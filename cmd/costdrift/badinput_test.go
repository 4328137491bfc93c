package main

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A corpus of malformed ledger files: each ends as rejects with reasons or
// as one clear source error; none crashes; every row read is either stored
// or rejected (README, Sources: a row that cannot be read goes to the rejects table).
func TestBadInputCorpus(t *testing.T) {
	tests := ledgerCorpus()
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) { checkCorpusCase(t, tc, "") })
	}
}

// ledgerCorpus is the malformed ledger files of TestBadInputCorpus.
func ledgerCorpus() []corpusCase {
	const h = "entry_id,line,date,account,cost_center,amount,description\n"
	const good = "G1,1,2026-01-05,6100,WELD,10.00,ok\n"
	huge := strings.Repeat("x", 10<<20)
	return []corpusCase{
		{"truncated last row", h + good + "T1,1,2026-01-0", 1, 1, "has 3 fields", false},
		{"extra field", h + good + "X1,1,2026-01-05,6100,WELD,1.00,a,b\n", 1, 1, "has 8 fields, the header has 7", false},
		{"missing field", h + good + "M1,1,2026-01-05,6100,1.00,a\n", 1, 1, "has 6 fields", false},
		{"byte-order mark", "\ufeff" + h + good, 1, 0, "", false},
		{"CRLF line ends", strings.ReplaceAll(h+good+good[:0]+"C1,1,2026-01-06,6100,WELD,2.00,x\n", "\n", "\r\n"), 2, 0, "", false},
		{"quoted comma", h + good + "Q1,1,2026-01-05,6100,WELD,1.00,\"rent, January\"\n", 2, 0, "", false},
		{"quoted newline", h + good + "Q2,1,2026-01-05,6100,WELD,1.00,\"two\nlines\"\n", 2, 0, "", false},
		{"decimal comma not declared", h + good + "D1,1,2026-01-05,6100,WELD,\"1,50\",x\n", 1, 1, "declare decimal_comma", false},
		{"parenthesised negative", h + good + "P1,1,2026-01-05,6100,WELD,(12.30),credit note\n", 2, 0, "", false},
		{"trailing minus", h + good + "P2,1,2026-01-05,6100,WELD,12.30-,credit note\n", 2, 0, "", false},
		{"impossible date", h + good + "I1,1,2026-02-30,6100,WELD,1.00,x\n", 1, 1, "bad date", false},
		{"month 13", h + good + "I2,1,2026-13-01,6100,WELD,1.00,x\n", 1, 1, "bad date", false},
		{"date in another layout", h + good + "I3,1,05.01.2026,6100,WELD,1.00,x\n", 1, 1, "bad date", false},
		// The reason names the setting that reads the row.
		{"day before month", h + good + "I4,1,15/01/2026,6100,WELD,1.00,x\n", 1, 1,
			`bad date "15/01/2026": want YYYY-MM-DD; set date_format (e.g. DD/MM/YYYY)`, false},
		{"comma thousands undeclared", h + good + "K1,1,2026-01-05,6100,WELD,\"1,234.50\",x\n", 1, 1,
			`(with thousands_separator "," it reads as 1234.50)`, false},
		{"point thousands undeclared", h + good + "K2,1,2026-01-05,6100,WELD,\"1.234,50\",x\n", 1, 1,
			`(with decimal_comma: true and thousands_separator "." it reads as 1234.50)`, false},
		{"NaN amount", h + good + "N1,1,2026-01-05,6100,WELD,NaN,x\n", 1, 1, "bad amount", false},
		{"Infinity amount", h + good + "N2,1,2026-01-05,6100,WELD,Infinity,x\n", 1, 1, "bad amount", false},
		{"1e400 amount", h + good + "N3,1,2026-01-05,6100,WELD,1e400,x\n", 1, 1, "bad amount", false},
		{"huge plain amount", h + good + "N4,1,2026-01-05,6100,WELD,99999999999999999999999,x\n", 1, 1, "out of range", false},
		{"too many decimals", h + good + "N5,1,2026-01-05,6100,WELD,1.005,x\n", 1, 1, "more decimals", false},
		{"empty amount", h + good + "N6,1,2026-01-05,6100,WELD,,x\n", 1, 1, "empty amount", false},
		{"missing account", h + good + "A1,1,2026-01-05,,WELD,1.00,x\n", 1, 1, "missing account", false},
		{"missing entry id", h + good + ",1,2026-01-05,6100,WELD,1.00,x\n", 1, 1, "missing entry_id", false},
		{"bad line number", h + good + "L1,zero,2026-01-05,6100,WELD,1.00,x\n", 1, 1, "bad line", false},
		{"stray quote", h + good + "S1,1,2026-01-05,6100,WELD,1.00,a \"quoted\" word\n", 1, 1, "malformed CSV", false},
		{"unclosed quote", h + good + "S2,1,2026-01-05,6100,WELD,1.00,\"never closed\n", 1, 1, "malformed CSV", false},
		{"non-UTF-8 bytes", h + good + "U1,1,2026-01-05,6100,WELD,1.00,caf\xe9\n", 1, 1, "not valid UTF-8", false},
		{"10 MB field", h + good + "B1,1,2026-01-05,6100,WELD,1.00," + huge + "\n", 1, 1, "more than the 65536 allowed", false},
		{"NUL byte", h + good + "Z1,1,2026-01-05,6100,WELD,1.00,a\x00b\n", 2, 0, "", false},
		{"blank lines between rows", h + "\n\n" + good + "\n,,,,,,\n", 1, 0, "", false},
		{"duplicate key, other values", h + good + "G1,1,2026-01-05,6100,WELD,11.00,ok\n", 1, 1, "duplicate key", false},
		{"semicolon file", strings.ReplaceAll(h+good, ",", ";"), 1, 0, "", false},
		{"tab file", strings.ReplaceAll(h+good, ",", "\t"), 1, 0, "", false},
		{"header only", h, 0, 0, "", false},
		{"empty file", "", 0, 0, "is empty", true},
		{"only whitespace", " \n\n ", 0, 0, "is empty", true},
		{"header without required columns", "a,b,c\n1,2,3\n", 0, 0, "header has no column entry_id, date, account", true},
		{"binary garbage", "\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", 0, 0, "", true},
	}
}

// corpusCase is a ledger file and what a sync makes of it.
type corpusCase struct {
	name     string
	content  string
	stored   int    // rows expected in gl_lines
	rejected int    // rows expected in rejects
	reason   string // a reject reason (substring) or, with fails, the error
	fails    bool
}

// checkCorpusCase syncs the case's file as the ledger source gl, with
// sourceKeys (YAML lines of that source's keys) added to its config.
func checkCorpusCase(t *testing.T, tc corpusCase, sourceKeys string) {
	t.Helper()
	cfg, dir := setup(t, tc.content)
	if sourceKeys != "" {
		text, err := os.ReadFile(cfg)
		if err != nil {
			t.Fatal(err)
		}
		const gl = "      path: data/gl/*.csv\n"
		if !strings.Contains(string(text), gl) {
			t.Fatalf("the starter config has no %q", gl)
		}
		writeFile(t, cfg, strings.Replace(string(text), gl, gl+sourceKeys, 1))
	}
	if tc.content == "" {
		if err := os.WriteFile(filepath.Join(dir, "data", "gl", "gl.csv"), nil, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	out, err := run(t, "--config", cfg, "sync")
	if tc.fails {
		if err == nil || !strings.Contains(err.Error(), tc.reason) || strings.Contains(err.Error(), "\n") {
			t.Fatalf("want one-line error containing %q, got %v\n%s", tc.reason, err, out)
		}
	} else if err != nil {
		t.Fatalf("sync: %v\n%s", err, out)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != tc.stored {
		t.Errorf("stored %d rows, want %d", n, tc.stored)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM rejects r JOIN sync_runs s ON s.id = r.sync_run_id WHERE s.source = 'gl'"); n != tc.rejected {
		t.Errorf("rejected %d rows, want %d\n%s", n, tc.rejected, out)
	}
	if tc.rejected > 0 && !tc.fails {
		if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE instr(reason, '"+tc.reason+"') > 0"); n != tc.rejected {
			t.Errorf("%d rejects with reason %q, want %d", n, tc.reason, tc.rejected)
		}
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND rows_read <> rows_loaded + rows_rejected"); n != 0 && !tc.fails {
		t.Errorf("rows read do not equal stored plus rejected")
	}
}

// Amounts whose thousands separators do not group digits in threes, and
// amounts beyond the bound (money.MaxMinor), are rejected with a reason
// that quotes them as the file writes them; every row read is stored or
// rejected.
func TestBadInputCorpusAmounts(t *testing.T) {
	const h = "entry_id,line,date,account,cost_center,amount,description\n"
	const good = "G1,1,2026-01-05,6100,WELD,10.00,ok\n"
	// A semicolon file in decimal-comma notation, for the "." thousands cases.
	hs := strings.ReplaceAll(h, ",", ";")
	const goodComma = "G1;1;2026-01-05;6100;WELD;10,00;ok\n"
	const thousandsComma = "      thousands_separator: \",\"\n"
	const thousandsDot = "      decimal_comma: true\n      thousands_separator: \".\"\n"
	const grouping = `digits are not grouped in threes by the thousands separator`
	const bound = `is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero`
	var tenHuge strings.Builder
	for i := range 10 {
		fmt.Fprintf(&tenHuge, "O%d,1,2026-01-05,6100,WELD,9999999999999999.99,x\n", i)
	}
	tests := []struct {
		keys string // the gl source's notation keys
		corpusCase
	}{
		// Each of these was stored as another amount before the grouping
		// was checked: 1,23 as 123.00, 12,3456 and 1,234,56 as 123456.00,
		// 1234.56 under "." thousands as 123456.00.
		{thousandsComma, corpusCase{"group of two digits", h + good + "T1,1,2026-01-05,6100,WELD,\"1,23\",x\n", 1, 1,
			`bad amount: amount "1,23": ` + grouping + ` ","`, false}},
		{thousandsComma, corpusCase{"group of four digits", h + good + "T2,1,2026-01-05,6100,WELD,\"12,3456\",x\n", 1, 1,
			`bad amount: amount "12,3456": ` + grouping, false}},
		{thousandsComma, corpusCase{"short last group", h + good + "T3,1,2026-01-05,6100,WELD,\"1,234,56\",x\n", 1, 1,
			`bad amount: amount "1,234,56": ` + grouping, false}},
		{thousandsComma, corpusCase{"grouped in threes", h + good + "T4,1,2026-01-05,6100,WELD,\"1,234,567.89\",x\n", 2, 0, "", false}},
		{thousandsDot, corpusCase{"decimal point under a decimal comma", hs + goodComma + "T5;1;2026-01-05;6100;WELD;1234.56;x\n", 1, 1,
			`bad amount: amount "1234.56": ` + grouping + ` "."`, false}},
		// Quoted as written, not as the "1.2,3" the comma made of it.
		{thousandsDot, corpusCase{"two decimal commas", hs + goodComma + "T6;1;2026-01-05;6100;WELD;1,2,3;x\n", 1, 1,
			`bad amount: amount "1,2,3" is not a number`, false}},
		// Ten lines of this amount in one period overflowed the period's
		// total and stopped the analysis of every object.
		{"", corpusCase{"amount beyond the bound", h + good + "O1,1,2026-01-05,6100,WELD,9999999999999999.99,x\n", 1, 1,
			`bad amount: amount "9999999999999999.99" ` + bound, false}},
		// Ten of eleven rows rejected: the file is mostly rejected, so the
		// sync fails, naming it and the reason (README, When a sync goes
		// wrong); its good row is stored.
		{"", corpusCase{"ten amounts beyond the bound", h + good + tenHuge.String(), 1, 10,
			`10 of 11 rows rejected, mostly: bad amount: amount "9999999999999999.99" ` + bound, true}},
		{thousandsComma, corpusCase{"grouped amount beyond the bound", h + good + "O2,1,2026-01-05,6100,WELD,\"(100,000,000,000,000.00)\",x\n", 1, 1,
			`bad amount: amount "(100,000,000,000,000.00)" is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`, false}},
		{"", corpusCase{"the largest amount", h + good + "O3,1,2026-01-05,6100,WELD,-99999999999999.99,x\n", 2, 0, "", false}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) { checkCorpusCase(t, tc.corpusCase, tc.keys) })
	}
}

// The corpus's cases beyond a ledger's rows: activity with a misspelt
// driver, no activity at all, and a ledger fixed by a setting rather than
// by editing it. Each says what is wrong and what to do (README, When a
// sync goes wrong).
func TestBadInputCorpusBeyondRows(t *testing.T) {
	const ledger = header + "E1,1,2026-01-05,6100,WELD,4200.00\nE2,1,2026-02-05,6100,WELD,4200.00\nE3,1,2026-03-05,6100,WELD,4200.00\n"
	t.Run("misspelt driver", func(t *testing.T) {
		cfg, dir := setup(t, ledger)
		writeFile(t, filepath.Join(dir, "data", "activity.csv"), "period,driver,value\n2026-01,frames_built,100\n2026-02,frames_built,110\n"+
			"2026-03,frames_built,105\n2026-01,machine_hours,40\n2026-02,machine_hours,44\n2026-03,machine_hour,42\n")
		out := mustRun(t, "--config", cfg, "sync")
		for _, want := range []string{"warning: drivers machine_hour and machine_hours differ by 1 letter(s)",
			"warning: driver machine_hour has values in 1 of the source's 3 periods"} {
			if !strings.Contains(out, want) {
				t.Errorf("sync output lacks %q:\n%s", want, out)
			}
		}
	})
	t.Run("no activity", func(t *testing.T) {
		cfg, dir := setup(t, ledger)
		writeFile(t, filepath.Join(dir, "data", "activity.csv"), "period,driver,value\n")
		mustRun(t, "--config", cfg, "sync")
		_, err := run(t, "--config", cfg, "analyze")
		if err == nil || !strings.Contains(err.Error(), "no activity data") || !strings.Contains(err.Error(), "sources.activity") {
			t.Errorf("analyze without activity: %v", err)
		}
		if n := count(t, filepath.Join(dir, "costdrift.db"), "SELECT COUNT(*) FROM analysis_runs"); n != 0 {
			t.Errorf("%d analyses stored without activity, want 0", n)
		}
	})
	t.Run("setting changed", func(t *testing.T) {
		dayFirst := strings.NewReplacer("2026-01-05", "05/01/2026", "2026-02-05", "05/02/2026", "2026-03-05", "05/03/2026").Replace(ledger)
		cfg, dir := setup(t, dayFirst)
		if _, err := run(t, "--config", cfg, "sync"); err == nil || !strings.Contains(err.Error(), "set date_format (e.g. DD/MM/YYYY)") {
			t.Fatalf("a ledger of day-first dates: %v, want the sync to fail naming date_format", err)
		}
		text, err := os.ReadFile(cfg)
		if err != nil {
			t.Fatal(err)
		}
		const gl = "      path: data/gl/*.csv\n"
		writeFile(t, cfg, strings.Replace(string(text), gl, gl+"      date_format: DD/MM/YYYY\n", 1))
		out := mustRun(t, "--config", cfg, "sync")
		if !strings.Contains(out, "gl.csv read again: its reading settings changed (date_format)") {
			t.Errorf("the sync after the setting changed does not say it read the file again:\n%s", out)
		}
		if n := count(t, filepath.Join(dir, "costdrift.db"), "SELECT COUNT(*) FROM gl_lines"); n != 3 {
			t.Errorf("%d lines stored once date_format is set, want 3", n)
		}
	})
}
