package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"
)

// hostileText is what a ledger or activity file can put into a name: a
// sequence that clears the screen, one that writes the clipboard (OSC 52,
// ended by BEL) and the one-byte C1 form of the control sequence introducer
// (U+009B), which some terminals act on.
const hostileText = "\x1b[2J\x1b]52;c;SGVsbG8=\a\u009b31m"

// hostileShown is hostileText as the text outputs show it.
const hostileShown = `\x1b[2J\x1b]52;c;SGVsbG8=\a\u009b31m`

// hostileStore syncs and analyses two years of one mixed cost whose
// account code, account name, cost centre, driver and unit all carry
// hostileText, and writes a plan for the driver. It returns the config,
// the folder and the object's name.
func hostileStore(t *testing.T) (cfg, dir, object string) {
	t.Helper()
	cfg, dir = setup(t, "")
	account, costCenter, driver := "61"+hostileText, "W"+hostileText, "hours"+hostileText
	writeCSV := func(path string, rows [][]string) {
		t.Helper()
		var b bytes.Buffer
		w := csv.NewWriter(&b)
		if err := w.WriteAll(rows); err != nil {
			t.Fatal(err)
		}
		writeFile(t, path, b.String())
	}
	ledger := [][]string{{"entry_id", "line", "date", "account", "cost_center", "amount"}}
	activity := [][]string{{"period", "driver", "value", "unit"}}
	for i := range 24 {
		period := fmt.Sprintf("%d-%02d", 2024+i/12, i%12+1)
		hours := 100 + (i*37)%60
		// cost = 2,000 + 3 per hour, give or take 15 (invented data).
		cost := 2000 + 3*hours + ((i*13)%7-3)*5
		id := fmt.Sprintf("E%d", i)
		ledger = append(ledger,
			[]string{id, "1", period + "-15", account, costCenter, fmt.Sprintf("%d.00", cost)},
			[]string{id, "2", period + "-15", "2000", "", fmt.Sprintf("-%d.00", cost)})
		activity = append(activity, []string{period, driver, fmt.Sprint(hours), "hour" + hostileText})
	}
	writeCSV(filepath.Join(dir, "data", "gl", "gl.csv"), ledger)
	writeCSV(filepath.Join(dir, "data", "activity.csv"), activity)
	writeCSV(filepath.Join(dir, "data", "accounts.csv"), [][]string{{"account", "name"}, {account, "Rent" + hostileText}})
	writeCSV(filepath.Join(dir, "plan.csv"), [][]string{{"period", "driver", "value"}, {"2026-01", driver, "130"}})
	config, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	scoped := strings.Replace(string(config), `accounts: ["5000-6999"]`, `accounts: ["61*"]`, 1)
	if scoped == string(config) {
		t.Fatal("the starter config no longer scopes analysis.accounts as this test expects")
	}
	writeFile(t, cfg, scoped)
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	return cfg, dir, account + "/" + costCenter
}

// terminalSafe fails the test when text holds anything a terminal acts on:
// an escape, a bell, a C0 control other than the line break, DEL, a C1
// control or a byte that is not UTF-8.
func terminalSafe(t *testing.T, what, text string) {
	t.Helper()
	if !utf8.ValidString(text) {
		t.Errorf("%s: not UTF-8:\n%q", what, text)
	}
	for i, r := range text {
		if (r < 0x20 && r != '\n') || (r >= 0x7f && r <= 0x9f) {
			t.Errorf("%s: control character %U at byte %d:\n%q", what, r, i, text)
			return
		}
	}
}

