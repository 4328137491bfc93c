package main

import (
	"bufio"
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/demo"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/robfig/cron/v3"
)

// logBuffer collects a child's log lines while the test reads them.
type logBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *logBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *logBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// count of lines holding s.
func (l *logBuffer) count(s string) int { return strings.Count(l.String(), s) }

// daemonConfig rewrites the starter config of setup to tick every second
// and, with listen set, to serve /healthz and /metrics there.
func daemonConfig(t *testing.T, cfg, listen string) {
	t.Helper()
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	s := strings.Replace(string(text), `cron: "0 6 * * *"`, `cron: "@every 1s"`, 1)
	if listen != "" {
		s = strings.Replace(s, `listen: ""`, fmt.Sprintf("listen: %q", listen), 1)
	}
	if s == string(text) {
		t.Fatal("starter config has no schedule.cron line to rewrite")
	}
	writeFile(t, cfg, s)
}

// freePort is a loopback address nothing listens on at the moment.
func freePort(t *testing.T) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	addr := ln.Addr().String()
	ln.Close()
	return addr
}

// command runs the test binary as costdrift with args.
func command(args ...string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], args...)
	cmd.Env = append(os.Environ(), "COSTDRIFT_TEST_AS_COMMAND=1")
	return cmd
}

// startDaemon starts `costdrift run` and waits for it to say it started.
func startDaemon(t *testing.T, cfg string) (*exec.Cmd, *logBuffer) {
	t.Helper()
	cmd, logs := startCommand(t, "--config", cfg, "run")
	waitFor(t, 5*time.Second, "the daemon to start", func() bool { return logs.count("daemon started") == 1 }, logs)
	return cmd, logs
}

// startCommand starts the program with args, its output kept in the
// returned buffer; it is killed at the end of the test if still running.
func startCommand(t *testing.T, args ...string) (*exec.Cmd, *logBuffer) {
	t.Helper()
	logs := &logBuffer{}
	cmd := command(args...)
	cmd.Stdout, cmd.Stderr = logs, logs
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		if cmd.ProcessState == nil {
			cmd.Process.Kill()
			cmd.Wait()
		}
	})
	return cmd, logs
}

func waitFor(t *testing.T, limit time.Duration, what string, cond func() bool, logs *logBuffer) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("waited %s for %s\nlog:\n%s", limit, what, logs)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// stop sends SIGTERM and requires exit status 0 within the daemon's bound.
func stop(t *testing.T, cmd *exec.Cmd, logs *logBuffer) {
	t.Helper()
	if err := cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	select {
	case err := <-done:
		if err != nil {
			t.Fatalf("daemon exited with %v after SIGTERM, want status 0\nlog:\n%s", err, logs)
		}
	case <-time.After(10 * time.Second):
		t.Fatalf("daemon still running 10 s after SIGTERM\nlog:\n%s", logs)
	}
}

func get(t *testing.T, url string) (int, string) {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return resp.StatusCode, string(body)
}

