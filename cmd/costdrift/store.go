package main

import (
	"context"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) loadConfig() (*pipeline.Env, error) {
	return pipeline.Load(a.configPath, a.now)
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
