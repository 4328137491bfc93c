package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/atomicfile"
	"github.com/costdrift/costdrift/internal/config"
)

func (a *app) initCommand() *cobra.Command {
	var force bool
	cmd := &cobra.Command{
		Use:   "init",
		Short: "Write a commented starter config and the data folders it names",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.init(force)
		},
	}
	cmd.Flags().BoolVar(&force, "force", false, "overwrite an existing config file")
	return cmd
}

func (a *app) init(force bool) error {
	path := a.configPath
	dir := filepath.Dir(path)
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return fmt.Errorf("folder %s does not exist; create it first or pass another --config", dir)
	}
	// Whole or not at all, owner-only: a failed --force keeps the earlier
	// config, and a config can name where secrets are kept.
	write := atomicfile.WriteNew
	if force {
		write = atomicfile.Write
	}
	err := write(path, 0o600, func(w io.Writer) error {
		_, err := io.WriteString(w, config.Starter)
		return err
	})
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%s already exists; edit it, or pass --force to overwrite it", path)
	}
	if err != nil {
		return err
	}
	for _, d := range []string{"data/gl", "outbox"} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o700); err != nil {
			return err
		}
	}
	// The chart of accounts is optional, but the starter names it: a header
	// alone is a valid, empty chart, so the first sync does not fail on it.
	// A chart already there is the user's and stays.
	chart := filepath.Join(dir, starterChart)
	err = atomicfile.WriteNew(chart, 0o600, func(w io.Writer) error {
		_, err := io.WriteString(w, "account,name,type,group\n")
		return err
	})
	wroteChart := err == nil
	if err != nil && !errors.Is(err, fs.ErrExist) {
		return err
	}
	written := fmt.Sprintf("wrote %s and the folders %s, %s", path, filepath.Join(dir, "data", "gl"), filepath.Join(dir, "outbox"))
	if wroteChart {
		written += fmt.Sprintf(", and %s with its header only", chart)
	}
	fmt.Fprintln(a.out, written)
	fmt.Fprintln(a.out, "next, fill in the files the config names (columns as in the README, Sources):")
	width := 0
	for _, f := range starterFiles {
		width = max(width, len(filepath.Join(dir, f.path)))
	}
	for _, f := range starterFiles {
		fmt.Fprintf(a.out, "  %-*s %s\n", width, filepath.Join(dir, f.path), f.holds)
	}
	fmt.Fprintln(a.out, "then run `costdrift sync` and `costdrift analyze`")
	return nil
}

// starterChart is the starter's chart of accounts, which init writes.
const starterChart = "data/accounts.csv"

// starterFiles are the files the starter's sources read, with what each
// holds; a test keeps them the same as the starter's paths.
var starterFiles = []struct{ path, holds string }{
	{"data/gl/*.csv", "ledger lines: entry_id, line, date, account, cost_center, amount, description"},
	{"data/activity.csv", "activity per period: period, driver, value, cost_center, unit (or period, then one column per driver)"},
	{starterChart, "chart of accounts, optional: account, name, type, group"},
}