// One daemon ticking every second, watched from outside as an operator
// would: files dropped into the source folder reach the store within two
// ticks; a second daemon and a sync are refused with the holder's pid;
// /healthz and /metrics answer; SIGHUP with a broken config keeps the old
// one; SIGTERM exits 0.
func TestDaemon(t *testing.T) {
	cfg, dir := setup(t, "")
	addr := freePort(t)
	daemonConfig(t, cfg, addr)
	store := filepath.Join(dir, "costdrift.db")
	d, logs := startDaemon(t, cfg)
	pid := fmt.Sprint(d.Process.Pid)

	t.Run("healthz before any cycle", func(t *testing.T) {
		// A fresh store has no cycle yet: unhealthy, and the body says why.
		code, body := get(t, "http://"+addr+"/healthz")
		if code != http.StatusServiceUnavailable || !strings.Contains(body, `"reason":"no cycle has finished yet"`) {
			t.Errorf("GET /healthz before a cycle: %d %s", code, body)
		}
	})

	t.Run("dropped files appear within two ticks", func(t *testing.T) {
		text, _ := killPart(0, 0, 50)
		writeFile(t, filepath.Join(dir, "data", "gl", "drop-1.csv"), text)
		dropped := time.Now()
		waitFor(t, 2*time.Second+500*time.Millisecond, "drop-1.csv in the store", func() bool {
			return count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE entry_id LIKE 'F0-%'") == 50
		}, logs)
		t.Logf("stored %v after the drop", time.Since(dropped).Round(time.Millisecond))
		if n := count(t, store, "SELECT COUNT(*) FROM source_files WHERE path LIKE '%drop-1.csv'"); n != 1 {
			t.Errorf("drop-1.csv recorded %d times in source_files, want 1", n)
		}
	})

	t.Run("healthz and metrics", func(t *testing.T) {
		// The first cycle may have run before the file was dropped and
		// failed for want of a ledger: wait for one that succeeded.
		okCycle := regexp.MustCompile(`msg="cycle finished" cycle=\d+ status=ok`)
		waitFor(t, 3*time.Second, "a successful cycle", func() bool { return okCycle.MatchString(logs.String()) }, logs)
		code, body := get(t, "http://"+addr+"/healthz")
		var h healthJSON
		if err := json.Unmarshal([]byte(body), &h); err != nil {
			t.Fatalf("/healthz body %q: %v", body, err)
		}
		// @every 1s: two intervals are 2 s.
		if code != http.StatusOK || h.Status != "ok" || h.LastStatus != "ok" || h.MaxAge != "2s" {
			t.Errorf("GET /healthz: %d %+v\nlog:\n%s", code, h, logs)
		}
		code, body = get(t, "http://"+addr+"/metrics")
		if code != http.StatusOK {
			t.Fatalf("GET /metrics: %d", code)
		}
		for _, want := range []string{"costdrift_rows_synced_total ", `costdrift_stage_duration_seconds_count{stage="sync"}`,
			`costdrift_alerts_open{kind="source_failure"}`, "costdrift_deliveries_failing 0", "go_goroutines ", "process_open_fds "} {
			if !strings.Contains(body, want) {
				t.Errorf("/metrics lacks %q", want)
			}
		}
		var synced, okCycles float64
		for _, line := range strings.Split(body, "\n") {
			fmt.Sscanf(line, "costdrift_rows_synced_total %g", &synced)
			fmt.Sscanf(line, `costdrift_cycles_total{status="ok"} %g`, &okCycles)
		}
		// The 50 dropped rows and the starter's activity and account rows.
		if synced < 50 || okCycles < 1 {
			t.Errorf("/metrics: rows synced %g (want >= 50), ok cycles %g (want >= 1)", synced, okCycles)
		}
	})

	t.Run("web view beside them", func(t *testing.T) {
		code, body := get(t, "http://"+addr+"/objects")
		if code != http.StatusOK || !strings.Contains(body, "<h1>Objects</h1>") {
			t.Errorf("GET /objects from the daemon: %d\n%s", code, body)
		}
	})

	t.Run("second daemon refused", func(t *testing.T) {
		for _, args := range [][]string{{"run"}, {"sync"}, {"run", "--once"}} {
			out, err := command(append([]string{"--config", cfg}, args...)...).CombinedOutput()
			want := "is in use by process " + pid + " "
			if err == nil || !strings.Contains(string(out), want) {
				t.Errorf("costdrift %s beside the daemon: %v\n%s\nwant a refusal containing %q", strings.Join(args, " "), err, out, want)
			}
		}
	})

	t.Run("budget and status beside the daemon", func(t *testing.T) {
		// They take no lock: budget writes only its own tables.
		plan := filepath.Join(dir, "plan.csv")
		writeFile(t, plan, "period,driver,value\n2026-02,frames_built,120\n")
		for _, args := range [][]string{{"budget", "--plan", plan, "--format", "json", "--save", "plan"}, {"status"}} {
			out, err := command(append([]string{"--config", cfg}, args...)...).CombinedOutput()
			if err != nil {
				t.Errorf("costdrift %s beside the daemon: %v\n%s", strings.Join(args, " "), err, out)
			}
		}
		if n := count(t, store, "SELECT COUNT(*) FROM plans WHERE plan = 'plan'"); n != 1 {
			t.Errorf("the plan read beside the daemon is stored %d times, want once", n)
		}
	})

	t.Run("SIGHUP with a broken config keeps the old one", func(t *testing.T) {
		good, err := os.ReadFile(cfg)
		if err != nil {
			t.Fatal(err)
		}
		writeFile(t, cfg, strings.Replace(string(good), `cron: "@every 1s"`, `cron: "every second"`, 1))
		if err := d.Process.Signal(syscall.SIGHUP); err != nil {
			t.Fatal(err)
		}
		waitFor(t, 3*time.Second, "the reload to be refused", func() bool {
			return logs.count("config reload failed; keeping the running config") == 1
		}, logs)
		if !strings.Contains(logs.String(), `schedule.cron: \"every second\" is not a cron expression`) {
			t.Errorf("the refusal does not say why:\n%s", logs)
		}
		// Still ticking on the old schedule: two more cycles within about two seconds.
		before := logs.count(`msg="cycle finished"`)
		waitFor(t, 3*time.Second, "two more cycles", func() bool { return logs.count(`msg="cycle finished"`) >= before+2 }, logs)
		writeFile(t, cfg, string(good))
	})

	t.Run("SIGTERM exits 0", func(t *testing.T) {
		stop(t, d, logs)
		if n := count(t, store, "SELECT COUNT(*) FROM cycles WHERE status = 'running'"); n != 0 {
			t.Errorf("%d cycles still claim to be running", n)
		}
		// The lock went with the daemon: a sync works again.
		mustRun(t, "--config", cfg, "sync")
	})
}

