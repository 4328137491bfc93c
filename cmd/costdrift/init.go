package main

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

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
	flags := os.O_WRONLY | os.O_CREATE | os.O_EXCL
	if force {
		flags = os.O_WRONLY | os.O_CREATE | os.O_TRUNC
	}
	f, err := os.OpenFile(path, flags, 0o600)
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%s already exists; edit it, or pass --force to overwrite it", path)
	}
	if err != nil {
		return err
	}
	if _, err := f.WriteString(config.Starter); err != nil {
		f.Close()
		return err
	}
	if err := f.Close(); err != nil {
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
