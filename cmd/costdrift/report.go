package main

import (
	"context"
	"fmt"
	"io"
	"slices"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// reportFormats are the formats of `costdrift report`.
var reportFormats = []string{"table", "json", "csv", "xlsx", "html"}

func (a *app) reportCommand() *cobra.Command {
	var out outputFlags
	var filter report.Filter
	cmd := &cobra.Command{
		Use:   "report",
		Short: "Show each cost object's current behaviour and formula",
		Long: `report shows every cost object's current behaviour: class, formula, R²,
periods, relevant range and the reason. --format table (the default), json,
csv, xlsx (a workbook: name it with --output) or html (one self-contained
page with each object's charts, for reading and printing on A4). The filters
keep the objects of one cost centre, account or class, or whose behaviour
changed in a period or later.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if !slices.Contains(reportFormats, out.format) {
				return fmt.Errorf("--format must be %s, not %q", strings.Join(reportFormats, ", "), out.format)
			}
			if out.format == "xlsx" && out.output == "" {
				return fmt.Errorf("--format xlsx writes a workbook: name it with --output FILE.xlsx")
			}
			if filter.Class != "" && !slices.Contains(classes, costdrift.Class(filter.Class)) {
				return fmt.Errorf("--class must be one of %s, not %q", classList(), filter.Class)
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if filter.ChangedSince != "" {
					first, err := e.Calendar.Parse(filter.ChangedSince)
					if err != nil {
						return fmt.Errorf("--changed-since: %w; give a period of the %s calendar the store uses", err, e.Calendar.Kind())
					}
					filter.Later = func(period, _ string) bool {
						p, err := e.Calendar.Parse(period)
						return err == nil && !p.Before(first)
					}
				}
				return a.writeReport(cmd.Context(), e, db, out, filter)
			})
		},
	}
	out.add(cmd)
	cmd.Flags().Lookup("format").Usage = strings.Join(reportFormats, ", ")
	cmd.Flags().StringVar(&filter.CostCenter, "cost-center", "", "only the objects of this cost centre")
	cmd.Flags().StringVar(&filter.Account, "account", "", "only the objects of this account")
	cmd.Flags().StringVar(&filter.Class, "class", "", "only the objects of this class ("+classList()+")")
	cmd.Flags().StringVar(&filter.ChangedSince, "changed-since", "", "only the objects whose behaviour starts in this `PERIOD` or later")
	return cmd
}

// classes are the classes --class accepts.
var classes = []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained, costdrift.InsufficientData}

func classList() string {
	names := make([]string, len(classes))
	for i, c := range classes {
		names[i] = string(c)
	}
	return strings.Join(names, ", ")
}

func (a *app) writeReport(ctx context.Context, e *pipeline.Env, db *sqlite.DB, out outputFlags, filter report.Filter) error {
	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if len(bs) == 0 && out.format == "table" {
		_, err := fmt.Fprintln(a.out, "no behaviour stored yet: run `costdrift analyze`")
		return err
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	decided, err := pipeline.Decided(ctx, e, db, bs)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	rows := filter.Apply(report.DecidedRows(bs, names, decided))
	switch out.format {
	case "json":
		return out.write(a.out, func(w io.Writer) error { return report.JSON(w, rows) })
	case "csv":
		return out.write(a.out, func(w io.Writer) error { return report.ReportCSV(w, rows) })
	case "xlsx":
		return out.write(a.out, func(w io.Writer) error {
			return writeXLSX(w, "report", report.ReportCells(rows), "Cost behaviour", []string{"Amounts in " + e.Currency.Code + " per period."}, e.Now())
		})
	case "html":
		objects := make([]string, len(rows))
		for i, r := range rows {
			objects[i] = r.Object
		}
		charts, err := pipeline.ReportCharts(ctx, e, db, objects)
		if err != nil {
			return err
		}
		page := report.HTMLReport{Rows: rows, Currency: e.Currency.Code, Version: version, Charts: charts,
			Created: e.Now().UTC().Format("2006-01-02 15:04 UTC"), Filter: filterWords(filter)}
		return out.write(a.out, func(w io.Writer) error { return report.HTML(w, page) })
	}
	if len(rows) == 0 {
		_, err := fmt.Fprintln(a.out, "no cost object matches the filters")
		return err
	}
	return out.write(a.out, func(w io.Writer) error { return report.Table(w, rows, e.Currency.Code) })
}

// filterWords says which objects a filtered report shows.
func filterWords(f report.Filter) string {
	var parts []string
	if f.CostCenter != "" {
		parts = append(parts, "cost centre "+f.CostCenter)
	}
	if f.Account != "" {
		parts = append(parts, "account "+f.Account)
	}
	if f.Class != "" {
		parts = append(parts, "class "+f.Class)
	}
	if f.ChangedSince != "" {
		parts = append(parts, "behaviour changed in "+f.ChangedSince+" or later")
	}
	return strings.Join(parts, ", ")
}