// SIGTERM in the middle of a large sync: the daemon exits 0, every file
// is stored wholly or not at all, and the cycle and the sync run are
// recorded as interrupted rather than left running.
func TestDaemonStopsDuringLargeSync(t *testing.T) {
	cfg, dir := setup(t, "")
	daemonConfig(t, cfg, "")
	store := filepath.Join(dir, "costdrift.db")
	const files, perFile = 6, 40000
	sums := map[int]int64{}
	for f := 0; f < files; f++ {
		text, sum := killPart(f, 0, perFile)
		sums[f] = sum
		writeFile(t, filepath.Join(dir, "data", "gl", fmt.Sprintf("part-%d.csv", f)), text)
	}
	d, logs := startDaemon(t, cfg)
	waitFor(t, 3*time.Second, "the first cycle", func() bool { return logs.count(`msg="cycle started"`) == 1 }, logs)
	// The sync of 240 000 rows takes most of a second here; stop it a
	// little way in.
	time.Sleep(150 * time.Millisecond)
	stop(t, d, logs)

	stored := 0
	for f := 0; f < files; f++ {
		n := count(t, store, fmt.Sprintf("SELECT COUNT(*) FROM gl_lines WHERE entry_id LIKE 'F%d-%%'", f))
		known := count(t, store, fmt.Sprintf("SELECT COUNT(*) FROM source_files WHERE path LIKE '%%part-%d.csv'", f))
		if (n != 0 && n != perFile) || (known == 1) != (n == perFile) {
			t.Fatalf("part-%d.csv has %d of %d rows stored, fingerprint recorded %d times", f, n, perFile, known)
		}
		if n == perFile {
			stored++
			if sum := int64(count(t, store, fmt.Sprintf("SELECT SUM(amount_minor) FROM gl_lines WHERE entry_id LIKE 'F%d-%%'", f))); sum != sums[f] {
				t.Errorf("part-%d.csv total %d, want %d", f, sum, sums[f])
			}
		}
	}
	if stored == files {
		t.Fatalf("all %d files were stored before SIGTERM: the test proves nothing; stop earlier\nlog:\n%s", files, logs)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM cycles WHERE status = 'failed' AND error LIKE 'interrupted:%'"); n != 1 {
		t.Errorf("%d cycles recorded as interrupted, want 1\nlog:\n%s", n, logs)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE status = 'running'"); n != 0 {
		t.Errorf("%d sync runs still claim to be running", n)
	}
	t.Logf("%d of %d files stored when SIGTERM arrived", stored, files)

	// The next run completes what was cut short.
	mustRun(t, "--config", cfg, "run", "--once")
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != files*perFile {
		t.Errorf("after run --once: %d rows, want %d", n, files*perFile)
	}
}

