package csvsource

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadActivity streams driver values to w. The long form has the columns
// period, driver, value and optionally cost_center and unit; the wide form
// has period (and optionally cost_center) and one column per driver. The
// layout is detected from the header unless opt.Layout says it.
func ReadActivity(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, closer, err := open(path, display, opt)
	if err != nil {
		return 0, err
	}
	defer closer.Close()

	layout := opt.Layout
	if layout == "" {
		layout = "wide"
		probe := &table{header: t.header}
		if probe.bind(opt.Columns, []string{"driver", "value"}, nil, "") == nil {
			layout = "long"
		}
	}
	var drivers []int // wide form: the columns that hold drivers
	if layout == "long" {
		if err := t.bind(opt.Columns, []string{"period", "driver", "value"}, []string{"cost_center", "unit"},
			"expected period, driver, value (long form) or period and one column per driver (wide form)"); err != nil {
			return 0, err
		}
	} else {
		if err := t.bind(opt.Columns, []string{"period"}, []string{"cost_center"},
			"expected period, driver, value (long form) or period and one column per driver (wide form)"); err != nil {
			return 0, err
		}
		for i, h := range t.header {
			if i != t.col["period"] && !(t.has("cost_center") && i == t.col["cost_center"]) && strings.TrimSpace(h) != "" {
				drivers = append(drivers, i)
			}
		}
		if len(drivers) == 0 {
			return 0, fmt.Errorf("%s: wide-form header has a period column but no driver columns (found: %s)", display, joinHeader(t.header))
		}
	}

	return t.rows(ctx, display, opt, w, func(rec []string) error {
		reject := func(reason string) error { return t.reject(opt, w, reason) }
		if reason := t.rowProblem(rec); reason != "" {
			return reject(reason)
		}
		period, reason := parsePeriod(t.field(rec, "period"), opt)
		if reason != "" {
			return reject(reason)
		}
		cc := t.field(rec, "cost_center")
		if layout == "long" {
			a := costdrift.ActivityValue{Source: opt.Source, Period: period, Driver: t.field(rec, "driver"), CostCenter: cc, Unit: t.field(rec, "unit")}
			var reason string
			if a.Driver == "" {
				reason = "missing driver"
			} else {
				a.Value, reason = parseValue(t.field(rec, "value"), opt)
			}
			if reason != "" {
				return reject(reason)
			}
			a.Location = t.location()
			return w.Activity(a)
		}
		// Wide form: check the whole row first, so that it is stored whole
		// or rejected whole.
		values := make([]costdrift.ActivityValue, 0, len(drivers))
		reason = ""
		for _, i := range drivers {
			text := strings.TrimSpace(rec[i])
			if text == "" {
				continue // no value for this driver in this period
			}
			v, why := parseValue(text, opt)
			if why != "" {
				reason = strings.TrimSpace(t.header[i]) + ": " + why
				break
			}
			values = append(values, costdrift.ActivityValue{Source: opt.Source, Period: period, Driver: strings.TrimSpace(t.header[i]), CostCenter: cc, Value: v})
		}
		if reason != "" {
			return reject(reason)
		}
		for _, a := range values {
			a.Location = t.location()
			if err := w.Activity(a); err != nil {
				return err
			}
		}
		return nil
	})
}

// parsePeriod accepts YYYY-MM, or a date (in the source's date layout or
// ISO) that the calendar maps to a period.
func parsePeriod(text string, opt Options) (string, string) {
	if text == "" {
		return "", "missing period"
	}
	if len(text) == 7 {
		if t, err := time.Parse("2006-01", text); err == nil {
			return opt.Period(t), ""
		}
	}
	for _, layout := range []string{opt.DateLayout, "2006-01-02"} {
		if layout == "" {
			continue
		}
		if t, err := time.Parse(layout, text); err == nil {
			return opt.Period(t), ""
		}
	}
	return "", fmt.Sprintf("bad period %q: want YYYY-MM or a date", text)
}

// parseValue reads an activity quantity; decimal notation follows the
// source's options. Activity cannot be negative or missing.
func parseValue(text string, opt Options) (float64, string) {
	if text == "" {
		return 0, "missing value"
	}
	s, err := opt.Notation.Plain(text)
	if err != nil {
		return 0, fmt.Sprintf("bad value %q: %v", text, err)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Sprintf("bad value %q: not a number", text)
	}
	if v < 0 {
		return 0, fmt.Sprintf("bad value %q: activity cannot be negative", text)
	}
	return v, ""
}
