package main

import (
	"bytes"
	"database/sql"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
)

const smtpTestPassword = "Cycle-s3cret-never-shown"

// runAt executes the command line with the clock at now.
func runAt(t *testing.T, now time.Time, args ...string) string {
	t.Helper()
	var out bytes.Buffer
	root := newRoot(&out, &out, func() time.Time { return now })
	root.SetArgs(args)
	if err := root.Execute(); err != nil {
		t.Fatalf("costdrift %s: %v\n%s", strings.Join(args, " "), err, out.String())
	}
	return out.String()
}

func mailpitPath(t *testing.T) string { return costdrifttest.Mailpit(t) }

func loopbackPort(t *testing.T) int { return costdrifttest.FreePort(t) }

type pitMessage struct {
	ID      string
	To      []struct{ Address string }
	Subject string
	Text    string
	HTML    string
	Inline  []struct{ ContentType, ContentID string }
}

func pitGet(t *testing.T, url string, v any) []byte {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != 200 {
		t.Fatalf("GET %s: %d %s", url, resp.StatusCode, b)
	}
	if v != nil {
		if err := json.Unmarshal(b, v); err != nil {
			t.Fatal(err)
		}
	}
	return b
}

// pitMessages is every message mailpit holds, by recipient, with its raw text.
func pitMessages(t *testing.T, api string) (map[string][]pitMessage, []string) {
	t.Helper()
	var list struct{ Messages []struct{ ID string } }
	pitGet(t, api+"/api/v1/messages", &list)
	out := map[string][]pitMessage{}
	var raws []string
	for _, s := range list.Messages {
		var m pitMessage
		pitGet(t, api+"/api/v1/message/"+s.ID, &m)
		for _, to := range m.To {
			out[to.Address] = append(out[to.Address], m)
		}
		raws = append(raws, string(pitGet(t, api+"/api/v1/message/"+s.ID+"/raw", nil)))
	}
	return out, raws
}

// startMailpit runs mailpit with its SMTP server on smtpPort and returns
// the base address of its HTTP API and a reader of its log.
func startMailpit(t *testing.T, smtpPort int) (string, func() string) {
	t.Helper()
	m := costdrifttest.StartMailpit(t, smtpPort, "--smtp-auth-accept-any", "--smtp-auth-allow-insecure")
	return m.API, m.Log
}