// Names from the ledger and activity files reach every text output as
// visible escapes: nothing in them clears the screen, writes the clipboard
// or starts a control sequence.
func TestTextOutputsEscapeHostileNames(t *testing.T) {
	cfg, dir, object := hostileStore(t)
	plan := filepath.Join(dir, "plan.csv")
	shownObject := "61" + hostileShown + "/W" + hostileShown
	for _, tc := range []struct {
		name string
		args []string
		want []string
	}{
		{"report", []string{"report"}, []string{shownObject, "Rent" + hostileShown[:19], "per hour" + hostileShown}},
		{"explain", []string{"explain", object}, []string{shownObject + " — Rent" + hostileShown,
			"hours" + hostileShown, "(hour" + hostileShown + ")", "per hour" + hostileShown}},
		{"budget", []string{"budget", "--plan", plan}, []string{shownObject, "total W" + hostileShown, "hours" + hostileShown}},
		{"variance", []string{"variance", "--period", "2025-12", "--plan", plan}, []string{shownObject, "total W" + hostileShown, "hours" + hostileShown}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out := mustRun(t, append([]string{"--config", cfg}, tc.args...)...)
			terminalSafe(t, tc.name, out)
			for _, want := range tc.want {
				if !strings.Contains(out, want) {
					t.Errorf("%s lacks %q:\n%s", tc.name, want, out)
				}
			}
		})
	}
}

// JSON escapes what the encoder leaves as it is (DEL and the C1 controls),
// so that JSON printed on a terminal is as safe as the text, and decodes
// back to exactly the names stored.
func TestJSONOutputsEscapeC1Controls(t *testing.T) {
	cfg, dir, object := hostileStore(t)
	plan := filepath.Join(dir, "plan.csv")
	for _, args := range [][]string{
		{"report", "--format", "json"},
		{"explain", object, "--format", "json"},
		{"budget", "--plan", plan, "--format", "json"},
		{"variance", "--period", "2025-12", "--format", "json"},
	} {
		out := mustRun(t, append([]string{"--config", cfg}, args...)...)
		terminalSafe(t, args[0]+" --format json", out)
		if !strings.Contains(out, `\u001b[2J\u001b]52;c;SGVsbG8=\u0007\u009b31m`) {
			t.Errorf("%s --format json does not escape the names:\n%s", args[0], out)
		}
		var rows []struct {
			Object      string `json:"object"`
			AccountName string `json:"account_name"`
		}
		if args[0] == "explain" {
			out = "[" + out + "]"
		}
		if err := json.Unmarshal([]byte(out), &rows); err != nil {
			t.Fatalf("%s --format json: %v", args[0], err)
		}
		if rows[0].Object != object || rows[0].AccountName != "Rent"+hostileText {
			t.Errorf("%s --format json decodes to %q, %q", args[0], rows[0].Object, rows[0].AccountName)
		}
	}
}

// A file name from the data folder in a sync note, and names from the
// store quoted by an error, reach the terminal as visible escapes too. The
// error is read from the command's own standard error, as main writes it.
func TestSyncNotesAndErrorsShowNamesAsText(t *testing.T) {
	cfg, dir, object := hostileStore(t)
	file := filepath.Join(dir, "data", "gl", "late"+hostileText+".csv")
	writeFile(t, file, header+"L1,1,2025-12-20,6100,WELD,10.00\nL1,2,2025-12-20,2000,,-10.00\n")
	mustRun(t, "--config", cfg, "sync")
	if err := os.Remove(file); err != nil {
		t.Fatal(err)
	}
	out := mustRun(t, "--config", cfg, "sync")
	terminalSafe(t, "sync", out)
	if want := "late" + hostileShown + ".csv is gone"; !strings.Contains(out, want) {
		t.Errorf("sync lacks %q:\n%s", want, out)
	}

	// The object's name without its cost centre's last characters: explain
	// fails and suggests the stored name.
	var stderr bytes.Buffer
	cmd := command("--config", cfg, "explain", strings.TrimSuffix(object, "31m"))
	cmd.Stderr = &stderr
	if err := cmd.Run(); err == nil {
		t.Fatal("explain of an unknown object succeeded")
	}
	terminalSafe(t, "explain's error", stderr.String())
	if want := "did you mean 61" + hostileShown + "/W" + hostileShown + "?"; !strings.Contains(stderr.String(), want) {
		t.Errorf("explain's error lacks %q:\n%s", want, stderr.String())
	}
}
