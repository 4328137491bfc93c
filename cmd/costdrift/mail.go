package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"strings"
	"time"

	"github.com/spf13/cobra"
	gomail "github.com/wneessen/go-mail"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/mail"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// Timeouts of one delivery: connecting and each SMTP command, and the whole
// cycle's messages.
const (
	smtpConnectTimeout = 30 * time.Second
	smtpSendTimeout    = 5 * time.Minute
)

// mailServer is the configured SMTP server with its password, or an error
// naming the key that is wrong. Empty host: the outbox is used instead.
func mailServer(e *env) (mail.Server, error) {
	c := e.cfg.Mail.SMTP
	s := mail.Server{Host: c.Host, Port: c.Port, TLS: c.TLS, Username: c.Username,
		ConnectTimeout: smtpConnectTimeout, SendTimeout: smtpSendTimeout}
	if c.Username != "" {
		pw, err := mail.Password(c.PasswordEnv, e.cfg.Path(c.PasswordFile))
		if err != nil {
			return s, err
		}
		s.Password = pw
	}
	return s, s.Check()
}

// outgoing is one recipient's digest of this cycle.
type outgoing struct {
	to     string
	items  []mail.Item
	msg    *gomail.Msg
	buildE error
}

// deliveryTally is what one delivery step did: the digests it tried, how
// many went out, and each one that did not.
type deliveryTally struct {
	started  bool // the step ran (the analysis before it had committed)
	digests  int
	sent     int
	failures []deliveryFailure
}

// deliveryFailure is one digest not delivered: its recipient, how many
// alerts it carried, and the error on one line (the server's errors never
// hold the password).
type deliveryFailure struct {
	recipient string
	alerts    int
	err       string
}

type tallyKey struct{}

// withDeliveryTally gives ctx a tally that the delivery step run under it
// fills in: a daemon's cycle reaches the step through the analysis, which
// returns nothing about the mail.
func withDeliveryTally(ctx context.Context) (context.Context, *deliveryTally) {
	t := &deliveryTally{}
	return context.WithValue(ctx, tallyKey{}, t), t
}

// deliverAlerts is the delivery step of a cycle (sendDue). A failure to
// send is recorded and retried on a later cycle, not returned, so that a
// mail server that is down does not fail the analysis; the tally of ctx
// (withDeliveryTally), when it has one, says what happened.
func (a *app) deliverAlerts(ctx context.Context, e *env, db *sqlite.DB, out io.Writer) error {
	t, err := a.sendDue(ctx, e, db, out)
	if into, ok := ctx.Value(tallyKey{}).(*deliveryTally); ok {
		*into = t
	}
	return err
}