// TestMailCycleServerDownThenBack: the demo's analysis finds the SMTP
// server down, records the failure per recipient, retries only after the
// backoff, delivers each digest exactly once when the server is back, and
// routes by cost centre; the password shows in no output, message or store.
func TestMailCycleServerDownThenBack(t *testing.T) {
	mailpitPath(t) // skip or fail at once when mailpit is missing
	dir := t.TempDir()
	smtpPort := loopbackPort(t)
	cfg := strings.Replace(mustDemoConfig(t), `    - email: costs@example.test
      cost_centers: ["*"]
      accounts: ["*"]
      min_severity: warning    # info | warning | critical`, `    - email: paint@example.test
      cost_centers: ["PAINT"]
      min_severity: warning
    - email: freight@example.test
      accounts: ["64*"]
      cost_centers: ["AS*"]
      min_severity: warning
    - email: controller@example.test
      cost_centers: ["*"]
      accounts: ["*"]
      min_severity: critical
    - email: costs@example.test
      cost_centers: ["*"]
      accounts: ["*"]
      min_severity: warning`, 1)
	cfg = strings.Replace(cfg, `    host: ""                   # empty: messages go to the outbox folder
    port: 587
    tls: starttls              # starttls | tls | none (none only to a loopback host)
    username: ""`, fmt.Sprintf(`    host: 127.0.0.1
    port: %d
    tls: none
    username: costdrift`, smtpPort), 1)
	if !strings.Contains(cfg, "paint@example.test") || !strings.Contains(cfg, "tls: none") {
		t.Fatal("the starter config changed: update this test's replacements")
	}
	cfgPath := filepath.Join(dir, "costdrift.yaml")
	if err := os.WriteFile(cfgPath, []byte(cfg), 0o600); err != nil {
		t.Fatal(err)
	}
	t.Setenv("COSTDRIFT_SMTP_PASSWORD", smtpTestPassword)
	store := filepath.Join(dir, "costdrift.db")

	// Cycle 1: nothing listens on the port.
	t0 := today()
	out := runAt(t, t0, "demo", "--dir", dir)
	if strings.Count(out, "not sent, retried on a later cycle") != 3 {
		t.Errorf("demo output does not report the three failed digests:\n%s", out)
	}
	// paint: 6110/PAINT; freight: 6400/ASSY; costs: both; controller: no
	// critical alert in the demo.
	if n := count(t, store, "SELECT COUNT(*) FROM deliveries WHERE status = 'failed' AND attempts = 1 AND severity_sent IS NULL AND next_attempt_at = '2026-12-01T09:05:00Z' AND last_error LIKE '%connect%'"); n != 4 {
		t.Errorf("%d failed deliveries recorded with a 5-minute backoff, want 4", n)
	}

	api, pitLog := startMailpit(t, smtpPort)

	// Before the backoff has passed nothing is tried.
	out = runAt(t, t0.Add(time.Minute), "--config", cfgPath, "alerts", "send")
	if got, _ := pitMessages(t, api); len(got) != 0 || out != "" {
		t.Errorf("sent before the backoff passed: %d recipients, output %q", len(got), out)
	}
	// Cycle 2: past the backoff, the server is back.
	outs := out + runAt(t, t0.Add(6*time.Minute), "--config", cfgPath, "alerts", "send")
	// Cycle 3: nothing is due any more.
	third := runAt(t, t0.Add(7*time.Hour), "--config", cfgPath, "alerts", "send")
	outs += third
	if third != "" {
		t.Errorf("third cycle sent again: %q", third)
	}
	got, raws := pitMessages(t, api)
	if len(raws) != 3 || len(got["paint@example.test"]) != 1 || len(got["freight@example.test"]) != 1 || len(got["costs@example.test"]) != 1 {
		t.Fatalf("%d messages, by recipient %v; want one each to paint, freight and costs", len(raws), got)
	}
	for to, want := range map[string]string{
		"paint@example.test":   "costdrift: 1 change in cost behaviour (PAINT)",
		"freight@example.test": "costdrift: 1 change in cost behaviour (ASSY)",
		"costs@example.test":   "costdrift: 2 changes in cost behaviour (PAINT, ASSY)",
	} {
		if s := got[to][0].Subject; s != want {
			t.Errorf("%s: subject %q, want %q", to, s, want)
		}
	}
	freight := got["freight@example.test"][0]
	// 6400/ASSY is variable on shipments: its scatter is drawn; 6110/PAINT
	// is fixed, with no activity to draw against: its cost over time is.
	if len(freight.Inline) != 1 || freight.Inline[0].ContentType != "image/png" || !strings.Contains(freight.HTML, "cid:"+freight.Inline[0].ContentID) {
		t.Errorf("freight digest: inline parts %+v", freight.Inline)
	}
	if paint := got["paint@example.test"][0]; len(paint.Inline) != 1 || paint.Inline[0].ContentType != "image/png" ||
		!strings.Contains(paint.HTML, "cid:"+paint.Inline[0].ContentID) {
		t.Errorf("paint digest: inline parts %+v, want the fixed cost's cost over time", paint.Inline)
	}
	for _, want := range []string{"costdrift explain 6400/ASSY", "Since: 2025-02", "was  14.48 × shipments", "now  11.92 × shipments", "p-value: < 0.001", "Formulas are statistical estimates"} {
		if !strings.Contains(freight.Text, want) {
			t.Errorf("freight text part lacks %q:\n%s", want, freight.Text)
		}
	}
	if n := count(t, store, "SELECT COUNT(*) FROM deliveries WHERE status = 'sent' AND attempts = 0 AND severity_sent = 'warning' AND sent_at = '2026-12-01T09:06:00Z' AND last_error IS NULL"); n != 4 {
		t.Errorf("%d deliveries recorded as sent, want 4", n)
	}
	dbBytes, _ := os.ReadFile(store)
	for what, text := range map[string]string{"output": out + outs, "store": string(dbBytes), "messages": strings.Join(raws, "\n"), "server log": pitLog()} {
		if strings.Contains(text, smtpTestPassword) {
			t.Errorf("the SMTP password appears in the %s", what)
		}
	}

	// test-email reports the server's answer.
	answer := runAt(t, t0.Add(8*time.Hour), "--config", cfgPath, "alerts", "test-email", "--to", "check@example.test")
	if !strings.Contains(answer, "test message to check@example.test accepted by 127.0.0.1:") || !strings.Contains(answer, ": 250 ") {
		t.Errorf("test-email output %q", answer)
	}
	if got, _ := pitMessages(t, api); len(got["check@example.test"]) != 1 || got["check@example.test"][0].Subject != "costdrift: test message" {
		t.Errorf("test message not received as sent")
	}
}