// run --once runs one cycle and reports failure through its exit status.
func TestRunOnce(t *testing.T) {
	cfg, dir := setup(t, "entry_id,line,date,account,cost_center,amount,description\nE1,1,2026-01-05,6100,,1200.00,rent\n")
	out := mustRun(t, "--config", cfg, "run", "--once")
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 1 {
		t.Errorf("after run --once: %d ledger lines, want 1\n%s", n, out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM cycles WHERE status = 'ok' AND stages LIKE '%\"sync\"%' AND stages LIKE '%\"analyze\"%'"); n != 1 {
		t.Errorf("%d ok cycles with both stages timed, want 1", n)
	}
	status := mustRun(t, "--config", cfg, "status")
	if !strings.Contains(status, "#1     ") || !strings.Contains(status, " ok ") || !strings.Contains(status, "gl (ledger, csv): 1 file(s)") {
		t.Errorf("status:\n%s", status)
	}

	// A source that fails makes the cycle fail, and the command with it.
	if err := os.Remove(filepath.Join(dir, "data", "activity.csv")); err != nil {
		t.Fatal(err)
	}
	out, err := run(t, "--config", cfg, "run", "--once")
	if err == nil || !strings.Contains(err.Error(), "cycle 2 failed: sync: source ops failed: no file matches "+filepath.Join(dir, "data", "activity.csv")) {
		t.Errorf("run --once with a missing source: %v\n%s", err, out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM cycles WHERE status = 'failed'"); n != 1 {
		t.Errorf("%d failed cycles recorded, want 1", n)
	}
}

// /healthz judges age against two schedule intervals, on an injected clock.
func TestHealthAge(t *testing.T) {
	plan, err := config.CronParser.Parse("@every 1m")
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 3, 2, 6, 0, 0, 0, time.UTC)
	ok := costdrift.Cycle{ID: 7, Status: "ok", FinishedAt: t0}
	tests := []struct {
		name    string
		last    costdrift.Cycle
		good    time.Time
		now     time.Time
		healthy bool
		reason  string
	}{
		{"none yet", costdrift.Cycle{}, time.Time{}, t0, false, "no cycle has finished yet"},
		{"fresh", ok, t0, t0.Add(90 * time.Second), true, "the latest cycle succeeded on time"},
		{"exactly two intervals", ok, t0, t0.Add(2 * time.Minute), true, "the latest cycle succeeded on time"},
		{"stale", ok, t0, t0.Add(3 * time.Minute), false,
			"the latest successful cycle finished 3m0s ago, more than two schedule intervals (2m0s)"},
		{"failed", costdrift.Cycle{ID: 8, Status: "failed", FinishedAt: t0, Error: "sync: x"}, t0.Add(-time.Minute), t0, false,
			"the latest cycle failed"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			d := &daemon{plan: plan, last: tc.last, good: tc.good}
			h, healthy := d.health(tc.now)
			if healthy != tc.healthy || h.Reason != tc.reason || h.MaxAge != "2m0s" {
				t.Errorf("health = %v %+v, want %v %q", healthy, h, tc.healthy, tc.reason)
			}
		})
	}
}

// log.format json writes one JSON object a line; log.level filters.
func TestLogFormat(t *testing.T) {
	var buf bytes.Buffer
	log := newLogger(&buf, config.Log{Format: "json", Level: "warn"}, new(slog.LevelVar))
	log.Info("not shown")
	log.Warn("tick skipped: the previous cycle is still running", "cycle", 3)
	var line map[string]any
	if err := json.Unmarshal(buf.Bytes(), &line); err != nil {
		t.Fatalf("%q: %v", buf.String(), err)
	}
	if line["msg"] != "tick skipped: the previous cycle is still running" || line["level"] != "WARN" || line["cycle"] != 3.0 {
		t.Errorf("log line %v", line)
	}
}

