package pipeline

import (
	"context"
	"fmt"
	"os"
	"time"

	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// Env is a loaded config with the values derived from it, and the clock.
type Env struct {
	Config   *config.Config
	Currency money.Currency
	Calendar calendar.Calendar
	// Now is the clock; tests set it.
	Now func() time.Time
	// Progress, when set, shows how far a long file has been read (a
	// terminal sets it; a log would only be noise).
	Progress func(display string, done, total int64)
}

// Load reads and validates the config file at path.
func Load(path string, now func() time.Time) (*Env, error) {
	cfg, err := config.Load(path, Kinds())
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
	return &Env{Config: cfg, Currency: cur, Calendar: cal, Now: now}, nil
}

// OpenToRead opens the store for a command that reads it (budget and
// variance write their own tables too, where the store can be written);
// mustExist refuses to create an empty one. A store this user cannot write
// opens read-only. It takes no lock, so it works beside a running daemon.
func (e *Env) OpenToRead(ctx context.Context, mustExist bool) (*sqlite.DB, error) {
	return e.open(ctx, mustExist, sqlite.OpenToRead)
}

// OpenToWrite takes the store's lock, then opens it; the returned function
// closes the store and gives the lock up. Everything that writes (sync,
// analyze, alert changes, the daemon) uses it, so that none of them runs
// beside a daemon on the same store.
func (e *Env) OpenToWrite(ctx context.Context, mustExist bool) (*sqlite.DB, func(), error) {
	path := e.Config.StorePath()
	if mustExist && !sqlite.Exists(path) {
		return nil, nil, fmt.Errorf("store %s does not exist yet: run `costdrift sync` first", path)
	}
	lock, err := lockStore(path)
	if err != nil {
		return nil, nil, err
	}
	db, err := e.open(ctx, mustExist, sqlite.Open)
	if err != nil {
		lock.release()
		return nil, nil, err
	}
	return db, func() { db.Close(); lock.release() }, nil
}

func (e *Env) open(ctx context.Context, mustExist bool, open func(context.Context, string, money.Currency) (*sqlite.DB, error)) (*sqlite.DB, error) {
	path := e.Config.StorePath()
	if mustExist && !sqlite.Exists(path) {
		return nil, fmt.Errorf("store %s does not exist yet: run `costdrift sync` first", path)
	}
	db, err := open(ctx, path, e.Currency)
	if err != nil {
		return nil, err
	}
	db.Now = e.Now
	if err := db.CheckCalendar(ctx, e.Calendar.Kind()); err != nil {
		db.Close()
		return nil, err
	}
	return db, nil
}

// sources lists the configured sources with their roles, in the order a
// sync reads them: the chart of accounts, the activity, then the ledger.
func (e *Env) sources() []roleSource {
	var out []roleSource
	for _, s := range e.Config.Sources.Accounts {
		out = append(out, roleSource{costdrift.RoleAccounts, s})
	}
	for _, s := range e.Config.Sources.Activity {
		out = append(out, roleSource{costdrift.RoleActivity, s})
	}
	for _, s := range e.Config.Sources.Ledger {
		out = append(out, roleSource{costdrift.RoleLedger, s})
	}
	return out
}

// roleSource is a configured source with the role it fills.
type roleSource struct {
	role costdrift.Role
	src  config.Source
}

// progress is how a reader reports how far it has read a file, for a file
// large enough to show it while Progress is set; nil otherwise.
func (e *Env) progress(path, display string) func(done int64) {
	if e.Progress == nil {
		return nil
	}
	st, err := os.Stat(path)
	if err != nil || st.Size() <= progressMinBytes {
		return nil
	}
	size := st.Size()
	return func(done int64) { e.Progress(display, done, size) }
}