func TestMailOutboxAndRefusals(t *testing.T) {
	dir := t.TempDir()
	out := mustRun(t, "demo", "--dir", dir)
	cfgPath := filepath.Join(dir, "costdrift.yaml")
	files, _ := filepath.Glob(filepath.Join(dir, "outbox", "*.eml"))
	if len(files) != 1 || !strings.Contains(out, "mail: 2 alert(s) to costs@example.test: written to "+files[0]) {
		t.Fatalf("outbox %v; demo output:\n%s", files, out)
	}
	// Sent once: another cycle writes nothing.
	if again := mustRun(t, "--config", cfgPath, "alerts", "send"); again != "" {
		t.Errorf("second send wrote %q", again)
	}
	// Escalated after it was sent: mailed again, once, at the new severity.
	store := filepath.Join(dir, "costdrift.db")
	sqldb, err := sql.Open("sqlite3", store)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sqldb.Exec("UPDATE alerts SET severity = 'critical' WHERE object = '6400/ASSY'"); err != nil {
		t.Fatal(err)
	}
	sqldb.Close()
	escalated := mustRun(t, "--config", cfgPath, "alerts", "send")
	if !strings.Contains(escalated, "mail: 1 alert(s) to costs@example.test: written to") {
		t.Errorf("escalated alert not mailed again: %q", escalated)
	}
	if again := mustRun(t, "--config", cfgPath, "alerts", "send"); again != "" {
		t.Errorf("escalated alert mailed twice: %q", again)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM deliveries d JOIN alerts a ON a.id = d.alert_id WHERE a.object = '6400/ASSY' AND d.severity_sent = 'critical' AND d.status = 'sent'"); n != 1 {
		t.Errorf("escalation not recorded as sent at critical")
	}
	files, _ = filepath.Glob(filepath.Join(dir, "outbox", "*.eml"))
	if len(files) != 2 {
		t.Errorf("%d outbox files after the escalation, want 2", len(files))
	}
	if out := mustRun(t, "--config", cfgPath, "alerts", "test-email"); !strings.Contains(out, "test message to costs@example.test written to "+filepath.Join(dir, "outbox")) {
		t.Errorf("test-email with no host: %q", out)
	}
	// Plain text to a host that is not this machine is refused, with the key named.
	t.Setenv("COSTDRIFT_MAIL_SMTP_HOST", "smtp.example.test")
	t.Setenv("COSTDRIFT_MAIL_SMTP_TLS", "none")
	_, err = run(t, "--config", cfgPath, "alerts", "test-email", "--to", "x@example.test")
	if err == nil || !strings.Contains(err.Error(), "mail.smtp.tls is none, but smtp.example.test is not a loopback host") {
		t.Errorf("tls none to a network host: %v", err)
	}
}

// TestMailRoutesCodesWithSlash: the demo's freight account booked as
// 6400/01 in cost centre PLANT/2 (codes with a "/") is synced, analysed and
// its alert mailed to the recipients whose patterns match the codes as a
// whole: "*", "PLANT/*" and "6400/*" with "PLANT/2", not "OTHER*".
func TestMailRoutesCodesWithSlash(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	for _, name := range []string{"costdrift.db", "outbox"} {
		if err := os.RemoveAll(filepath.Join(dir, name)); err != nil {
			t.Fatal(err)
		}
	}
	files, _ := filepath.Glob(filepath.Join(dir, "data", "gl", "*.csv"))
	renamed := 0
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(string(b), "\n")
		for i, l := range lines {
			// entry_id,line,date,account,cost_center,amount,description
			fields := strings.SplitN(l, ",", 6)
			if len(fields) == 6 && fields[3] == "6400" && fields[4] == "ASSY" {
				fields[3], fields[4] = "6400/01", "PLANT/2"
				lines[i] = strings.Join(fields, ",")
				renamed++
			}
		}
		if err := os.WriteFile(f, []byte(strings.Join(lines, "\n")), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	if renamed < 36 {
		t.Fatalf("renamed %d ledger lines of 6400/ASSY; the demo changed: update this test", renamed)
	}
	chart := filepath.Join(dir, "data", "accounts.csv")
	b, err := os.ReadFile(chart)
	if err != nil || !strings.Contains(string(b), "\n6400,Freight out,") {
		t.Fatalf("the demo's chart of accounts changed: update this test (%v)", err)
	}
	if err := os.WriteFile(chart, []byte(strings.Replace(string(b), "\n6400,", "\n6400/01,", 1)), 0o600); err != nil {
		t.Fatal(err)
	}
	cfgPath := filepath.Join(dir, "costdrift.yaml")
	b, err = os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	cfg := strings.Replace(string(b), `accounts: ["5000-6999"]`, `accounts: ["5000-6999", "6400/*"]`, 1)
	cfg = strings.Replace(cfg, `    - email: costs@example.test
      cost_centers: ["*"]
      accounts: ["*"]
      min_severity: warning    # info | warning | critical`, `    - email: star@example.test
      cost_centers: ["*"]
      min_severity: warning
    - email: plant@example.test
      cost_centers: ["PLANT/*"]
      min_severity: warning
    - email: freight@example.test
      accounts: ["6400/*"]
      cost_centers: ["PLANT/2"]
      min_severity: warning
    - email: other@example.test
      cost_centers: ["OTHER*"]
      min_severity: warning`, 1)
	if !strings.Contains(cfg, "6400/*") || !strings.Contains(cfg, "other@example.test") {
		t.Fatal("the demo's config changed: update this test's replacements")
	}
	if err := os.WriteFile(cfgPath, []byte(cfg), 0o600); err != nil {
		t.Fatal(err)
	}
	mustRun(t, "--config", cfgPath, "sync")
	out := mustRun(t, "--config", cfgPath, "analyze")

	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE object = '6400/01/PLANT/2' AND kind = 'rate_shift' AND status = 'open'"); n != 1 {
		t.Fatalf("%d open rate_shift alerts on 6400/01/PLANT/2, want 1; analyze said:\n%s", n, out)
	}
	for _, rcpt := range []string{"star@example.test", "plant@example.test", "freight@example.test", "other@example.test"} {
		want := 1
		if rcpt == "other@example.test" {
			want = 0
		}
		q := "SELECT COUNT(*) FROM deliveries d JOIN alerts a ON a.id = d.alert_id WHERE a.object = '6400/01/PLANT/2' AND d.status = 'sent' AND d.recipient = '" + rcpt + "'"
		if n := count(t, store, q); n != want {
			t.Errorf("%s: the alert on 6400/01/PLANT/2 delivered %d time(s), want %d; analyze said:\n%s", rcpt, n, want, out)
		}
	}
	// The digest names the account from the chart of accounts: the
	// account is 6400/01, not 6400.
	eml, _ := filepath.Glob(filepath.Join(dir, "outbox", "*plant_example.test.eml"))
	if len(eml) != 1 {
		t.Fatalf("outbox files for plant@example.test: %v", eml)
	}
	msg, err := os.ReadFile(eml[0])
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"\r\nSubject: costdrift: 1 change in cost behaviour (PLANT/2)\r\n", "-- WARNING  rate shifted  6400/01/PLANT/2 Freight out\r\n"} {
		if !strings.Contains(string(msg), want) {
			t.Errorf("the digest lacks %q:\n%s", want, msg)
		}
	}
}