// The daemon's whole cycle against a real SMTP server: the invented
// company's first two ledger years are in place at the start; its last two
// are dropped into the source folder while the daemon runs. The two
// behaviour changes they hold (the lease's fixed cost from 2025-07, the
// freight rate from 2025-02) must be in mailpit within two ticks of the drop.
func TestDaemonMailsAlertsFromDroppedFiles(t *testing.T) {
	mailpitPath(t) // skip or fail at once when mailpit is missing
	cfg, dir := setup(t, "")
	daemonConfig(t, cfg, "")
	smtpPort := loopbackPort(t)
	smtpAt(t, cfg, smtpPort)
	api, _ := startMailpit(t, smtpPort)

	books := t.TempDir()
	files, err := demo.Write(books, demo.DefaultSeed)
	if err != nil {
		t.Fatal(err)
	}
	if len(files.Ledger) != 4 {
		t.Fatalf("demo ledger files %v, want four years", files.Ledger)
	}
	copyFile := func(from, to string) {
		t.Helper()
		if !filepath.IsAbs(from) {
			from = filepath.Join(books, from)
		}
		b, err := os.ReadFile(from)
		if err != nil {
			t.Fatal(err)
		}
		writeFile(t, to, string(b))
	}
	data := filepath.Join(dir, "data")
	copyFile(files.Activity, filepath.Join(data, "activity.csv"))
	copyFile(files.Accounts, filepath.Join(data, "accounts.csv"))
	for _, f := range files.Ledger[:2] {
		copyFile(f, filepath.Join(data, "gl", filepath.Base(f)))
	}

	d, logs := startDaemon(t, cfg)
	waitFor(t, 10*time.Second, "a first cycle", func() bool { return logs.count(`msg="cycle finished"`) > 0 }, logs)
	// The ledger stops at 2024-12: no drift in it yet.
	before, _ := pitMessages(t, api)
	for _, m := range before["costs@example.test"] {
		if strings.Contains(m.Text, "6110/PAINT") || strings.Contains(m.Text, "6400/ASSY Freight out: rate") {
			t.Fatalf("a drift alert before its data arrived:\n%s", m.Text)
		}
	}

	// Dropped as a mail client or an export job would: written under a name
	// the glob does not match, then renamed.
	for _, f := range files.Ledger[2:] {
		tmp := filepath.Join(data, "gl", "."+filepath.Base(f)+".part")
		copyFile(f, tmp)
	}
	started := logs.count(`msg="cycle started"`)
	for _, f := range files.Ledger[2:] {
		name := filepath.Base(f)
		if err := os.Rename(filepath.Join(data, "gl", "."+name+".part"), filepath.Join(data, "gl", name)); err != nil {
			t.Fatal(err)
		}
	}
	dropped := time.Now()
	wants := []string{"6110/PAINT Equipment lease: fixed cost per period rose", "6400/ASSY Freight out: rate per shipment fell from 2025-02"}
	waitFor(t, 15*time.Second, "both drift alerts in mailpit", func() bool {
		got, _ := pitMessages(t, api)
		var all string
		for _, m := range got["costs@example.test"] {
			all += m.Text
		}
		return strings.Contains(all, wants[0]) && strings.Contains(all, wants[1])
	}, logs)
	// The cycle that sent them has finished by the time mailpit shows them,
	// or is finishing; count the cycles begun since the drop.
	ticks := logs.count(`msg="cycle started"`) - started
	t.Logf("both alerts in mailpit %v after the drop, %d cycle(s) started since", time.Since(dropped).Round(time.Millisecond), ticks)
	if ticks > 2 {
		t.Errorf("the alerts took %d ticks after the drop, want at most 2\nlog:\n%s", ticks, logs)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM deliveries d JOIN alerts a ON a.id = d.alert_id WHERE d.recipient = 'costs@example.test' AND d.status = 'sent' AND a.kind IN ('fixed_shift', 'rate_shift')"); n != 2 {
		t.Errorf("%d drift alerts recorded as sent to costs@example.test, want 2", n)
	}
	stop(t, d, logs)
}

// smtpAt points the mail.smtp block of setup's starter config at a server
// on 127.0.0.1:port without TLS (allowed to a loopback host only).
func smtpAt(t *testing.T, cfg string, port int) {
	t.Helper()
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	s := strings.Replace(string(text), `    host: ""                   # empty: messages go to the outbox folder
    port: 587
    tls: starttls `, fmt.Sprintf(`    host: 127.0.0.1
    port: %d
    tls: none `, port), 1)
	if s == string(text) {
		t.Fatal("starter config has no mail.smtp block to rewrite")
	}
	writeFile(t, cfg, s)
}

