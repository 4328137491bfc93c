package sqlsource

import (
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
	"github.com/costdrift/costdrift/internal/money"
)

// Expected values in these tests are worked out by hand from the rows
// inserted beside them: a reader's job is to copy, map and convert, and the
// conversions are facts of the trade (common practice): EUR has two decimals
// of minor unit (ISO 4217), so 1234.56 EUR is 123456 cents; debit is positive
// and credit negative in a signed amount; a month's last day is the day
// before the next month's first. The ledger rows are invented test data.

// recorder is the shared test writer: it keeps what readers write, in order,
// and fails on a chosen call to test that readers stop.
type recorder = costdrifttest.Recorder

var errWriter = costdrifttest.ErrWriter

// monthly is the plain calendar month of a date, which is what the monthly
// calendar with a January fiscal year start returns.
func monthly(t time.Time) string { return t.Format("2006-01") }

func eur() money.Currency { return money.Currency{Code: "EUR", Exponent: 2} }

func line(source, entry string, n int, posted, account, cc string, minor int64, desc string) costdrift.LedgerLine {
	return costdrift.LedgerLine{Source: source, EntryID: entry, Line: n, PostedOn: posted, Period: posted[:7],
		Account: account, CostCenter: cc, AmountMinor: minor, Description: desc}
}

func sum(source, period, account, cc, last string, minor int64) costdrift.LedgerLine {
	return costdrift.LedgerLine{Source: source, EntryID: "sum:" + period + ":" + account + ":" + cc, Line: 1, PostedOn: last,
		Period: period, Account: account, CostCenter: cc, AmountMinor: minor}
}

func act(source, period, driver, cc string, value float64, unit string) costdrift.ActivityValue {
	return costdrift.ActivityValue{Source: source, Period: period, Driver: driver, CostCenter: cc, Value: value, Unit: unit}
}

func rej(source, location, reason, raw string) costdrift.Reject {
	return costdrift.Reject{Source: source, Location: location, Reason: reason, Raw: raw}
}

func checkLines(t *testing.T, got, want []costdrift.LedgerLine) {
	t.Helper()
	if !reflect.DeepEqual(got, want) {
		t.Errorf("ledger lines:\n got  %+v\n want %+v", got, want)
	}
}

// checkActivity compares values with tol 0: each is a short decimal that
// strconv.ParseFloat reads exactly, or a whole number.
func checkActivity(t *testing.T, got, want []costdrift.ActivityValue) {
	t.Helper()
	const tol = 0
	if len(got) != len(want) {
		t.Errorf("got %d values, want %d:\n got  %+v\n want %+v", len(got), len(want), got, want)
		return
	}
	for i := range want {
		g, w := got[i], want[i]
		gv, wv := g.Value, w.Value
		g.Value, w.Value = 0, 0
		if g != w || gv-wv > tol || wv-gv > tol {
			t.Errorf("value %d:\n got  %+v (value %v)\n want %+v (value %v)", i, g, gv, w, wv)
		}
	}
}

func checkRejects(t *testing.T, got, want []costdrift.Reject) {
	t.Helper()
	for _, r := range got {
		oneLine(t, "reject reason", r.Reason)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("rejects:\n got  %q\n want %q", got, want)
	}
}

// oneLine fails the test when a message spans lines or is empty: messages
// end up in logs, emails and a table cell.
func oneLine(t *testing.T, what, msg string) {
	t.Helper()
	if strings.ContainsAny(msg, "\r\n") {
		t.Errorf("%s spans lines: %q", what, msg)
	}
	if msg == "" {
		t.Errorf("%s is empty", what)
	}
}

// wantError fails unless err is an error whose text holds every part.
func wantError(t *testing.T, err error, parts ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error, want one containing %q", parts)
	}
	oneLine(t, "error", err.Error())
	for _, p := range parts {
		if !strings.Contains(err.Error(), p) {
			t.Errorf("error %q does not contain %q", err, p)
		}
	}
}
