package pipeline

import (
	"context"
	"fmt"
	"os"
	"time"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
	"github.com/costdrift/costdrift/internal/sqlsource"
)

// readSQL runs a sql source's query into w. In watermark mode, watermark is
// the value the store kept from the last successful read ("" the first
// time), and the new one is returned for the store to keep with the batch.
// The reader's warnings (a login that can write) are returned for the sync
// to print and record.
func readSQL(ctx context.Context, e *Env, role costdrift.Role, src config.Source, watermark string, w costdrift.SourceWriter) (int, string, []string, error) {
	if src.Aggregated && role != costdrift.RoleLedger {
		return 0, "", nil, fmt.Errorf("aggregated: true applies to a ledger source only, not to %s", role)
	}
	dsnFile := ""
	if src.DSNFile != "" {
		dsnFile = e.Config.Path(src.DSNFile)
	}
	dsn, origin, err := sqlsource.LoadDSN(src.DSNEnv, dsnFile, os.Getenv)
	if err != nil {
		return 0, "", nil, err
	}
	opt := sqlsource.Options{
		Source:     src.Name,
		Driver:     src.Driver,
		DSN:        dsn,
		DSNOrigin:  origin,
		Query:      src.Query,
		Columns:    src.Columns,
		Aggregated: src.Aggregated,
		Currency:   e.Currency,
		Notation:   money.Notation{DecimalComma: src.DecimalComma, ThousandsSeparator: src.ThousandsSeparator},
		Period:     e.Calendar.Period,
	}
	if src.Timeout != "" {
		opt.Timeout, _ = time.ParseDuration(src.Timeout) // validated with the config
	}
	if src.DateFormat != "" {
		opt.DateLayout, _ = config.GoDateLayout(src.DateFormat) // validated with the config
	}
	if src.Refresh == "watermark" {
		opt.WatermarkColumn, opt.Watermark = src.WatermarkColumn, watermark
	}

	var res sqlsource.Result
	switch role {
	case costdrift.RoleActivity:
		res, err = sqlsource.ReadActivity(ctx, opt, w)
	case costdrift.RoleAccounts:
		res, err = sqlsource.ReadAccounts(ctx, opt, w)
	default:
		res, err = sqlsource.ReadLedger(ctx, opt, w)
	}
	if err != nil {
		return res.Rows, "", res.Warnings, err
	}
	if src.Refresh != "watermark" {
		return res.Rows, "", res.Warnings, nil
	}
	return res.Rows, res.Watermark, res.Warnings, nil
}
