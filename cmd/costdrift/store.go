package main

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// loadConfig loads the config for a one-shot command and shows what the
// loading warns about (a COSTDRIFT_ variable that sets no key) on stderr,
// beside the output rather than in it.
func (a *app) loadConfig() (*pipeline.Env, error) {
	e, err := pipeline.Load(a.configPath, a.now)
	if err != nil {
		return nil, err
	}
	for _, w := range e.Config.Warnings {
		fmt.Fprintln(a.errw, "costdrift: warning: "+report.TerminalText(w))
	}
	return e, nil
}

// withStore opens the existing store for one command and closes it after.
// It takes no lock: the commands that only read, and budget and variance,
// which write only their own tables, work beside a running daemon.
func (a *app) withStore(ctx context.Context, fn func(*pipeline.Env, *sqlite.DB) error) error {
	e, err := a.loadConfig()
	if err != nil {
		return err
	}
	db, err := e.OpenToRead(ctx, true)
	if err != nil {
		return err
	}
	defer db.Close()
	return fn(e, db)
}

// withStoreToWrite is withStore for a command that changes the store: it
// holds the store's lock while it runs.
func (a *app) withStoreToWrite(ctx context.Context, fn func(*pipeline.Env, *sqlite.DB) error) error {
	e, err := a.loadConfig()
	if err != nil {
		return err
	}
	db, closeStore, err := e.OpenToWrite(ctx, true)
	if err != nil {
		return err
	}
	defer closeStore()
	return fn(e, db)
}