// sendDue sends the due digests: for each recipient, the open alerts
// routed to it that are due (never sent, escalated above what was sent, or
// failed and past their backoff) go into one digest, sent through the
// configured server or written to the outbox; the store records each
// outcome per alert and recipient, and a failed one is retried after the
// backoff. Only the store's errors, and an interruption, are returned. A
// digest cut off because ctx ended is not recorded as failed: it is due
// again at the next cycle.
func (a *app) sendDue(ctx context.Context, e *env, db *sqlite.DB, out io.Writer) (deliveryTally, error) {
	t := deliveryTally{started: true}
	recipients := e.cfg.Alerts.Recipients
	if len(recipients) == 0 {
		return t, nil
	}
	open, err := db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	if err != nil {
		return t, fmt.Errorf("mail: %w", err)
	}
	past, err := db.Deliveries(ctx, "")
	if err != nil {
		return t, fmt.Errorf("mail: %w", err)
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return t, fmt.Errorf("mail: %w", err)
	}
	objects, err := alertObjects(ctx, db, open)
	if err != nil {
		return t, fmt.Errorf("mail: %w", err)
	}
	now := a.now()
	charts := map[int64][]byte{}
	var batch []outgoing
	for _, r := range recipients {
		rcpt := mail.Recipient{Email: r.Email, CostCenters: r.CostCenters, Accounts: r.Accounts,
			MinSeverity: costdrift.Severity(r.MinSeverity)}
		var items []mail.Item
		for _, al := range open {
			o := objects[al.Object]
			if !mail.RoutesObject(rcpt, al, o) {
				continue
			}
			var prev *mail.State
			if d, ok := past[al.ID][r.Email]; ok {
				prev = &mail.State{SeveritySent: d.SeveritySent, Failed: d.Status == sqlite.DeliveryFailed,
					Attempts: d.Attempts, NextAttempt: d.NextAttempt}
			}
			if !mail.Due(al, prev, now) {
				continue
			}
			it := mail.Item{Alert: al}
			if !mail.SourceKind(al.Kind) {
				it.Object = o
				it.AccountName = names[o.Account]
				if oa, err := db.ObjectAnalysis(ctx, al.Object); err == nil {
					it.Class, it.Driver = string(oa.Behaviour.Class), oa.Behaviour.Driver
				}
				png, ok := charts[al.ID]
				if !ok {
					png = alertChart(ctx, e, db, al, names)
					charts[al.ID] = png
				}
				it.Chart = png
			}
			items = append(items, it)
		}
		if len(items) == 0 {
			continue
		}
		msg, err := mail.Message(mail.Digest{To: r.Email, From: e.cfg.Mail.SMTP.From, Items: items, Date: now, Cautions: report.Caution})
		batch = append(batch, outgoing{to: r.Email, items: items, msg: msg, buildE: err})
	}
	if len(batch) == 0 {
		return t, nil
	}
	t.digests = len(batch)

	results := make([]mail.Result, len(batch))
	if e.cfg.Mail.SMTP.Host == "" {
		dir := e.cfg.Path(e.cfg.Mail.Outbox)
		for i, o := range batch {
			if o.buildE != nil {
				results[i] = mail.Result{Err: o.buildE}
				continue
			}
			p, err := mail.WriteOutbox(dir, o.msg, now, o.to)
			results[i] = mail.Result{Err: err, Answer: "written to " + p}
		}
	} else {
		server, err := mailServer(e)
		var msgs []*gomail.Msg
		var idx []int
		for i, o := range batch {
			switch {
			case err != nil:
				results[i] = mail.Result{Err: err}
			case o.buildE != nil:
				results[i] = mail.Result{Err: o.buildE}
			default:
				msgs = append(msgs, o.msg)
				idx = append(idx, i)
			}
		}
		if len(msgs) > 0 {
			for j, res := range server.Send(ctx, msgs) {
				results[idx[j]] = res
			}
		}
	}

	// What reached the server is recorded even when ctx ended meanwhile, so
	// that it is not sent twice.
	record, cancel := context.WithTimeout(context.WithoutCancel(ctx), 10*time.Second)
	defer cancel()
	interrupted, cut := ctx.Err(), 0
	for i, o := range batch {
		res := results[i]
		if res.Err == nil {
			sent := make(map[int64]costdrift.Severity, len(o.items))
			for _, it := range o.items {
				sent[it.Alert.ID] = it.Alert.Severity
			}
			if err := db.RecordDeliverySent(record, o.to, sent, now); err != nil {
				return t, fmt.Errorf("mail: %w", err)
			}
			t.sent++
			fmt.Fprintf(out, "mail: %d alert(s) to %s: %s\n", len(o.items), o.to, res.Answer)
			continue
		}
		if interrupted != nil {
			cut++
			fmt.Fprintf(out, "mail: %d alert(s) to %s not sent: interrupted; due again at the next cycle\n", len(o.items), o.to)
			continue
		}
		ids := make([]int64, len(o.items))
		for j, it := range o.items {
			ids[j] = it.Alert.ID
		}
		msg := oneLineError(res.Err)
		if err := db.RecordDeliveryFailed(record, o.to, ids, msg, now, mail.Backoff); err != nil {
			return t, fmt.Errorf("mail: %w", err)
		}
		t.failures = append(t.failures, deliveryFailure{recipient: o.to, alerts: len(o.items), err: msg})
		fmt.Fprintf(out, "mail: %d alert(s) to %s not sent, retried on a later cycle: %s\n", len(o.items), o.to, msg)
	}
	if cut > 0 {
		return t, fmt.Errorf("mail: %d digest(s) not sent: %w", cut, interrupted)
	}
	return t, nil
}

