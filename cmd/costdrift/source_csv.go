package main

import (
	"context"
	"os"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/csvsource"
	"github.com/costdrift/costdrift/internal/money"
)

// fileReader reads one file of a file-based source into w and returns the
// number of data rows it read.
type fileReader func(ctx context.Context, e *env, role costdrift.Role, src config.Source, path, display string, w costdrift.SourceWriter) (int, error)

// fileKinds maps a source kind to its reader; each kind registers itself
// from its own file with init.
var fileKinds = map[string]fileReader{}

// queryReader reads a source that is not a file (a database query) into w.
// watermark is the newest value a watermark-mode source read last time ("" the
// first time, or in full-refresh mode); it returns the rows read, the new
// watermark and warnings for the operator (such as a login that can write),
// which come back with an error too.
type queryReader func(ctx context.Context, e *env, role costdrift.Role, src config.Source, watermark string, w costdrift.SourceWriter) (read int, newWatermark string, warnings []string, err error)

// queryKinds maps a source kind to its reader, registered like fileKinds.
var queryKinds = map[string]queryReader{}

func init() { fileKinds["csv"] = readCSV }

func readCSV(ctx context.Context, e *env, role costdrift.Role, src config.Source, path, display string, w costdrift.SourceWriter) (int, error) {
	opt := csvsource.Options{
		Source:   src.Name,
		Columns:  src.Columns,
		Notation: money.Notation{DecimalComma: src.DecimalComma, ThousandsSeparator: src.ThousandsSeparator},
		Currency: e.currency,
		Period:   e.calendar.Period,
		Layout:   src.Layout,
		Encoding: src.Encoding,
	}
	if e.progress != nil {
		if st, err := os.Stat(path); err == nil && st.Size() > progressMinBytes {
			size := st.Size()
			opt.Progress = func(done int64) { e.progress(display, done, size) }
		}
	}
	if src.Delimiter != "" {
		opt.Delimiter = []rune(src.Delimiter)[0]
	}
	if src.DateFormat != "" {
		opt.DateLayout, _ = config.GoDateLayout(src.DateFormat) // validated with the config
	}
	switch role {
	case costdrift.RoleActivity:
		return csvsource.ReadActivity(ctx, path, display, opt, w)
	case costdrift.RoleAccounts:
		return csvsource.ReadAccounts(ctx, path, display, opt, w)
	default:
		return csvsource.ReadLedger(ctx, path, display, opt, w)
	}
}