// demoBooks puts the invented company's whole ledger, activity and chart
// of accounts into setup's data folder: the first analysis raises its two
// designed drift alerts, mailed to the starter's one recipient.
func demoBooks(t *testing.T, dir string) {
	t.Helper()
	// The demo's books are analysed with the demo's price index.
	cfgPath := filepath.Join(dir, "costdrift.yaml")
	cfg, err := os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	demoPrices := regexp.MustCompile(`(?m)^  deflator: "".*\n  deflator_exempt: \[\].*$`)
	if !demoPrices.Match(cfg) {
		t.Fatal("the starter's deflator keys changed: update demoBooks")
	}
	cfg = demoPrices.ReplaceAll(cfg, []byte(`  deflator: `+demo.Deflator+"\n  deflator_exempt: ["+strings.Join(demo.DeflatorExempt(), ", ")+"]"))
	writeFile(t, cfgPath, string(cfg))
	books := t.TempDir()
	files, err := demo.Write(books, demo.DefaultSeed)
	if err != nil {
		t.Fatal(err)
	}
	data := filepath.Join(dir, "data")
	copies := map[string]string{files.Activity: filepath.Join(data, "activity.csv"), files.Accounts: filepath.Join(data, "accounts.csv")}
	for _, f := range files.Ledger {
		copies[f] = filepath.Join(data, "gl", filepath.Base(f))
	}
	for from, to := range copies {
		if !filepath.IsAbs(from) {
			from = filepath.Join(books, from)
		}
		b, err := os.ReadFile(from)
		if err != nil {
			t.Fatal(err)
		}
		writeFile(t, to, string(b))
	}
}

// linesWith are the log's lines that contain s.
func linesWith(log, s string) []string {
	var out []string
	for _, line := range strings.Split(log, "\n") {
		if strings.Contains(line, s) {
			out = append(out, line)
		}
	}
	return out
}

// healthOf is /healthz's status code and body.
func healthOf(t *testing.T, addr string) (int, healthJSON) {
	t.Helper()
	code, body := get(t, "http://"+addr+"/healthz")
	var h healthJSON
	if err := json.Unmarshal([]byte(body), &h); err != nil {
		t.Fatalf("/healthz body %q: %v", body, err)
	}
	return code, h
}