// alertObjects maps the Object of each object alert to its account and
// cost centre as the analysis stored them: "6100/01/PLANT/2" is account
// 6100/01 in cost centre PLANT/2, which no split at a "/" can tell. An
// object the store has no behaviour for is split at its first "/".
func alertObjects(ctx context.Context, db *sqlite.DB, open []costdrift.Alert) (map[string]costdrift.CostObject, error) {
	out := make(map[string]costdrift.CostObject, len(open))
	if len(open) == 0 {
		return out, nil
	}
	current, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return nil, err
	}
	known := make(map[string]costdrift.CostObject, len(current))
	for _, b := range current {
		known[b.Object.String()] = b.Object
	}
	for _, al := range open {
		if mail.SourceKind(al.Kind) {
			continue
		}
		o, ok := known[al.Object]
		if !ok {
			o = mail.SplitObject(al.Object)
		}
		out[al.Object] = o
	}
	return out, nil
}

func oneLineError(err error) string {
	return strings.Join(strings.Fields(err.Error()), " ")
}

// alertChart draws the scatter of the alert's object as in `costdrift
// explain --chart`, with the formula before the change dashed when the
// evidence has it on the same driver; nil when the store lacks the data
// (no analysis, no driver, no points).
func alertChart(ctx context.Context, e *env, db *sqlite.DB, al costdrift.Alert, names map[string]string) []byte {
	oa, err := db.ObjectAnalysis(ctx, al.Object)
	if err != nil || oa.Behaviour.Driver == "" {
		return nil
	}
	b := oa.Behaviour
	var settings runSettings
	_ = json.Unmarshal([]byte(oa.Run.Settings), &settings) // unreadable settings: the object's own lag
	maxLag := b.Lag
	if len(settings.Lags) > 0 {
		maxLag = max(maxLag, slices.Max(settings.Lags))
	}
	pts, err := analysedPoints(ctx, e, db, oa, maxLag)
	if err != nil {
		return nil
	}
	ex := report.Explain(report.ExplainInput{Behaviour: b, AccountName: names[b.Object.Account], Run: oa.Run, Fits: oa.Fits,
		ActivityPeriod: func(p string, lag int) string { return p }})
	sc, err := scatter(ctx, e, db, oa, pts, names[b.Object.Account], ex.Formula, maxLag)
	if err != nil {
		return nil
	}
	fb, ok1 := al.Evidence["fixed_before"].(float64)
	rb, ok2 := al.Evidence["rate_before"].(float64)
	driverBefore, hasDriverBefore := al.Evidence["driver_before"].(string)
	if ok1 && ok2 && (!hasDriverBefore || driverBefore == b.Driver) && b.Class != costdrift.Step {
		label := "formula before the change"
		if al.Period != "" {
			label = "formula before " + al.Period
		}
		sc.Previous = &chart.Line{Fixed: fb, Rate: rb, Label: label}
	}
	var buf bytes.Buffer
	if err := sc.WritePNG(&buf, chart.DefaultWidthPx, chart.DefaultHeightPx); err != nil {
		return nil
	}
	return buf.Bytes()
}

// alertsMailCommand is the alerts command with the mail subcommands.
func (a *app) alertsMailCommand() *cobra.Command {
	cmd := a.alertsCommand()
	cmd.AddCommand(a.alertsSendCommand(), a.alertsTestEmailCommand())
	return cmd
}

