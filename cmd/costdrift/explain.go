package main

import (
	"fmt"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) explainCommand() *cobra.Command {
	var format, chartPath string
	cmd := &cobra.Command{
		Use:   "explain OBJECT",
		Short: "Show the evidence behind one cost object's behaviour",
		Long: `explain shows, for one cost object ("6200/WELD", or "6200" without a cost
centre), what the latest analysis stored: the class and formula with the
reason, every driver tried with its p-values before and after Holm's
correction, the model comparison on the chosen driver, the high-low estimate
beside least squares, and the diagnostics (Durbin–Watson, a robust fit,
outliers). It reads the store and fits nothing. --chart FILE draws the cost
over the periods, with the formula and any change marked, for every object;
for an object with a driver, FILE is the cost against that driver and the
cost over time goes beside it, into FILE's name with "-over-time" before the
extension. PNG or SVG by the file's extension.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := checkFormatAndChart(format, chartPath); err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				ex, charts, err := pipeline.Explain(cmd.Context(), e, db, args[0], chartPath != "")
				if err != nil {
					return err
				}
				if charts != nil {
					timelinePath := chartPath
					if charts.Scatter != nil {
						if err := chart.WriteFile(chartPath, *charts.Scatter); err != nil {
							return err
						}
						ex.Chart = chartPath
						timelinePath = overTime(chartPath)
					}
					if err := chart.WriteFile(timelinePath, *charts.Timeline); err != nil {
						return err
					}
					ex.TimeChart = timelinePath
				}
				if format == "json" {
					return report.ExplainJSON(a.out, ex)
				}
				return report.ExplainText(a.out, ex, e.Currency.Code)
			})
		},
	}
	cmd.Flags().StringVar(&format, "format", "text", "text or json")
	cmd.Flags().StringVar(&chartPath, "chart", "", "also draw the charts into `FILE` (.png or .svg): cost against the driver, and cost over time beside it")
	return cmd
}

// checkFormatAndChart checks the --format (text or json) and --chart (a
// file ending in .png or .svg, or none) of explain and history.
func checkFormatAndChart(format, chartPath string) error {
	if format != "text" && format != "json" {
		return fmt.Errorf("--format must be text or json, not %q", format)
	}
	if chartPath != "" {
		if ext := strings.ToLower(filepath.Ext(chartPath)); ext != ".png" && ext != ".svg" {
			return fmt.Errorf("--chart %s: the file must end in .png or .svg", chartPath)
		}
	}
	return nil
}

// overTime is where the cost-over-time chart goes beside the scatter in
// path: "6200.png" → "6200-over-time.png".
func overTime(path string) string {
	ext := filepath.Ext(path)
	return strings.TrimSuffix(path, ext) + "-over-time" + ext
}
