package main

import (
	"fmt"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) historyCommand() *cobra.Command {
	var format, chartPath string
	cmd := &cobra.Command{
		Use:   "history OBJECT",
		Short: "Show one cost object's formulas over time, with the changes and alerts",
		Long: `history shows, for one cost object ("6110/PAINT"), every formula the
analyses recorded, oldest first, with the periods each held, the changes the break tests found between them and the object's
alerts. --chart FILE draws its cost over the latest analysis's window with the
formula in force in each period and every change marked, as PNG or SVG by the
file's extension. It reads the store and fits nothing.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := checkFormatAndChart(format, chartPath); err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				h, tl, err := pipeline.History(cmd.Context(), e, db, args[0], chartPath != "")
				if err != nil {
					return err
				}
				if tl != nil {
					if err := chart.WriteFile(chartPath, *tl); err != nil {
						return err
					}
				}
				if format == "json" {
					return report.HistoryJSON(a.out, h)
				}
				if err := report.HistoryText(a.out, h, e.Currency.Code); err != nil {
					return err
				}
				if tl != nil {
					_, err = fmt.Fprintln(a.out, "Chart written to "+report.TerminalText(chartPath))
				}
				return err
			})
		},
	}
	cmd.Flags().StringVar(&format, "format", "text", "text or json")
	cmd.Flags().StringVar(&chartPath, "chart", "", "also draw the cost over time with each period's formula into `FILE` (.png or .svg)")
	return cmd
}
