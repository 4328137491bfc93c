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
	fmt.Fprintf(a.out, "wrote %s and the folders %s, %s\n", path, filepath.Join(dir, "data", "gl"), filepath.Join(dir, "outbox"))
	fmt.Fprintln(a.out, "next: put ledger CSV files in data/gl/, activity in data/activity.csv, then run `costdrift sync` and `costdrift analyze`")
	return nil
}
