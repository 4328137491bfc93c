package pipeline

import (
	"context"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/csvsource"
	"github.com/costdrift/costdrift/internal/money"
)

// fileReader reads one file of a file-based source into w and returns the
// number of data rows it read.
type fileReader func(ctx context.Context, e *Env, role costdrift.Role, src config.Source, path, display string, w costdrift.SourceWriter) (int, error)

// queryReader reads a source that is not a file (a database query) into w.
// watermark is the newest value a watermark-mode source read last time ("" the
// first time, or in full-refresh mode); it returns the rows read, the new
// watermark and warnings for the operator (such as a login that can write),
// which come back with an error too.
type queryReader func(ctx context.Context, e *Env, role costdrift.Role, src config.Source, watermark string, w costdrift.SourceWriter) (read int, newWatermark string, warnings []string, err error)

// sourceKind is how one kind of source is read, file by file (each file
// one transaction) or by one query, and the roles it can fill.
type sourceKind struct {
	roles []costdrift.Role
	file  fileReader
	query queryReader
	// settings are the config keys the kind reads that shape what a source
	// yields (readingSettings).
	settings []string
}

var allRoles = []costdrift.Role{costdrift.RoleLedger, costdrift.RoleActivity, costdrift.RoleAccounts}

// sourceKinds is the one registry of the kinds of source this build reads:
// the config's check of each source's kind and role comes from it (Kinds).
var sourceKinds = map[string]sourceKind{
	"csv": {roles: allRoles, file: readCSV,
		settings: []string{"columns", "delimiter", "date_format", "decimal_comma", "thousands_separator", "layout", "encoding"}},
	"xlsx": {roles: allRoles, file: readXLSX,
		settings: []string{"columns", "sheet", "date_format", "decimal_comma", "thousands_separator", "layout"}},
	"saft": {roles: []costdrift.Role{costdrift.RoleLedger, costdrift.RoleAccounts}, file: readSAFT,
		settings: []string{"analysis_type"}},
	"sql": {roles: allRoles, query: readSQL,
		settings: []string{"columns", "date_format", "decimal_comma", "thousands_separator", "query", "aggregated", "watermark_column"}},
}

// Kinds is the registry as the config checks it: each kind with its roles.
func Kinds() config.Kinds {
	out := make(config.Kinds, len(sourceKinds))
	for name, k := range sourceKinds {
		for _, r := range k.roles {
			out[name] = append(out[name], string(r))
		}
	}
	return out
}

func readCSV(ctx context.Context, e *Env, role costdrift.Role, src config.Source, path, display string, w costdrift.SourceWriter) (int, error) {
	opt := csvsource.Options{
		Source:   src.Name,
		Columns:  src.Columns,
		Notation: money.Notation{DecimalComma: src.DecimalComma, ThousandsSeparator: src.ThousandsSeparator},
		Currency: e.Currency,
		Period:   e.Calendar.Period,
		Layout:   src.Layout,
		Encoding: src.Encoding,
	}
	opt.Progress = e.progress(path, display)
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
