package csvsource

import (
	"context"
	"fmt"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Activity values below are short decimals that strconv.ParseFloat reads
// exactly, so they are compared with tol 0; each expected value is the cell
// it comes from.

func readActivity(t *testing.T, path string, opt Options) (*recorder, int) {
	t.Helper()
	rec := &recorder{}
	n, err := ReadActivity(context.Background(), path, filepath.Base(path), opt, rec)
	if err != nil {
		t.Fatalf("ReadActivity: %v", err)
	}
	return rec, n
}

func activityOptions() Options {
	o := options()
	o.Source = "ops"
	return o
}

func act(period, driver, costCenter string, value float64, unit string) costdrift.ActivityValue {
	return costdrift.ActivityValue{Source: "ops", Period: period, Driver: driver, CostCenter: costCenter, Value: value, Unit: unit}
}

// at sets the line an expected value is read from.
func at(a costdrift.ActivityValue, line int) costdrift.ActivityValue {
	a.Location = fmt.Sprintf("activity.csv:%d", line)
	return a
}

func checkActivity(t *testing.T, got, want []costdrift.ActivityValue) {
	t.Helper()
	const tol = 0 // exact: each value is a short decimal read by strconv.ParseFloat
	if len(got) != len(want) {
		t.Errorf("got %d values, want %d:\n got  %+v\n want %+v", len(got), len(want), got, want)
		return
	}
	for i := range want {
		g, w := got[i], want[i]
		// Every value says where it was read; the tables below give the
		// locations only where they check them.
		if name, line, ok := strings.Cut(g.Location, ":"); !ok || !strings.Contains(name, ".") || strings.Trim(line, "0123456789") != "" || line == "" {
			t.Errorf("value %d read from %q, want FILE:LINE", i, g.Location)
		}
		if w.Location == "" {
			g.Location = ""
		}
		gv, wv := g.Value, w.Value
		g.Value, w.Value = 0, 0
		if g != w || gv-wv > tol || wv-gv > tol {
			t.Errorf("value %d:\n got  %+v (value %v)\n want %+v (value %v)", i, g, gv, w, wv)
		}
	}
}

func TestActivityLongForm(t *testing.T) {
	tests := []struct {
		name    string
		content string
		want    []costdrift.ActivityValue
	}{
		{"period, driver, value only", "period,driver,value\n2025-01,machine_hours,1210.5\n2025-01,orders,88\n2025-02,machine_hours,0\n",
			[]costdrift.ActivityValue{at(act("2025-01", "machine_hours", "", 1210.5, ""), 2), at(act("2025-01", "orders", "", 88, ""), 3), at(act("2025-02", "machine_hours", "", 0, ""), 4)}},
		{"with cost centre and unit", "Period,Driver,Value,Cost_Center,Unit\n2025-01,machine_hours,410,WELD,machine hour\n2025-01,machine_hours,380.25,,machine hour\n",
			[]costdrift.ActivityValue{act("2025-01", "machine_hours", "WELD", 410, "machine hour"), act("2025-01", "machine_hours", "", 380.25, "machine hour")}},
		{"columns in another order, semicolons", "unit;value;cost_center;driver;period\nframe;340;;frames_built;2025-03\n",
			[]costdrift.ActivityValue{act("2025-03", "frames_built", "", 340, "frame")}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			rec, n := readActivity(t, writeFile(t, "activity.csv", tc.content), activityOptions())
			if n != len(tc.want) || len(rec.Rejects) != 0 {
				t.Errorf("read %d rows, want %d; rejects %+v", n, len(tc.want), rec.Rejects)
			}
			checkActivity(t, rec.Values, tc.want)
		})
	}
}

