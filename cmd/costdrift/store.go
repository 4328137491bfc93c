package main

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/money"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// env is a loaded config with the values derived from it.
type env struct {
	cfg      *config.Config
	currency money.Currency
	calendar calendar.Calendar
	// progress, when set, shows how far a long file has been read; it is
	// set only when the output is a terminal.
	progress func(display string, done, total int64)
}

func (a *app) loadConfig() (*env, error) {
	cfg, err := config.Load(a.configPath)
	if err != nil {
		return nil, err
	}
	cur, err := money.ParseCurrency(cfg.Currency)
	if err != nil {
		return nil, err // validated already; kept for safety
	}
	cal, err := calendar.New(cfg.Calendar.Period, cfg.Calendar.FiscalYearStart, cfg.Calendar.CloseAfterDays)
	if err != nil {
		return nil, fmt.Errorf("calendar: %w", err) // validated already; kept for safety
	}
	return &env{cfg: cfg, currency: cur, calendar: cal}, nil
}

// openStore opens the store for a command that reads it (budget and
// variance write their own tables too, where the store can be written);
// mustExist refuses to create an empty one. A store this user cannot
// write opens read-only.
func (a *app) openStore(ctx context.Context, e *env, mustExist bool) (*sqlite.DB, error) {
	return a.open(ctx, e, mustExist, sqlite.OpenToRead)
}

func (a *app) open(ctx context.Context, e *env, mustExist bool, open func(context.Context, string, money.Currency) (*sqlite.DB, error)) (*sqlite.DB, error) {
	path := e.cfg.StorePath()
	if mustExist && !sqlite.Exists(path) {
		return nil, fmt.Errorf("store %s does not exist yet: run `costdrift sync` first", path)
	}
	db, err := open(ctx, path, e.currency)
	if err != nil {
		return nil, err
	}
	db.Now = a.now
	if err := db.CheckCalendar(ctx, e.calendar.Kind()); err != nil {
		db.Close()
		return nil, err
	}
	return db, nil
}

// openStoreToWrite takes the store's lock, then opens it; closing the
// returned function closes the store and gives the lock up. Commands that
// write (sync, analyze, alert changes, the daemon) use it, so that none of
// them runs beside a daemon on the same store.
func (a *app) openStoreToWrite(ctx context.Context, e *env, mustExist bool) (*sqlite.DB, func(), error) {
	path := e.cfg.StorePath()
	if mustExist && !sqlite.Exists(path) {
		return nil, nil, fmt.Errorf("store %s does not exist yet: run `costdrift sync` first", path)
	}
	lock, err := lockStore(path)
	if err != nil {
		return nil, nil, err
	}
	db, err := a.open(ctx, e, mustExist, sqlite.Open)
	if err != nil {
		lock.release()
		return nil, nil, err
	}
	return db, func() { db.Close(); lock.release() }, nil
}
