package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"os/signal"
	"runtime/debug"
	"sync"
	"sync/atomic"
	"syscall"
	"time"

	"github.com/robfig/cron/v3"
	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/sqlite"
	"github.com/costdrift/costdrift/internal/web"
)

// stopTimeout bounds how long a stopping daemon waits for the running cycle
// to roll back its open transaction; a rollback takes milliseconds, so
// reaching it means something is stuck.
const stopTimeout = 30 * time.Second

func (a *app) runCommand() *cobra.Command {
	var once bool
	cmd := &cobra.Command{
		Use:   "run",
		Short: "Run as a daemon: sync, analyse, alert and mail on schedule.cron",
		Long: `run keeps costdrift going beside the ledger: on every tick of schedule.cron it
runs one cycle, the same steps as ` + "`costdrift sync`" + ` then ` + "`costdrift analyze`" + ` (which
raises alerts and mails them). It holds the store's lock while it runs, so no
other writing command or second daemon works on the same store.

SIGINT or SIGTERM: no new cycles; the running one stops, keeping what it
had committed and rolling back what it had not; the daemon exits 0. SIGHUP:
the config file is read again; a config that does not load is logged and the
running one is kept.

With http.listen set, /healthz answers 200 while the latest cycle succeeded
within two schedule intervals (503 otherwise), with status "degraded" while
alert mail is failing, and /metrics gives Prometheus metrics. Each digest
that could not be mailed is logged as a WARN line.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := pipeline.Load(a.configPath, a.now)
			if err != nil {
				return err
			}
			level := new(slog.LevelVar)
			log := newLogger(a.errw, e.Config.Log, level)
			// What the shared steps log (a skipped cost object) goes the
			// same way as the daemon's own lines.
			slog.SetDefault(log)
			logConfigWarnings(log, e)
			ctx := cmd.Context()
			db, closeStore, err := e.OpenToWrite(ctx, false)
			if err != nil {
				return err
			}
			if once {
				defer closeStore()
				_, err := cycle(ctx, e, db, log, nil)
				return err
			}
			d := &daemon{a: a, e: e, db: db, log: log, level: level, m: newMetrics()}
			err = d.run(ctx)
			closeStore() // last: the cycle and the listener are done with it
			if err == nil {
				log.Info("stopped")
			}
			return err
		},
	}
	cmd.Flags().BoolVar(&once, "once", false, "run one cycle now and exit (status 1 when it failed)")
	return cmd
}

// logConfigWarnings logs what loading the config warned about; the
// daemon's stderr is its log.
func logConfigWarnings(log *slog.Logger, e *pipeline.Env) {
	for _, w := range e.Config.Warnings {
		log.Warn("config warning", "file", e.Config.File, "warning", w)
	}
}

// newLogger writes log lines as text or JSON per log.format.
func newLogger(w io.Writer, cfg config.Log, level *slog.LevelVar) *slog.Logger {
	level.Set(logLevel(cfg.Level))
	opts := &slog.HandlerOptions{Level: level}
	if cfg.Format == "json" {
		return slog.New(slog.NewJSONHandler(w, opts))
	}
	return slog.New(slog.NewTextHandler(w, opts))
}

func logLevel(name string) slog.Level {
	switch name {
	case "debug":
		return slog.LevelDebug
	case "warn":
		return slog.LevelWarn
	case "error":
		return slog.LevelError
	}
	return slog.LevelInfo
}

// cycle runs one cycle of the pipeline; observe, when not nil, sees its
// result before the cycle's last log line is written.
func cycle(ctx context.Context, e *pipeline.Env, db *sqlite.DB, log *slog.Logger, observe func(*pipeline.CycleResult)) (costdrift.Cycle, error) {
	res, err := pipeline.RunCycle(ctx, e, db, log, observe)
	return res.Cycle, err
}

// daemon is `costdrift run` between its start and its stop.
type daemon struct {
	a     *app
	db    *sqlite.DB
	log   *slog.Logger
	level *slog.LevelVar
	m     *metrics
	busy  atomic.Bool // a cycle is running
	view  *web.Server // the web view at http.listen; nil without a listener

	mu    sync.Mutex    // guards the fields below
	e     *pipeline.Env // the config in force; a reload replaces it
	cron  *cron.Cron
	entry cron.EntryID
	plan  cron.Schedule
	last  costdrift.Cycle // the latest finished cycle
	good  time.Time       // when the latest successful cycle finished

	// Alert mail, from the store after each cycle (watchMail): deliveries
	// of open alerts whose latest attempt failed, since when they have
	// been failing, and the latest error.
	mailFailing int
	mailSince   time.Time
	mailError   string
}

// run schedules cycles until ctx ends, then stops in order: no new ticks,
// the running cycle stopped (what it had not committed rolled back), the
// listener shut; the caller closes the store.
func (d *daemon) run(ctx context.Context) error {
	plan, err := d.e.Config.Schedule.Plan()
	if err != nil {
		return err // validated with the config
	}
	d.plan = plan // before the listener, which reads it
	d.seedHealth(ctx)

	var srv *http.Server
	if addr := d.e.Config.HTTP.Listen; addr != "" {
		if err := web.CheckRemote(d.e.Config.HTTP.AllowRemote, d.e.Config.HTTP.AuthHeader, d.e.Config.HTTP.UsersFile); err != nil {
			return err
		}
		if d.view, err = newView(d.e, d.env, d.db, d.log); err != nil {
			return err
		}
		ln, err := net.Listen("tcp", addr)
		if err != nil {
			return fmt.Errorf("http.listen %s: %w", addr, err)
		}
		srv = &http.Server{Handler: d.handler(), ReadHeaderTimeout: 5 * time.Second}
		go func() {
			if err := srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
				d.log.Error("http listener stopped", "error", err)
			}
		}()
		d.log.Info("http listening", "address", ln.Addr().String())
	}

	hup := make(chan os.Signal, 1)
	signal.Notify(hup, syscall.SIGHUP)
	defer signal.Stop(hup)

	d.mu.Lock()
	d.cron = cron.New(cron.WithParser(config.CronParser))
	d.entry = d.cron.Schedule(plan, cron.FuncJob(func() { d.tick(ctx) }))
	d.cron.Start()
	d.mu.Unlock()
	d.log.Info("daemon started", "pid", os.Getpid(), "config", d.a.configPath, "store", d.e.Config.StorePath(),
		"schedule", d.e.Config.Schedule.Cron, "timezone", d.e.Config.Schedule.Timezone, "next", plan.Next(time.Now()).UTC().Format(time.RFC3339))

loop:
	for {
		select {
		case <-ctx.Done():
			break loop
		case <-hup:
			d.reload(ctx)
		}
	}

	if d.busy.Load() {
		d.log.Info("stopping: no new cycles; the running cycle stops at once, keeping what it has committed")
	} else {
		d.log.Info("stopping: no new cycles")
	}
	stopped := d.cron.Stop()
	var stuck error
	select {
	case <-stopped.Done():
	case <-time.After(stopTimeout):
		stuck = fmt.Errorf("the running cycle did not stop within %s", stopTimeout)
		d.log.Error("stop timed out", "error", stuck)
	}
	if srv != nil {
		shut, cancel := context.WithTimeout(context.WithoutCancel(ctx), 5*time.Second)
		defer cancel()
		srv.Shutdown(shut)
	}
	return stuck
}

// tick runs a cycle unless the previous one still runs.
func (d *daemon) tick(ctx context.Context) {
	if ctx.Err() != nil {
		return
	}
	if !d.busy.CompareAndSwap(false, true) {
		d.m.ticksSkipped.Inc()
		d.log.Warn("tick skipped: the previous cycle is still running")
		return
	}
	defer d.busy.Store(false)
	d.mu.Lock()
	e := d.e
	d.mu.Unlock()
	// The metrics and the health the daemon serves, the state of the
	// alert mail included, are up to date before the cycle's last log
	// line: whoever reads that line and then asks /healthz or /metrics
	// sees this cycle.
	c, _ := cycle(ctx, e, d.db, d.log, func(r *pipeline.CycleResult) {
		d.m.observe(r)
		d.mu.Lock()
		d.last = r.Cycle
		if r.Err == nil {
			d.good = r.Cycle.FinishedAt
		}
		d.mu.Unlock()
		d.watchMail(ctx)
	})
	if c.ID == 0 {
		return // not even started; logged
	}
	// Between cycles the daemon holds as little as it can: SQLite's page
	// caches, and the Go memory the cycle freed, go back to the system.
	if err := d.db.ReleaseMemory(ctx); err != nil && ctx.Err() == nil {
		d.log.Warn("store memory not released", "error", err)
	}
	debug.FreeOSMemory()
}

// seedHealth takes the latest cycles from the store, so that a restarted
// daemon is healthy as long as its predecessor's latest cycle is recent,
// and the state of the alert mail, so that it is degraded while the mail
// its predecessor could not send waits for a retry.
func (d *daemon) seedHealth(ctx context.Context) {
	d.watchMail(ctx)
	cycles, err := d.db.Cycles(ctx, 50)
	if err != nil {
		d.log.Warn("cycle history unreadable", "error", err)
		return
	}
	for _, c := range cycles {
		if c.Status == "running" {
			continue
		}
		if d.last.ID == 0 {
			d.last = c
		}
		if c.Status == "ok" {
			d.good = c.FinishedAt
			d.m.lastSuccess.Set(float64(c.FinishedAt.Unix()))
			break
		}
	}
}

// watchMail reads from the store whether alert mail is failing: a delivery
// (alert and recipient) of an open alert whose latest attempt failed. The
// store, not the latest cycle, decides, because a failed delivery waits
// for its backoff through cycles that try nothing, and is over only when a
// retry succeeds or its alert is resolved. Failing since is the earliest
// failed attempt on record when the failures begin (each attempt's time is
// its next attempt less its backoff), and stays until they end.
func (d *daemon) watchMail(ctx context.Context) {
	f, err := pipeline.FailingMail(ctx, d.db)
	if err != nil {
		if ctx.Err() == nil {
			d.log.Warn("mail delivery state unreadable", "error", err)
		}
		return
	}
	d.mu.Lock()
	defer d.mu.Unlock()
	if f.Failing == 0 && d.mailFailing > 0 {
		d.log.Info("mail delivery working again", "failing_since", d.mailSince.UTC().Format(time.RFC3339))
	}
	switch {
	case f.Failing == 0:
		d.mailSince = time.Time{}
	case d.mailSince.IsZero():
		d.mailSince = f.Earliest
	}
	d.mailFailing, d.mailError = f.Failing, f.LastError
}

// reload reads the config file again. A config that does not load, or one
// that would move the daemon to another store, currency or calendar, is
// refused and the running one kept.
func (d *daemon) reload(ctx context.Context) {
	keep := func(why string, err error) {
		d.log.Error("config reload failed; keeping the running config", "file", d.a.configPath, "reason", why, "error", err)
	}
	e, err := pipeline.Load(d.a.configPath, d.a.now)
	if err != nil {
		keep("the new config does not load", err)
		return
	}
	logConfigWarnings(d.log, e)
	d.mu.Lock()
	defer d.mu.Unlock()
	old := d.e
	switch {
	case e.Config.StorePath() != old.Config.StorePath():
		keep("store changed", fmt.Errorf("store %s -> %s needs a restart", old.Config.StorePath(), e.Config.StorePath()))
		return
	case e.Currency.Code != old.Currency.Code:
		keep("currency changed", fmt.Errorf("currency %s -> %s needs a restart", old.Currency.Code, e.Currency.Code))
		return
	}
	if err := d.db.CheckCalendar(ctx, e.Calendar.Kind()); err != nil {
		keep("calendar does not match the store", err)
		return
	}
	plan, err := e.Config.Schedule.Plan()
	if err != nil {
		keep("schedule", err)
		return
	}
	if e.Config.Schedule != old.Config.Schedule {
		d.cron.Remove(d.entry)
		d.entry = d.cron.Schedule(plan, cron.FuncJob(func() { d.tick(ctx) }))
		d.plan = plan
	}
	if e.Config.HTTP != old.Config.HTTP || e.Config.Log.Format != old.Config.Log.Format {
		d.log.Warn("http and log.format changes take effect at the next start")
	}
	d.level.Set(logLevel(e.Config.Log.Level))
	d.e = e
	d.log.Info("config reloaded", "file", d.a.configPath, "schedule", e.Config.Schedule.Cron, "timezone", e.Config.Schedule.Timezone,
		"sources", len(e.Config.Sources.Ledger)+len(e.Config.Sources.Activity)+len(e.Config.Sources.Accounts))
}