func TestActivityLongFormRejects(t *testing.T) {
	path := writeFile(t, "activity.csv", "period,driver,value,cost_center\n"+
		"2025-01,machine_hours,-12,WELD\n"+ // 2
		"2025-01,,12,WELD\n"+ // 3
		"2025-01,machine_hours,,WELD\n"+ // 4
		"2025-01,machine_hours,twelve,WELD\n"+ // 5
		"2025-01,machine_hours,NaN,WELD\n"+ // 6
		"2025-01,machine_hours,+Inf,WELD\n"+ // 7
		"2025-01,machine_hours,12\n"+ // 8
		"2025-01,machine_hours,\"1\"2,WELD\n"+ // 9
		"2025-02,machine_hours,12.5,WELD\n") // 10: good
	rec, n := readActivity(t, path, activityOptions())
	if n != 9 {
		t.Errorf("read %d rows, want 9", n)
	}
	checkActivity(t, rec.Values, []costdrift.ActivityValue{act("2025-02", "machine_hours", "WELD", 12.5, "")})
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("ops", "activity.csv:2", `bad value "-12": activity cannot be negative`, "2025-01,machine_hours,-12,WELD"),
		rej("ops", "activity.csv:3", "missing driver", "2025-01,,12,WELD"),
		rej("ops", "activity.csv:4", "missing value", "2025-01,machine_hours,,WELD"),
		rej("ops", "activity.csv:5", `bad value "twelve": not a number`, "2025-01,machine_hours,twelve,WELD"),
		rej("ops", "activity.csv:6", `bad value "NaN": not a number`, "2025-01,machine_hours,NaN,WELD"),
		rej("ops", "activity.csv:7", `bad value "+Inf": not a number`, "2025-01,machine_hours,+Inf,WELD"),
		rej("ops", "activity.csv:8", "has 3 fields, the header has 4", "2025-01,machine_hours,12"),
		rej("ops", "activity.csv:9", `malformed CSV: extraneous or missing " in quoted-field`, `2025-01,machine_hours,"1"2,WELD`),
	})
}

func TestActivityWideForm(t *testing.T) {
	path := writeFile(t, "activity.csv", "period,machine_hours,frames_built,orders_shipped\n"+
		"2025-01,1210.5,340,88\n"+ // 2: three values
		"2025-02,1175,,91\n"+ // 3: empty cell skipped
		"2025-03,1302.25,362,n/a\n"+ // 4: one bad cell rejects the row
		"2025-04,1288,-1,97\n"+ // 5: a negative cell rejects the row
		"2025-05,,,\n"+ // 6: a period without values
		"2025-06,1300,355\n"+ // 7: too few fields
		"2025-07, 1299 ,350,96\n") // 8: spaces around a value
	rec, n := readActivity(t, path, activityOptions())
	if n != 7 {
		t.Errorf("read %d rows, want 7", n)
	}
	checkActivity(t, rec.Values, []costdrift.ActivityValue{
		act("2025-01", "machine_hours", "", 1210.5, ""), act("2025-01", "frames_built", "", 340, ""), act("2025-01", "orders_shipped", "", 88, ""),
		act("2025-02", "machine_hours", "", 1175, ""), act("2025-02", "orders_shipped", "", 91, ""),
		act("2025-07", "machine_hours", "", 1299, ""), act("2025-07", "frames_built", "", 350, ""), act("2025-07", "orders_shipped", "", 96, ""),
	})
	for _, a := range rec.Values {
		if a.Period == "2025-03" || a.Period == "2025-04" {
			t.Errorf("part of a rejected row was written: %+v", a)
		}
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("ops", "activity.csv:4", `orders_shipped: bad value "n/a": not a number`, "2025-03,1302.25,362,n/a"),
		rej("ops", "activity.csv:5", `frames_built: bad value "-1": activity cannot be negative`, "2025-04,1288,-1,97"),
		rej("ops", "activity.csv:7", "has 3 fields, the header has 4", "2025-06,1300,355"),
	})
}

func TestActivityWideFormCostCenterAndNotation(t *testing.T) {
	// Decimal comma with "." thousands: 1.210,5 is 1210.5 (by hand).
	opt := activityOptions()
	opt.Notation = money.Notation{DecimalComma: true, ThousandsSeparator: "."}
	path := writeFile(t, "activity.csv", "Period;Cost_Center;machine_hours;kWh\n2025-01;WELD;1.210,5;20.000\n2025-01;;410;\n")
	rec, _ := readActivity(t, path, opt)
	checkRejects(t, rec.Rejects, nil)
	checkActivity(t, rec.Values, []costdrift.ActivityValue{
		act("2025-01", "machine_hours", "WELD", 1210.5, ""), act("2025-01", "kWh", "WELD", 20000, ""),
		act("2025-01", "machine_hours", "", 410, ""),
	})
}

