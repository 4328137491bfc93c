package csvsource

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
	"github.com/costdrift/costdrift/internal/money"
)

// Expected values in these tests are worked out by hand from the rows
// written beside them: a reader's job is to copy, split and convert, and the
// conversions are facts of the trade (common practice): EUR and USD have two
// decimals of minor unit (ISO 4217), so 1234.56 EUR is 123456 cents; debit is
// positive and credit negative in a signed amount. The fixtures under
// testdata/csv/ are invented data for an invented company.

// recorder is the shared test writer: it keeps what readers write, in order,
// and fails on a chosen call to test that readers stop.
type recorder = costdrifttest.Recorder

var errWriter = costdrifttest.ErrWriter

// month is the plain calendar month of a date, which is what the monthly
// calendar with a January fiscal year start returns.
func month(t time.Time) string { return t.Format("2006-01") }

func eur() money.Currency { return money.Currency{Code: "EUR", Exponent: 2} }

// options are those of a source named "gl" in EUR with ISO dates.
func options() Options {
	return Options{Source: "gl", Currency: eur(), Period: month}
}

// writeFile writes content to name in a fresh temporary folder and returns
// its path.
func writeFile(t *testing.T, name, content string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(content), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// oneLine fails the test when a message spans lines: messages end up in
// logs, emails and a table cell.
func oneLine(t *testing.T, what, msg string) {
	t.Helper()
	if strings.ContainsAny(msg, "\r\n") {
		t.Errorf("%s spans lines: %q", what, msg)
	}
	if msg == "" {
		t.Errorf("%s is empty", what)
	}
}

// checkRejects compares rejects field by field and checks that each
// reason is one line.
func checkRejects(t *testing.T, got, want []costdrift.Reject) {
	t.Helper()
	for _, r := range got {
		oneLine(t, "reject reason at "+r.Location, r.Reason)
	}
	if len(got) != len(want) {
		t.Errorf("got %d rejects, want %d:\n got  %+v\n want %+v", len(got), len(want), got, want)
		return
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("reject %d:\n got  %+v\n want %+v", i, got[i], want[i])
		}
	}
}

// rej builds an expected reject.
func rej(source, location, reason, raw string) costdrift.Reject {
	return costdrift.Reject{Source: source, Location: location, Reason: reason, Raw: raw}
}

// gl builds an expected ledger line.
func gl(source, entry string, line int, postedOn, period, account, costCenter string, minor int64, description string) costdrift.LedgerLine {
	return costdrift.LedgerLine{Source: source, EntryID: entry, Line: line, PostedOn: postedOn, Period: period, Account: account,
		CostCenter: costCenter, AmountMinor: minor, Description: description}
}
