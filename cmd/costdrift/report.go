package main

import (
	"context"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) reportCommand() *cobra.Command {
	var format string
	cmd := &cobra.Command{
		Use:   "report",
		Short: "Show each cost object's current behaviour and formula",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if format != "table" && format != "json" {
				return fmt.Errorf("--format must be table or json, not %q", format)
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				return writeReport(cmd.Context(), e, db, format, a.out)
			})
		},
	}
	cmd.Flags().StringVar(&format, "format", "table", "table or json")
	return cmd
}

func writeReport(ctx context.Context, e *pipeline.Env, db *sqlite.DB, format string, out io.Writer) error {
	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if len(bs) == 0 && format == "table" {
		_, err := fmt.Fprintln(out, "no behaviour stored yet: run `costdrift analyze`")
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
	rows := report.DecidedRows(bs, names, decided)
	if format == "json" {
		return report.JSON(out, rows)
	}
	return report.Table(out, rows, e.Currency.Code)
}