func TestActivityPeriod(t *testing.T) {
	// YYYY-MM and dates both go through the calendar's Period function; a
	// month is read as its first day (the package's rule).
	fiscal := func(d time.Time) string {
		// A fiscal year starting in April, named by the year it starts in:
		// April 2025 is FY2025-P01, March 2026 is FY2025-P12 (by hand).
		m := (int(d.Month())+8)%12 + 1
		y := d.Year()
		if d.Month() < time.April {
			y--
		}
		return fmt.Sprintf("FY%d-P%02d", y, m)
	}
	tests := []struct {
		name, layout, text string
		period             func(time.Time) string
		want, reason       string
	}{
		{"year and month", "", "2025-03", month, "2025-03", ""},
		{"ISO date", "", "2025-03-31", month, "2025-03", ""},
		{"date in the source layout", "02.01.2006", "31.03.2025", month, "2025-03", ""},
		{"ISO date beside another layout", "02.01.2006", "2025-03-31", month, "2025-03", ""},
		{"month through a fiscal calendar", "", "2025-04", fiscal, "FY2025-P01", ""},
		{"date through a fiscal calendar", "", "2026-03-15", fiscal, "FY2025-P12", ""},
		{"month 13", "", "2025-13", month, "", `bad period "2025-13": want YYYY-MM or a date`},
		{"single-digit month", "", "2025-3", month, "", `bad period "2025-3": want YYYY-MM or a date`},
		{"month first", "", "03/2025", month, "", `bad period "03/2025": want YYYY-MM or a date`},
		{"no such day", "", "2025-02-30", month, "", `bad period "2025-02-30": want YYYY-MM or a date`},
		{"words", "", "March 2025", month, "", `bad period "March 2025": want YYYY-MM or a date`},
		{"missing", "", "", month, "", "missing period"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			opt := activityOptions()
			opt.DateLayout, opt.Period = tc.layout, tc.period
			rec, _ := readActivity(t, writeFile(t, "activity.csv", "period,machine_hours\n"+tc.text+",12\n"), opt)
			if tc.reason == "" {
				checkRejects(t, rec.Rejects, nil)
				checkActivity(t, rec.Values, []costdrift.ActivityValue{act(tc.want, "machine_hours", "", 12, "")})
				return
			}
			if len(rec.Values) != 0 {
				t.Errorf("stored %+v, want nothing", rec.Values)
			}
			checkRejects(t, rec.Rejects, []costdrift.Reject{rej("ops", "activity.csv:2", tc.reason, tc.text+",12")})
		})
	}
}

func TestActivityLayout(t *testing.T) {
	long := "period,driver,value\n2025-01,machine_hours,12\n"
	wide := "period,driver_hours,orders\n2025-01,12,3\n"
	t.Run("detected long", func(t *testing.T) {
		rec, _ := readActivity(t, writeFile(t, "a.csv", long), activityOptions())
		checkActivity(t, rec.Values, []costdrift.ActivityValue{act("2025-01", "machine_hours", "", 12, "")})
	})
	t.Run("detected wide", func(t *testing.T) {
		rec, _ := readActivity(t, writeFile(t, "a.csv", wide), activityOptions())
		checkActivity(t, rec.Values, []costdrift.ActivityValue{act("2025-01", "driver_hours", "", 12, ""), act("2025-01", "orders", "", 3, "")})
	})
	t.Run("detected long through a mapping", func(t *testing.T) {
		opt := activityOptions()
		opt.Columns = map[string]string{"period": "Month", "driver": "Activity", "value": "Qty"}
		rec, _ := readActivity(t, writeFile(t, "a.csv", "Month,Activity,Qty\n2025-01,orders,7\n"), opt)
		checkActivity(t, rec.Values, []costdrift.ActivityValue{act("2025-01", "orders", "", 7, "")})
	})
	t.Run("forced wide reads driver and value as driver columns", func(t *testing.T) {
		opt := activityOptions()
		opt.Layout = "wide"
		rec, _ := readActivity(t, writeFile(t, "a.csv", long), opt)
		checkActivity(t, rec.Values, nil)
		checkRejects(t, rec.Rejects, []costdrift.Reject{rej("ops", "a.csv:2", `driver: bad value "machine_hours": not a number`, "2025-01,machine_hours,12")})
	})
	t.Run("forced long on a wide file", func(t *testing.T) {
		opt := activityOptions()
		opt.Layout = "long"
		rec := &recorder{}
		_, err := ReadActivity(context.Background(), writeFile(t, "a.csv", wide), "a.csv", opt, rec)
		if err == nil || !strings.Contains(err.Error(), "a.csv: header has no column driver, value (found: period, driver_hours, orders)") {
			t.Errorf("error %v, want one naming driver and value", err)
		}
		if !rec.Empty() {
			t.Errorf("wrote %+v", rec)
		}
	})
}

