package pipeline

import (
	"context"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
	"github.com/costdrift/costdrift/internal/xlsxsource"
)

// readXLSX reads one worksheet of a workbook. date_format and the notation
// keys apply to dates and amounts written as text; date and number cells
// need neither. delimiter and encoding do not apply to a workbook.
func readXLSX(ctx context.Context, e *Env, role costdrift.Role, src config.Source, path, display string, w costdrift.SourceWriter) (int, error) {
	opt := xlsxsource.Options{
		Source:   src.Name,
		Columns:  src.Columns,
		Sheet:    src.Sheet,
		Notation: money.Notation{DecimalComma: src.DecimalComma, ThousandsSeparator: src.ThousandsSeparator},
		Currency: e.Currency,
		Period:   e.Calendar.Period,
		Layout:   src.Layout,
	}
	if src.DateFormat != "" {
		opt.DateLayout, _ = config.GoDateLayout(src.DateFormat) // validated with the config
	}
	switch role {
	case costdrift.RoleActivity:
		return xlsxsource.ReadActivity(ctx, path, display, opt, w)
	case costdrift.RoleAccounts:
		return xlsxsource.ReadAccounts(ctx, path, display, opt, w)
	default:
		return xlsxsource.ReadLedger(ctx, path, display, opt, w)
	}
}
