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
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"time"

	"github.com/robfig/cron/v3"
	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/mail"
	"github.com/costdrift/costdrift/internal/sqlite"
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
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			level := new(slog.LevelVar)
			log := newLogger(a.errw, e.cfg.Log, level)
			// What the shared steps log (a skipped cost object) goes the
			// same way as the daemon's own lines.
			slog.SetDefault(log)
			ctx := cmd.Context()
			db, closeStore, err := a.openStoreToWrite(ctx, e, false)
			if err != nil {
				return err
			}
			if once {
				defer closeStore()
				_, err := a.cycle(ctx, e, db, log, nil)
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

// cycle is one scheduled pass: every source synced, then the analysis with
// its alerts and mail, exactly as `costdrift sync` and `costdrift analyze`
// do it. A failing source fails its part and the analysis still runs on
// what the store holds; the cycle is recorded in the store's cycles table.
// m may be nil (run --once exports no metrics).
func (a *app) cycle(ctx context.Context, e *env, db *sqlite.DB, log *slog.Logger, m *metrics) (costdrift.Cycle, error) {
	c := costdrift.Cycle{Stages: map[string]time.Duration{}}
	if err := db.BeginCycle(ctx, &c); err != nil {
		log.Error("cycle could not start", "error", err)
		return c, err
	}
	start := time.Now()
	log.Info("cycle started", "cycle", c.ID)
	var failed []string
	stage := "sync" // the stage under way, for a stop's message

	t := time.Now()
	runs, err := syncAll(ctx, e, db, io.Discard)
	c.Stages["sync"] = time.Since(t)
	var loaded, rejected, read, files int
	for _, r := range runs {
		read += r.RowsRead
		loaded += r.RowsLoaded
		rejected += r.RowsRejected
		files += r.Files
		lvl := slog.LevelInfo
		if r.Status != "ok" {
			lvl = slog.LevelWarn
		}
		log.Log(ctx, lvl, "source synced", "cycle", c.ID, "source", r.Source, "role", string(r.Role), "kind", r.Kind,
			"status", r.Status, "files", r.Files, "files_skipped", r.FilesSkipped, "rows_read", r.RowsRead,
			"rows_loaded", r.RowsLoaded, "rows_rejected", r.RowsRejected, "error", r.Error)
		for _, w := range r.Warnings {
			log.Warn("source warning", "cycle", c.ID, "source", r.Source, "warning", w)
		}
	}
	if m != nil {
		m.rowsSynced.Add(float64(loaded))
		m.rowsRejected.Add(float64(rejected))
		m.stageSeconds.WithLabelValues("sync").Observe(c.Stages["sync"].Seconds())
	}
	syncStatus, syncFailure := "ok", ""
	if err != nil {
		syncStatus, syncFailure = "failed", "sync: "+oneLineError(err)
		failed = append(failed, syncFailure)
	}
	stored := 0
	for _, r := range runs {
		if r.Status == "ok" {
			stored++
		}
	}
	log.Info("stage finished", "cycle", c.ID, "stage", "sync", "status", syncStatus, "sources", len(runs),
		"files", files, "rows_read", read, "rows_loaded", loaded, "rows_rejected", rejected,
		"duration", c.Stages["sync"].Round(time.Millisecond))

	analysed := false
	mailed := &deliveryTally{}
	if ctx.Err() == nil {
		stage = "analyze"
		t = time.Now()
		var actx context.Context
		actx, mailed = withDeliveryTally(ctx)
		run, err := a.analyzeAll(actx, e, db, io.Discard, false)
		analysed = err == nil
		c.Stages["analyze"] = time.Since(t)
		// One line per digest not delivered, so that a mail server that is
		// down shows in the log and not only in the store.
		for _, f := range mailed.failures {
			log.Warn("mail delivery failed", "cycle", c.ID, "recipient", f.recipient, "alerts", f.alerts, "error", f.err)
		}
		if m != nil {
			m.stageSeconds.WithLabelValues("analyze").Observe(c.Stages["analyze"].Seconds())
			m.mailFailures.Add(float64(len(mailed.failures)))
		}
		attrs := []any{"cycle", c.ID, "stage", "analyze", "status", "ok", "duration", c.Stages["analyze"].Round(time.Millisecond)}
		if err != nil {
			failed = append(failed, oneLineError(err))
			attrs[5] = "failed"
			attrs = append(attrs, "error", oneLineError(err))
		} else {
			attrs = append(attrs, "objects", run.Objects, "unchanged", run.Skipped, "window_to", run.WindowTo)
		}
		if ctx.Err() == nil {
			attrs = append(attrs, alertAttrs(ctx, db, m)...)
		}
		log.Info("stage finished", attrs...)
	}

	var cause error
	switch {
	case ctx.Err() != nil && !analysed:
		// Each source batch and the analysis commit on their own: say what
		// the cycle had stored when the stop came, not more or less.
		var why string
		switch {
		case stage == "sync":
			why = fmt.Sprintf("interrupted: the daemon was stopped during the sync; %d of %d source(s) were synced, what the sync had not committed was rolled back and is synced at the next cycle, and no analysis ran",
				stored, len(e.cfg.Sources.Accounts)+len(e.cfg.Sources.Activity)+len(e.cfg.Sources.Ledger))
		case mailed.started:
			why = "interrupted: the daemon was stopped while the alerts were mailed; the cycle's sync, analysis and alerts are stored, and the digests not sent go out at the next cycle"
		default:
			why = "interrupted: the daemon was stopped during the analysis; the cycle's sync is stored, and what the analysis had not committed was rolled back and is redone at the next cycle"
		}
		if stage != "sync" && syncFailure != "" {
			why += "; " + syncFailure
		}
		cause = errors.New(why)
	case len(failed) > 0:
		cause = errors.New(strings.Join(failed, "; "))
	}
	// The cycle's own context may be cancelled by now; its record is still
	// written, briefly.
	rec, cancel := context.WithTimeout(context.WithoutCancel(ctx), 5*time.Second)
	defer cancel()
	if err := db.FinishCycle(rec, &c, cause); err != nil {
		log.Error("cycle not recorded", "cycle", c.ID, "error", err)
	}
	total := time.Since(start)
	if m != nil {
		m.stageSeconds.WithLabelValues("cycle").Observe(total.Seconds())
		m.cycles.WithLabelValues(c.Status).Inc()
		if cause == nil {
			m.lastSuccess.Set(float64(time.Now().Unix()))
		}
	}
	summary := []any{"cycle", c.ID, "status", c.Status, "duration", total.Round(time.Millisecond),
		"mail_sent", mailed.sent, "mail_failed", len(mailed.failures)}
	if cause != nil {
		log.Error("cycle finished", append(summary, "error", cause.Error())...)
		return c, fmt.Errorf("cycle %d failed: %w", c.ID, cause)
	}
	log.Info("cycle finished", summary...)
	return c, nil
}

// alertAttrs counts the open alerts by kind and the failing deliveries,
// for the cycle's log line and the metrics.
func alertAttrs(ctx context.Context, db *sqlite.DB, m *metrics) []any {
	open, err := db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	if err != nil {
		return []any{"alerts_error", err.Error()}
	}
	byKind := map[costdrift.AlertKind]int{}
	for _, al := range open {
		byKind[al.Kind]++
	}
	failing := 0
	if past, err := db.Deliveries(ctx, ""); err == nil {
		for _, byRecipient := range past {
			for _, d := range byRecipient {
				if d.Status == sqlite.DeliveryFailed {
					failing++
				}
			}
		}
	}
	if m != nil {
		m.alertsOpen.Reset()
		for _, k := range costdrift.AlertKinds() {
			m.alertsOpen.WithLabelValues(string(k)).Set(float64(byKind[k]))
		}
		m.deliveryFailing.Set(float64(failing))
	}
	return []any{"alerts_open", len(open), "deliveries_failing", failing}
}

// daemon is `costdrift run` between its start and its stop.
type daemon struct {
	a     *app
	db    *sqlite.DB
	log   *slog.Logger
	level *slog.LevelVar
	m     *metrics
	busy  atomic.Bool // a cycle is running

	mu    sync.Mutex // guards the fields below
	e     *env       // the config in force; a reload replaces it
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
	plan, err := d.e.cfg.Schedule.Plan()
	if err != nil {
		return err // validated with the config
	}
	d.plan = plan // before the listener, which reads it
	d.seedHealth(ctx)

	var srv *http.Server
	if addr := d.e.cfg.HTTP.Listen; addr != "" {
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
	d.log.Info("daemon started", "pid", os.Getpid(), "config", d.a.configPath, "store", d.e.cfg.StorePath(),
		"schedule", d.e.cfg.Schedule.Cron, "timezone", d.e.cfg.Schedule.Timezone, "next", plan.Next(time.Now()).UTC().Format(time.RFC3339))

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
	c, err := d.a.cycle(ctx, e, d.db, d.log, d.m)
	if c.ID == 0 {
		return // not even started; logged
	}
	d.mu.Lock()
	d.last = c
	if err == nil {
		d.good = c.FinishedAt
	}
	d.mu.Unlock()
	d.watchMail(ctx)
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
	open, err := d.db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	var past map[int64]map[string]sqlite.Delivery
	if err == nil {
		past, err = d.db.Deliveries(ctx, "")
	}
	if err != nil {
		if ctx.Err() == nil {
			d.log.Warn("mail delivery state unreadable", "error", err)
		}
		return
	}
	failing := 0
	var earliest, latest time.Time
	var latestError string
	for _, al := range open {
		for _, dl := range past[al.ID] {
			if dl.Status != sqlite.DeliveryFailed {
				continue
			}
			failing++
			at := dl.NextAttempt.Add(-mail.Backoff(dl.Attempts))
			if earliest.IsZero() || at.Before(earliest) {
				earliest = at
			}
			if !at.Before(latest) {
				latest, latestError = at, dl.LastError
			}
		}
	}
	d.mu.Lock()
	defer d.mu.Unlock()
	if failing == 0 && d.mailFailing > 0 {
		d.log.Info("mail delivery working again", "failing_since", d.mailSince.UTC().Format(time.RFC3339))
	}
	switch {
	case failing == 0:
		d.mailSince = time.Time{}
	case d.mailSince.IsZero():
		d.mailSince = earliest
	}
	d.mailFailing, d.mailError = failing, latestError
}

// reload reads the config file again. A config that does not load, or one
// that would move the daemon to another store, currency or calendar, is
// refused and the running one kept.
func (d *daemon) reload(ctx context.Context) {
	keep := func(why string, err error) {
		d.log.Error("config reload failed; keeping the running config", "file", d.a.configPath, "reason", why, "error", err)
	}
	e, err := d.a.loadConfig()
	if err != nil {
		keep("the new config does not load", err)
		return
	}
	d.mu.Lock()
	defer d.mu.Unlock()
	old := d.e
	switch {
	case e.cfg.StorePath() != old.cfg.StorePath():
		keep("store changed", fmt.Errorf("store %s -> %s needs a restart", old.cfg.StorePath(), e.cfg.StorePath()))
		return
	case e.currency.Code != old.currency.Code:
		keep("currency changed", fmt.Errorf("currency %s -> %s needs a restart", old.currency.Code, e.currency.Code))
		return
	}
	if err := d.db.CheckCalendar(ctx, e.calendar.Kind()); err != nil {
		keep("calendar does not match the store", err)
		return
	}
	plan, err := e.cfg.Schedule.Plan()
	if err != nil {
		keep("schedule", err)
		return
	}
	if e.cfg.Schedule != old.cfg.Schedule {
		d.cron.Remove(d.entry)
		d.entry = d.cron.Schedule(plan, cron.FuncJob(func() { d.tick(ctx) }))
		d.plan = plan
	}
	if e.cfg.HTTP != old.cfg.HTTP || e.cfg.Log.Format != old.cfg.Log.Format {
		d.log.Warn("http and log.format changes take effect at the next start")
	}
	d.level.Set(logLevel(e.cfg.Log.Level))
	d.e = e
	d.log.Info("config reloaded", "file", d.a.configPath, "schedule", e.cfg.Schedule.Cron, "timezone", e.cfg.Schedule.Timezone,
		"sources", len(e.cfg.Sources.Ledger)+len(e.cfg.Sources.Activity)+len(e.cfg.Sources.Accounts))
}