func (a *app) alertsSendCommand() *cobra.Command {
	return &cobra.Command{
		Use:   "send",
		Short: "Mail the open alerts that are due, as after an analysis",
		Long: `send runs the delivery step of a cycle: each recipient of alerts.recipients gets
one message with the open alerts routed to it that it has not had yet, that
escalated since, or whose delivery failed and is due for a retry. With no
mail.smtp.host the messages are written to the mail.outbox folder.

A digest the server did not take stays queued and is retried after the
backoff; send then exits with status 1, saying how many were not sent.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.withStoreToWrite(cmd.Context(), func(e *env, db *sqlite.DB) error {
				if len(e.cfg.Alerts.Recipients) == 0 {
					return fmt.Errorf("alerts.recipients is empty in %s: nobody to send to", e.cfg.File)
				}
				t, err := a.sendDue(cmd.Context(), e, db, a.out)
				if err != nil {
					return err
				}
				if len(t.failures) > 0 {
					return fmt.Errorf("%d of %d digest(s) could not be sent; they stay queued and are retried after the backoff", len(t.failures), t.digests)
				}
				return nil
			})
		},
	}
}

func (a *app) alertsTestEmailCommand() *cobra.Command {
	var to string
	cmd := &cobra.Command{
		Use:   "test-email",
		Short: "Send a sample alert message through the configured server",
		Long: `test-email sends one sample message, to --to or to every address in
alerts.recipients, through mail.smtp and prints the server's answer; with no
mail.smtp.host it writes the message to the outbox and prints its path. It
reads no store and records nothing.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			var addrs []string
			if to != "" {
				addrs = []string{to}
			} else {
				for _, r := range e.cfg.Alerts.Recipients {
					addrs = append(addrs, r.Email)
				}
			}
			if len(addrs) == 0 {
				return fmt.Errorf("no address: pass --to ADDR or list alerts.recipients in %s", e.cfg.File)
			}
			now := a.now()
			var msgs []*gomail.Msg
			for _, addr := range addrs {
				m, err := mail.Message(sampleDigest(addr, e.cfg.Mail.SMTP.From, now))
				if err != nil {
					return err
				}
				msgs = append(msgs, m)
			}
			if e.cfg.Mail.SMTP.Host == "" {
				for i, m := range msgs {
					p, err := mail.WriteOutbox(e.cfg.Path(e.cfg.Mail.Outbox), m, now, addrs[i])
					if err != nil {
						return err
					}
					fmt.Fprintf(a.out, "test message to %s written to %s (mail.smtp.host is empty)\n", addrs[i], p)
				}
				return nil
			}
			server, err := mailServer(e)
			if err != nil {
				return err
			}
			failed := 0
			for i, res := range server.Send(cmd.Context(), msgs) {
				if res.Err != nil {
					failed++
					fmt.Fprintf(a.out, "test message to %s failed: %s\n", addrs[i], oneLineError(res.Err))
					continue
				}
				fmt.Fprintf(a.out, "test message to %s accepted by %s:%d: %s\n", addrs[i], server.Host, server.Port, res.Answer)
			}
			if failed > 0 {
				return fmt.Errorf("%d of %d test messages not accepted", failed, len(msgs))
			}
			return nil
		},
	}
	cmd.Flags().StringVar(&to, "to", "", "address to send to (default: every alerts.recipients address)")
	return cmd
}

// sampleDigest is the test message: one invented alert, marked as a test.
func sampleDigest(to, from string, now time.Time) mail.Digest {
	return mail.Digest{To: to, From: from, Date: now, Cautions: report.Caution, Subject: "costdrift: test message",
		Items: []mail.Item{{Alert: costdrift.Alert{
			ID: 0, Kind: costdrift.AlertRateShift, Object: "6400/SAMPLE", Severity: costdrift.SeverityWarning, Period: "2025-02",
			Message: "Test message from costdrift: this sample alert shows the layout; no cost changed.",
			Evidence: map[string]any{"test": "sup-F", "p": 0.004, "break": "2025-02", "fixed_before": 1200.0, "fixed_after": 1200.0,
				"rate_before": 3.5, "rate_after": 4.2, "r2": 0.91, "n": 36.0},
		}}}}
}
