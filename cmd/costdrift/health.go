package main

import (
	"encoding/json"
	"fmt"
	"net/http"
	"time"

	"github.com/prometheus/client_golang/prometheus/promhttp"

	"github.com/costdrift/costdrift/internal/pipeline"
)

// healthJSON is the body of /healthz.
type healthJSON struct {
	Status      string `json:"status"` // ok | degraded | unhealthy
	Reason      string `json:"reason"`
	LastCycle   int64  `json:"last_cycle,omitempty"`
	LastStatus  string `json:"last_status,omitempty"`
	LastError   string `json:"last_error,omitempty"`
	LastSuccess string `json:"last_success,omitempty"` // RFC 3339, UTC
	MaxAge      string `json:"max_age"`                // two schedule intervals
	// While alert mail is failing: the deliveries (alert and recipient) of
	// open alerts whose latest attempt failed, since when, and the latest
	// error.
	MailFailing      int    `json:"mail_failing,omitempty"`
	MailFailingSince string `json:"mail_failing_since,omitempty"` // RFC 3339, UTC
	MailError        string `json:"mail_error,omitempty"`
}

func (d *daemon) handler() http.Handler {
	mux := http.NewServeMux()
	mux.HandleFunc("GET /healthz", func(w http.ResponseWriter, r *http.Request) {
		h, ok := d.health(time.Now())
		w.Header().Set("Content-Type", "application/json")
		if !ok {
			w.WriteHeader(http.StatusServiceUnavailable)
		}
		json.NewEncoder(w).Encode(h)
	})
	mux.Handle("GET /metrics", promhttp.HandlerFor(d.m.reg, promhttp.HandlerOpts{}))
	if d.view != nil {
		d.view.Mount(mux)
	}
	return mux
}

// env is the config in force, for the web view: a reload replaces it.
func (d *daemon) env() *pipeline.Env {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.e
}

// health is healthy while the latest finished cycle succeeded and finished
// within two schedule intervals of now: one missed tick is tolerated, two
// are not. A healthy daemon whose alert mail is failing is "degraded",
// still with HTTP 200: its cycles do their work and queue the mail, and a
// restart, which a 503 would prompt a supervisor to do, cannot bring the
// mail server back; a monitor tells it by the status field (or by
// costdrift_mail_delivery_failures_total).
func (d *daemon) health(now time.Time) (healthJSON, bool) {
	d.mu.Lock()
	defer d.mu.Unlock()
	next := d.plan.Next(now)
	maxAge := 2 * d.plan.Next(next).Sub(next)
	h := healthJSON{MaxAge: maxAge.String(), LastCycle: d.last.ID, LastStatus: d.last.Status, LastError: d.last.Error}
	if !d.good.IsZero() {
		h.LastSuccess = d.good.UTC().Format(time.RFC3339)
	}
	if d.mailFailing > 0 {
		h.MailFailing, h.MailFailingSince, h.MailError = d.mailFailing, d.mailSince.UTC().Format(time.RFC3339), d.mailError
	}
	h.Status = "unhealthy"
	switch {
	case d.last.ID == 0:
		h.Reason = "no cycle has finished yet"
	case d.last.Status != "ok":
		h.Reason = "the latest cycle failed"
	case now.Sub(d.good) > maxAge:
		h.Reason = fmt.Sprintf("the latest successful cycle finished %s ago, more than two schedule intervals (%s)",
			now.Sub(d.good).Round(time.Second), maxAge)
	case d.mailFailing > 0:
		h.Status = "degraded"
		deliveries := "deliveries"
		if d.mailFailing == 1 {
			deliveries = "delivery"
		}
		h.Reason = fmt.Sprintf("mail delivery failing since %s: %d %s of open alerts not sent, retried after the backoff; the cycles succeed",
			h.MailFailingSince, d.mailFailing, deliveries)
		return h, true
	default:
		h.Status, h.Reason = "ok", "the latest cycle succeeded on time"
		return h, true
	}
	return h, false
}