// alerts send exits non-zero when a digest could not be sent, saying how
// many of how many, and that they stay queued; with nothing due it exits 0.
func TestAlertsSendFailsWhenDigestsAreNotSent(t *testing.T) {
	dir := t.TempDir()
	smtpPort := loopbackPort(t) // nothing listens there: the mail server is down
	cfg := strings.Replace(mustDemoConfig(t), `    host: ""                   # empty: messages go to the outbox folder
    port: 587
    tls: starttls `, fmt.Sprintf(`    host: 127.0.0.1
    port: %d
    tls: none `, smtpPort), 1)
	if !strings.Contains(cfg, "tls: none") {
		t.Fatal("the starter config changed: update this test's replacement")
	}
	cfgPath := filepath.Join(dir, "costdrift.yaml")
	if err := os.WriteFile(cfgPath, []byte(cfg), 0o600); err != nil {
		t.Fatal(err)
	}
	// The demo's analysis tries once and records the failure; mail being
	// down does not fail the analysis.
	t0 := today()
	if out := runAt(t, t0, "demo", "--dir", dir); !strings.Contains(out, "mail: 2 alert(s) to costs@example.test not sent, retried on a later cycle") {
		t.Fatalf("demo output does not report the failed digest:\n%s", out)
	}
	send := func(at time.Time) (string, error) {
		var out bytes.Buffer
		root := newRoot(&out, &out, func() time.Time { return at })
		root.SetArgs([]string{"--config", cfgPath, "alerts", "send"})
		err := root.Execute()
		return out.String(), err
	}
	// Within the backoff nothing is due: nothing to fail.
	if out, err := send(t0.Add(time.Minute)); err != nil || out != "" {
		t.Errorf("alerts send with nothing due: %v %q", err, out)
	}
	// Past it, the server still down: the retry fails, and the command says so.
	out, err := send(t0.Add(6 * time.Minute))
	want := "1 of 1 digest(s) could not be sent; they stay queued and are retried after the backoff"
	if err == nil || err.Error() != want || !strings.Contains(out, "mail: 2 alert(s) to costs@example.test not sent, retried on a later cycle") {
		t.Errorf("alerts send with the server down: error %v, want %q; output %q", err, want, out)
	}
	if n := count(t, filepath.Join(dir, "costdrift.db"), "SELECT COUNT(*) FROM deliveries WHERE status = 'failed' AND attempts = 2"); n != 2 {
		t.Errorf("%d deliveries recorded as failed twice, want 2", n)
	}
}