// With the SMTP server down the daemon says so: one WARN line per failed
// delivery attempt naming the recipient and the error, the cycle's summary
// counts the failed digests, /healthz reports "degraded" (HTTP 200: the
// cycle's own work succeeded, and a restart would not bring the mail server
// back) and /metrics counts the failures. When the server is back and the
// retry is due, the digest goes out and /healthz is "ok" again. None of
// these normal cycles claims to have rolled anything back.
func TestDaemonSaysWhenMailFails(t *testing.T) {
	mailpitPath(t) // skip or fail at once when mailpit is missing
	cfg, dir := setup(t, "")
	addr := freePort(t)
	daemonConfig(t, cfg, addr)
	smtpPort := loopbackPort(t) // nothing listens there: the mail server is down
	smtpAt(t, cfg, smtpPort)
	demoBooks(t, dir)
	store := filepath.Join(dir, "costdrift.db")
	d, logs := startDaemon(t, cfg)

	waitFor(t, 15*time.Second, "a cycle that tried to mail", func() bool { return logs.count(`msg="cycle finished"`) > 0 }, logs)
	warns := linesWith(logs.String(), `msg="mail delivery failed"`)
	if len(warns) != 1 || !strings.Contains(warns[0], "level=WARN") || !strings.Contains(warns[0], "recipient=costs@example.test") ||
		!strings.Contains(warns[0], "alerts=2") || !strings.Contains(warns[0], fmt.Sprintf("127.0.0.1:%d", smtpPort)) ||
		!strings.Contains(warns[0], "connection refused") {
		t.Errorf("want one WARN line naming the recipient, its 2 alerts and the refused connection, got %q\nlog:\n%s", warns, logs)
	}
	if first := linesWith(logs.String(), `msg="cycle finished"`)[0]; !strings.Contains(first, "mail_sent=0") || !strings.Contains(first, "mail_failed=1") {
		t.Errorf("the cycle's summary does not count the failed digest: %q", first)
	}
	code, h := healthOf(t, addr)
	if code != http.StatusOK || h.Status != "degraded" || !strings.HasPrefix(h.Reason, "mail delivery failing since ") ||
		h.MailFailingSince == "" || h.MailFailing != 2 || !strings.Contains(h.MailError, "connection refused") {
		t.Errorf("GET /healthz with the mail server down: %d %+v", code, h)
	}
	if _, body := get(t, "http://"+addr+"/metrics"); !strings.Contains(body, "\ncostdrift_mail_delivery_failures_total 1\n") {
		t.Errorf("/metrics does not count the failed delivery:\n%s", body)
	}

	// While the retry waits for its backoff nothing is tried and nothing
	// more is logged, and the daemon stays degraded.
	cycles := logs.count(`msg="cycle finished"`)
	waitFor(t, 5*time.Second, "two more cycles", func() bool { return logs.count(`msg="cycle finished"`) >= cycles+2 }, logs)
	if n := logs.count(`msg="mail delivery failed"`); n != 1 {
		t.Errorf("%d WARN lines after cycles that tried nothing, want still 1", n)
	}
	if code, h := healthOf(t, addr); code != http.StatusOK || h.Status != "degraded" {
		t.Errorf("GET /healthz during the backoff: %d %+v", code, h)
	}

	// The server is back, and the backoff is over (moved into the past
	// here rather than waited for).
	api, _ := startMailpit(t, smtpPort)
	sqldb, err := sql.Open("sqlite3", "file:"+store+"?_busy_timeout=5000")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sqldb.Exec("UPDATE deliveries SET next_attempt_at = '2000-01-01T00:00:00Z' WHERE status = 'failed'"); err != nil {
		t.Fatal(err)
	}
	sqldb.Close()
	waitFor(t, 5*time.Second, "/healthz ok again", func() bool {
		code, h := healthOf(t, addr)
		return code == http.StatusOK && h.Status == "ok"
	}, logs)
	if got, _ := pitMessages(t, api); len(got["costs@example.test"]) != 1 {
		t.Errorf("after the server came back: messages by recipient %v, want one to costs@example.test", got)
	}
	if n := len(linesWith(logs.String(), "mail_sent=1 mail_failed=0")); n != 1 {
		t.Errorf("%d cycle summaries with the digest sent, want 1\nlog:\n%s", n, logs)
	}
	if strings.Contains(logs.String(), "rolled back") {
		t.Errorf("normal cycles claim a rollback:\n%s", logs)
	}
	stop(t, d, logs)
}

// holdingSMTP is a mail server on 127.0.0.1 that greets, answers EHLO and
// then never answers again; held receives each connection that reached
// that point.
func holdingSMTP(t *testing.T) (port int, held chan struct{}) {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	held = make(chan struct{}, 16)
	var conns sync.WaitGroup
	t.Cleanup(func() { ln.Close(); conns.Wait() })
	go func() {
		for {
			c, err := ln.Accept()
			if err != nil {
				return
			}
			conns.Add(1)
			go func() {
				defer conns.Done()
				defer c.Close()
				fmt.Fprintf(c, "220 hold.example.test ESMTP\r\n")
				r := bufio.NewReader(c)
				for {
					line, err := r.ReadString('\n')
					if err != nil {
						return
					}
					cmd := strings.ToUpper(strings.TrimSpace(line))
					if strings.HasPrefix(cmd, "EHLO") || strings.HasPrefix(cmd, "HELO") {
						fmt.Fprintf(c, "250 hold.example.test\r\n")
						continue
					}
					held <- struct{}{}
					io.Copy(io.Discard, r) // until the client hangs up
					return
				}
			}()
		}
	}()
	return ln.Addr().(*net.TCPAddr).Port, held
}