func TestActivityWholeFileErrors(t *testing.T) {
	tests := []struct {
		name    string
		content *string
		want    string
	}{
		{"missing file", nil, "cannot read activity.csv: no such file or directory"},
		{"empty", ptr(""), "activity.csv is empty: expected a header line and rows"},
		{"whitespace", ptr("\n \n"), "activity.csv is empty"},
		{"no period column", ptr("month,machine_hours\n2025-01,3\n"),
			"activity.csv: header has no column period (found: month, machine_hours); expected period, driver, value (long form) or period and one column per driver (wide form)"},
		{"no driver columns", ptr("period,cost_center\n2025-01,WELD\n"),
			"activity.csv: wide-form header has a period column but no driver columns (found: period, cost_center)"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "activity.csv")
			if tc.content != nil {
				path = writeFile(t, "activity.csv", *tc.content)
			}
			rec := &recorder{}
			n, err := ReadActivity(context.Background(), path, "activity.csv", activityOptions(), rec)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want one containing %q", err, tc.want)
			}
			oneLine(t, "error", err.Error())
			if n != 0 || !rec.Empty() {
				t.Errorf("read %d rows, wrote %+v; want nothing", n, rec)
			}
		})
	}
}

func TestActivityFixtureWide(t *testing.T) {
	rec, n := readActivity(t, filepath.Join("..", "..", "testdata", "csv", "activity_wide", "activity.csv"), activityOptions())
	if n != 4 {
		t.Errorf("read %d rows, want 4", n)
	}
	checkActivity(t, rec.Values, []costdrift.ActivityValue{
		act("2025-01", "machine_hours", "", 1210.5, ""), act("2025-01", "frames_built", "", 340, ""), act("2025-01", "orders_shipped", "", 88, ""),
		act("2025-02", "machine_hours", "", 1175, ""), act("2025-02", "orders_shipped", "", 91, ""),
		act("2025-04", "machine_hours", "", 1288, ""), act("2025-04", "frames_built", "", 355, ""), act("2025-04", "orders_shipped", "", 97, ""),
	})
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("ops", "activity.csv:4", `orders_shipped: bad value "n/a": not a number`, "2025-03,1302.25,362,n/a"),
	})
}

func TestActivityFixtureLongTab(t *testing.T) {
	rec, n := readActivity(t, filepath.Join("..", "..", "testdata", "csv", "activity_long_tab", "activity.tsv"), activityOptions())
	if n != 5 {
		t.Errorf("read %d rows, want 5", n)
	}
	checkActivity(t, rec.Values, []costdrift.ActivityValue{
		act("2025-01", "machine_hours", "WELD", 410, "machine hour"),
		act("2025-01", "machine_hours", "PAINT", 380.5, "machine hour"),
		act("2025-01", "frames_built", "", 340, "frame"),
		act("2025-02", "frames_built", "", 331, "frame"),
	})
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("ops", "activity.tsv:5", `bad value "-12": activity cannot be negative`, "2025-02\tmachine_hours\t-12\tWELD\tmachine hour"),
	})
}

func TestActivityWriterErrorStopsWideRow(t *testing.T) {
	// A store failure in the middle of a wide row ends the read there.
	path := writeFile(t, "activity.csv", "period,a,b,c\n2025-01,1,2,3\n2025-02,4,5,6\n")
	rec := &recorder{FailOn: 2}
	n, err := ReadActivity(context.Background(), path, "activity.csv", activityOptions(), rec)
	if err != errWriter || n != 1 || !reflect.DeepEqual(rec.Values, []costdrift.ActivityValue{at(act("2025-01", "a", "", 1, ""), 2)}) {
		t.Errorf("read %d rows, error %v, stored %+v; want 1 row, %v, only a=1", n, err, rec.Values, errWriter)
	}
}

func TestActivityGrouping(t *testing.T) {
	// "," thousands: 1,234.5 is 1234.5 (by hand); 1,23 was read as 123 and
	// 12,3456 as 123456 before the grouping was checked.
	opt := activityOptions()
	opt.Notation = money.Notation{ThousandsSeparator: ","}
	path := writeFile(t, "activity.csv", "period;driver;value\n"+
		"2025-01;machine_hours;1,234.5\n"+
		"2025-02;machine_hours;1,23\n"+
		"2025-03;machine_hours;12,3456\n")
	rec, _ := readActivity(t, path, opt)
	checkActivity(t, rec.Values, []costdrift.ActivityValue{act("2025-01", "machine_hours", "", 1234.5, "")})
	const grouping = `digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("ops", "activity.csv:3", `bad value "1,23": `+grouping, "2025-02;machine_hours;1,23"),
		rej("ops", "activity.csv:4", `bad value "12,3456": `+grouping, "2025-03;machine_hours;12,3456"),
	})
}
