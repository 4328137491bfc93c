package main

import (
	"fmt"
	"runtime"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) versionCommand() *cobra.Command {
	return &cobra.Command{
		Use:   "version",
		Short: "Print the version and the store schema it writes",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			_, err := fmt.Fprintf(a.out, "costdrift %s (store schema %d, %s)\n", version, sqlite.SchemaVersion(), runtime.Version())
			return err
		},
	}
}
