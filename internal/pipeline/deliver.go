package pipeline

import (
	"bytes"
	"context"
	"fmt"
	"runtime"
	"strings"
	"sync"
	"time"

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
func mailServer(e *Env) (mail.Server, error) {
	c := e.Config.Mail.SMTP
	s := mail.Server{Host: c.Host, Port: c.Port, TLS: c.TLS, Username: c.Username,
		ConnectTimeout: smtpConnectTimeout, SendTimeout: smtpSendTimeout}
	if c.Username != "" {
		pw, err := mail.Password(c.PasswordEnv, e.Config.Path(c.PasswordFile))
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

// Delivery is one recipient's digest of a delivery step and what became
// of it: Answer is the server's answer (or where the outbox file went);
// Err says why it was not sent, Interrupted that the step was stopped
// before it went out (it is due again at the next cycle, not counted as
// failed).
type Delivery struct {
	Recipient   string
	Alerts      int
	Answer      string
	Err         string
	Interrupted bool
}

// DeliveryResult is what one delivery step did: each recipient's digest,
// sent or not.
type DeliveryResult struct {
	Digests []Delivery
}

// Failed lists the digests not delivered (interrupted ones excluded).
func (r DeliveryResult) Failed() []Delivery {
	var out []Delivery
	for _, d := range r.Digests {
		if d.Err != "" && !d.Interrupted {
			out = append(out, d)
		}
	}
	return out
}

// Sent counts the digests delivered.
func (r DeliveryResult) Sent() int {
	n := 0
	for _, d := range r.Digests {
		if d.Err == "" {
			n++
		}
	}
	return n
}

// Deliver sends the due digests: for each recipient, the open alerts
// routed to it that are due (never sent, escalated above what was sent, or
// failed and past their backoff) go into one digest, sent through the
// configured server or written to the outbox; the store records each
// outcome per alert and recipient, and a failed one is retried after the
// backoff. A failure to send is in the result, not the error, so that a
// mail server that is down does not fail the analysis before it: only the
// store's errors, and an interruption, are returned. A digest cut off
// because ctx ended is not recorded as failed: it is due again at the next
// cycle.
func Deliver(ctx context.Context, e *Env, db *sqlite.DB) (DeliveryResult, error) {
	if len(e.Config.Alerts.Recipients) == 0 {
		return DeliveryResult{}, nil
	}
	now := e.Now()
	batch, err := dueDigests(ctx, e, db, now)
	if err != nil || len(batch) == 0 {
		return DeliveryResult{}, err
	}
	results := sendDigests(ctx, e, batch, now)
	return recordOutcomes(ctx, db, batch, results, now)
}

// dueDigests builds each recipient's digest of the open alerts routed to
// it that are due. Each alert's details (its object's class and driver,
// its chart) are read and drawn once, whatever the number of recipients.
func dueDigests(ctx context.Context, e *Env, db *sqlite.DB, now time.Time) ([]outgoing, error) {
	open, err := db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	if err != nil {
		return nil, fmt.Errorf("mail: %w", err)
	}
	past, err := db.Deliveries(ctx, "")
	if err != nil {
		return nil, fmt.Errorf("mail: %w", err)
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return nil, fmt.Errorf("mail: %w", err)
	}
	objects, current, err := alertObjects(ctx, db, open)
	if err != nil {
		return nil, fmt.Errorf("mail: %w", err)
	}
	// The alerts due to each recipient first, so that the charts of all
	// of them are drawn from one read of the ledger.
	type due struct {
		to     string
		alerts []costdrift.Alert
	}
	var dues []due
	var needed []costdrift.Alert
	seen := map[int64]bool{}
	for _, r := range e.Config.Alerts.Recipients {
		rcpt := mail.Recipient{Email: r.Email, CostCenters: r.CostCenters, Accounts: r.Accounts,
			MinSeverity: costdrift.Severity(r.MinSeverity)}
		d := due{to: r.Email}
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
			d.alerts = append(d.alerts, al)
			if !seen[al.ID] {
				seen[al.ID] = true
				needed = append(needed, al)
			}
		}
		dues = append(dues, d)
	}
	digests := make([][]costdrift.Alert, len(dues))
	for i, d := range dues {
		digests[i] = d.alerts
	}
	details := alertItems(ctx, e, db, needed, digests, objects, current, names)
	var batch []outgoing
	for _, d := range dues {
		if len(d.alerts) == 0 {
			continue
		}
		items := make([]mail.Item, len(d.alerts))
		for i, al := range d.alerts {
			items[i] = details[al.ID]
		}
		msg, err := mail.Message(mail.Digest{To: d.to, From: e.Config.Mail.SMTP.From, Items: items, Date: now, Cautions: report.Caution})
		batch = append(batch, outgoing{to: d.to, items: items, msg: msg, buildE: err})
	}
	return batch, nil
}

// alertItems is each alert as a digest shows it: an object's alert with the
// object's account name, class and driver (of its current behaviour) and
// chart. Only the charts some digest embeds are drawn: each digest's
// mail.MaxCharts most important alerts whose object has a current
// behaviour; only their objects' analyses are read from the store. The
// costs the charts draw are read for all of them in one pass over the
// ledger, not one pass per chart.
func alertItems(ctx context.Context, e *Env, db *sqlite.DB, alerts []costdrift.Alert, digests [][]costdrift.Alert,
	objects map[string]costdrift.CostObject, current map[string]costdrift.Behaviour, names map[string]string) map[int64]mail.Item {
	out := make(map[int64]mail.Item, len(alerts))
	for _, al := range alerts {
		it := mail.Item{Alert: al}
		if !mail.SourceKind(al.Kind) {
			o := objects[al.Object]
			it.Object, it.AccountName = o, names[o.Account]
			if b, ok := current[al.Object]; ok {
				it.Class, it.Driver = string(b.Class), b.Driver
			}
		}
		out[al.ID] = it
	}
	drawable := func(a costdrift.Alert) bool {
		_, ok := current[a.Object]
		return ok && !mail.SourceKind(a.Kind)
	}
	draw := map[int64]bool{}
	for _, d := range digests {
		for id := range mail.Important(d, mail.MaxCharts, drawable) {
			draw[id] = true
		}
	}
	analyses := map[int64]sqlite.ObjectAnalysis{}
	charted := map[bool][]costdrift.CostObject{} // by account grain
	from, to := map[bool]string{}, map[bool]string{}
	for _, al := range alerts {
		if !draw[al.ID] {
			continue
		}
		oa, err := db.ObjectAnalysis(ctx, al.Object)
		if err != nil {
			continue // drawn without a chart
		}
		analyses[al.ID] = oa
		g := oa.Run.Grain == costdrift.GrainAccount
		charted[g] = append(charted[g], oa.Behaviour.Object)
		if from[g] == "" || oa.Run.WindowFrom < from[g] {
			from[g] = oa.Run.WindowFrom
		}
		if oa.Run.WindowTo > to[g] {
			to[g] = oa.Run.WindowTo
		}
	}
	readers := map[bool]costReader{}
	for g, os := range charted {
		readers[g] = db.CostPerPeriod // one object at a time, if the read of all fails
		if lc, err := db.CostsPerPeriod(ctx, os, g, from[g], to[g]); err == nil {
			readers[g] = lc.CostPerPeriod
		}
	}
	// Drawing a chart takes far longer than reading its data: on every
	// core.
	charts := make([][]byte, len(alerts))
	work := make(chan int)
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				oa := analyses[alerts[i].ID]
				charts[i] = alertChart(ctx, e, db, readers[oa.Run.Grain == costdrift.GrainAccount], alerts[i], oa, names)
			}
		}()
	}
	for i, al := range alerts {
		if _, ok := analyses[al.ID]; ok {
			work <- i
		}
	}
	close(work)
	wg.Wait()
	for i, al := range alerts {
		if charts[i] != nil {
			it := out[al.ID]
			it.Chart = charts[i]
			out[al.ID] = it
		}
	}
	return out
}