// SIGTERM while the cycle mails its alerts, after its sync and analysis
// have committed: the daemon exits 0, keeps what the cycle committed, and
// says so; it does not claim that an open transaction was rolled back. The
// digest that was cut off is not counted as a failed delivery: it goes out
// at the next cycle.
func TestDaemonStoppedWhileMailing(t *testing.T) {
	cfg, dir := setup(t, "")
	daemonConfig(t, cfg, "")
	smtpPort, held := holdingSMTP(t)
	smtpAt(t, cfg, smtpPort)
	demoBooks(t, dir)
	store := filepath.Join(dir, "costdrift.db")
	d, logs := startDaemon(t, cfg)
	select {
	case <-held:
	case <-time.After(15 * time.Second):
		t.Fatalf("the cycle never reached the mail server\nlog:\n%s", logs)
	}
	stop(t, d, logs)

	finished := linesWith(logs.String(), `msg="cycle finished"`)
	if len(finished) != 1 {
		t.Fatalf("%d cycle summaries, want 1\nlog:\n%s", len(finished), logs)
	}
	want := "interrupted: the daemon was stopped while the alerts were mailed; the cycle's sync, analysis and alerts are stored, and the digests not sent go out at the next cycle"
	if strings.Contains(logs.String(), "rolled back") || !strings.Contains(finished[0], want) {
		t.Errorf("the stopped cycle's summary %q, want it to say %q and claim no rollback\nlog:\n%s", finished[0], want, logs)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM cycles WHERE status = 'failed' AND error = '"+strings.ReplaceAll(want, "'", "''")+"'"); n != 1 {
		t.Errorf("%d cycles recorded as stopped while mailing, want 1", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs"); n != 1 {
		t.Errorf("%d analyses stored, want the cycle's one", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE kind IN ('fixed_shift', 'rate_shift')"); n != 2 {
		t.Errorf("%d drift alerts stored, want 2", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM deliveries"); n != 0 {
		t.Errorf("%d deliveries recorded for a digest cut off by the stop, want none", n)
	}
}

// healthAtFinish is a log handler that, when a cycle's last line is
// written, asks the daemon for its health as /healthz would at that moment.
type healthAtFinish struct {
	d    *daemon
	seen []healthJSON
}

func (h *healthAtFinish) Enabled(context.Context, slog.Level) bool { return true }
func (h *healthAtFinish) WithAttrs([]slog.Attr) slog.Handler       { return h }
func (h *healthAtFinish) WithGroup(string) slog.Handler            { return h }
func (h *healthAtFinish) Handle(_ context.Context, r slog.Record) error {
	if r.Message == "cycle finished" {
		got, _ := h.d.health(time.Now())
		h.seen = append(h.seen, got)
	}
	return nil
}

// Whoever reads the log's "cycle finished" and then asks /healthz (an
// operator, a supervisor, a test) sees that cycle there: the daemon records
// the cycle before its last line is written, not after.
func TestHealthKnowsTheCycleItsLogReports(t *testing.T) {
	cfg, _ := setup(t, "")
	seen := healthAtEachFinish(t, cfg)
	if len(seen) != 1 {
		t.Fatalf("%d cycle-finished lines, want 1", len(seen))
	}
	if got := seen[0]; got.LastCycle != 1 || got.LastStatus == "" {
		t.Errorf("health when the cycle's last line was written: %+v, want cycle 1 and its status", got)
	}
}

// healthAtEachFinish runs one cycle of a daemon on cfg and returns its
// health as each "cycle finished" line was written.
func healthAtEachFinish(t *testing.T, cfg string) []healthJSON {
	t.Helper()
	e, err := pipeline.Load(cfg, time.Now)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	db, closeStore, err := e.OpenToWrite(ctx, false)
	if err != nil {
		t.Fatal(err)
	}
	defer closeStore()
	plan, err := cron.ParseStandard("@every 1m")
	if err != nil {
		t.Fatal(err)
	}
	h := &healthAtFinish{}
	d := &daemon{e: e, db: db, log: slog.New(h), m: newMetrics(), plan: plan}
	h.d = d
	d.tick(ctx)
	return h.seen
}

// The same holds for the alert mail: a cycle whose digest could not be sent
// is degraded in /healthz by the time its "cycle finished" line is written.
func TestHealthKnowsTheMailFailureItsCycleLogs(t *testing.T) {
	cfg, dir := setup(t, "")
	smtpAt(t, cfg, loopbackPort(t)) // nothing listens there: the mail server is down
	demoBooks(t, dir)
	seen := healthAtEachFinish(t, cfg)
	if len(seen) != 1 {
		t.Fatalf("%d cycle-finished lines, want 1", len(seen))
	}
	if got := seen[0]; got.Status != "degraded" || got.MailFailing == 0 || !strings.Contains(got.MailError, "connection refused") {
		t.Errorf("health when the cycle's last line was written: %+v, want degraded with the failing mail", got)
	}
}