// sendDigests sends the digests through the configured server, or writes
// them to the outbox when no server is set; one result per digest.
func sendDigests(ctx context.Context, e *Env, batch []outgoing, now time.Time) []mail.Result {
	results := make([]mail.Result, len(batch))
	if e.Config.Mail.SMTP.Host == "" {
		dir := e.Config.Path(e.Config.Mail.Outbox)
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

	return results
}

// recordOutcomes records in the store what became of each digest: sent, or
// failed and due again after the backoff. What reached the server is
// recorded even when ctx ended meanwhile, so that it is not sent twice; a
// digest cut off by the end of ctx is not recorded as failed.
func recordOutcomes(ctx context.Context, db *sqlite.DB, batch []outgoing, results []mail.Result, now time.Time) (DeliveryResult, error) {
	var t DeliveryResult
	record, cancel := context.WithTimeout(context.WithoutCancel(ctx), 10*time.Second)
	defer cancel()
	interrupted, cut := ctx.Err(), 0
	for i, o := range batch {
		res := results[i]
		d := Delivery{Recipient: o.to, Alerts: len(o.items), Answer: res.Answer}
		switch {
		case res.Err == nil:
			sent := make(map[int64]costdrift.Severity, len(o.items))
			for _, it := range o.items {
				sent[it.Alert.ID] = it.Alert.Severity
			}
			if err := db.RecordDeliverySent(record, o.to, sent, now); err != nil {
				return t, fmt.Errorf("mail: %w", err)
			}
		case interrupted != nil:
			cut++
			d.Err, d.Interrupted = "interrupted", true
		default:
			ids := make([]int64, len(o.items))
			for j, it := range o.items {
				ids[j] = it.Alert.ID
			}
			d.Err = oneLineError(res.Err)
			if err := db.RecordDeliveryFailed(record, o.to, ids, d.Err, now, mail.Backoff); err != nil {
				return t, fmt.Errorf("mail: %w", err)
			}
		}
		t.Digests = append(t.Digests, d)
	}
	if cut > 0 {
		return t, fmt.Errorf("mail: %d digest(s) not sent: %w", cut, interrupted)
	}
	return t, nil
}

// alertObjects maps the Object of each object alert to its account and
// cost centre as the analysis stored them: "6100/01/PLANT/2" is account
// 6100/01 in cost centre PLANT/2, which no split at a "/" can tell. An
// object the store has no behaviour for is split at its first "/". It
// returns the objects' current behaviours too, in brief: class, driver and
// lag (sqlite.DB.CurrentChoiceOf).
func alertObjects(ctx context.Context, db *sqlite.DB, open []costdrift.Alert) (map[string]costdrift.CostObject, map[string]costdrift.Behaviour, error) {
	out := make(map[string]costdrift.CostObject, len(open))
	if len(open) == 0 {
		return out, nil, nil
	}
	names := make([]string, 0, len(open))
	for _, al := range open {
		if !mail.SourceKind(al.Kind) {
			names = append(names, al.Object)
		}
	}
	current, err := db.CurrentChoiceOf(ctx, names)
	if err != nil {
		return nil, nil, err
	}
	for _, al := range open {
		if mail.SourceKind(al.Kind) {
			continue
		}
		o := mail.SplitObject(al.Object)
		if b, ok := current[al.Object]; ok {
			o = b.Object
		}
		out[al.Object] = o
	}
	return out, current, nil
}

func oneLineError(err error) string {
	return strings.Join(strings.Fields(err.Error()), " ")
}

// alertChart draws the chart of the alert's object as `costdrift explain
// --chart` does: the scatter, with the formula before the change dashed
// when the evidence has it on the same driver, or for an object without a
// driver its cost over time; nil when the store lacks the data (no
// analysis, no points).
func alertChart(ctx context.Context, e *Env, db *sqlite.DB, costsOf costReader, al costdrift.Alert, oa sqlite.ObjectAnalysis, names map[string]string) []byte {
	b := oa.Behaviour
	maxLag := widestLag(oa.Settings, b.Lag)
	if b.Driver == "" {
		ex := report.Explain(report.ExplainInput{Behaviour: b, AccountName: names[b.Object.Account], Run: oa.Run, Fits: oa.Fits})
		tl, err := timeline(ctx, e, db, costsOf, oa, names[b.Object.Account], ex.Formula, maxLag)
		if err != nil {
			return nil
		}
		var buf bytes.Buffer
		if err := tl.WritePNG(&buf, chart.DefaultWidthPx, chart.DefaultHeightPx); err != nil {
			return nil
		}
		return buf.Bytes()
	}
	pts, err := analysedPoints(ctx, e, db, costsOf, oa, maxLag)
	if err != nil {
		return nil
	}
	ex := report.Explain(report.ExplainInput{Behaviour: b, AccountName: names[b.Object.Account], Run: oa.Run, Fits: oa.Fits,
		ActivityPeriod: func(p string, lag int) string { return p }})
	sc, err := scatter(ctx, e, db, oa, pts, names[b.Object.Account], ex.Formula, maxLag)
	if err != nil {
		return nil
	}
	ev := al.Evidence
	sameDriver := ev.DriverBefore == nil || *ev.DriverBefore == b.Driver
	if ev.FixedBefore != nil && ev.RateBefore != nil && sameDriver && b.Class != costdrift.Step {
		label := "formula before the change"
		if al.Period != "" {
			label = "formula before " + al.Period
		}
		sc.Previous = &chart.Line{Fixed: *ev.FixedBefore, Rate: *ev.RateBefore, Label: label}
	}
	var buf bytes.Buffer
	if err := sc.WritePNG(&buf, chart.DefaultWidthPx, chart.DefaultHeightPx); err != nil {
		return nil
	}
	return buf.Bytes()
}

// sampleDigest is the test message: one invented alert, marked as a test.
func sampleDigest(to, from string, now time.Time) mail.Digest {
	return mail.Digest{To: to, From: from, Date: now, Cautions: report.Caution, Subject: "costdrift: test message",
		Items: []mail.Item{{Alert: costdrift.Alert{
			ID: 0, Kind: costdrift.AlertRateShift, Object: "6400/SAMPLE", Severity: costdrift.SeverityWarning, Period: "2025-02",
			Message: "Test message from costdrift: this sample alert shows the layout; no cost changed.",
			Evidence: costdrift.AlertEvidence{Test: new("sup-F"), P: new(0.004), Break: new("2025-02"), FixedBefore: new(1200.0),
				FixedAfter: new(1200.0), RateBefore: new(3.5), RateAfter: new(4.2), R2: new(0.91), N: new(36)},
		}}}}
}

// MailFailures is the state of alert mail as the store records it:
// deliveries (alert and recipient) of open alerts whose latest attempt
// failed, when the earliest of those attempts was, and the latest error.
type MailFailures struct {
	Failing   int
	Earliest  time.Time
	LastError string
}

// FailingMail reads from the store whether alert mail is failing. The
// store, not the latest cycle, decides, because a failed delivery waits
// for its backoff through cycles that try nothing, and is over only when a
// retry succeeds or its alert is resolved. Each attempt's time is its next
// attempt less its backoff.
func FailingMail(ctx context.Context, db *sqlite.DB) (MailFailures, error) {
	var f MailFailures
	open, err := db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	if err != nil {
		return f, err
	}
	past, err := db.Deliveries(ctx, "")
	if err != nil {
		return f, err
	}
	var latest time.Time
	for _, al := range open {
		for _, dl := range past[al.ID] {
			if dl.Status != sqlite.DeliveryFailed {
				continue
			}
			f.Failing++
			at := dl.NextAttempt.Add(-mail.Backoff(dl.Attempts))
			if f.Earliest.IsZero() || at.Before(f.Earliest) {
				f.Earliest = at
			}
			if !at.Before(latest) {
				latest, f.LastError = at, dl.LastError
			}
		}
	}
	return f, nil
}

// SendTest sends the sample message to each address through the
// configured server, or writes it to the outbox when no server is set; it
// reads no store and records nothing. Each address's outcome is returned.
func SendTest(ctx context.Context, e *Env, addrs []string) ([]Delivery, error) {
	now := e.Now()
	var msgs []*gomail.Msg
	for _, addr := range addrs {
		m, err := mail.Message(sampleDigest(addr, e.Config.Mail.SMTP.From, now))
		if err != nil {
			return nil, err
		}
		msgs = append(msgs, m)
	}
	out := make([]Delivery, len(addrs))
	if e.Config.Mail.SMTP.Host == "" {
		for i, m := range msgs {
			p, err := mail.WriteOutbox(e.Config.Path(e.Config.Mail.Outbox), m, now, addrs[i])
			if err != nil {
				return out[:i], err
			}
			out[i] = Delivery{Recipient: addrs[i], Alerts: 1, Answer: "written to " + p + " (mail.smtp.host is empty)"}
		}
		return out, nil
	}
	server, err := mailServer(e)
	if err != nil {
		return nil, err
	}
	for i, res := range server.Send(ctx, msgs) {
		out[i] = Delivery{Recipient: addrs[i], Alerts: 1, Answer: fmt.Sprintf("accepted by %s:%d: %s", server.Host, server.Port, res.Answer)}
		if res.Err != nil {
			out[i].Err = oneLineError(res.Err)
		}
	}
	return out, nil
}
