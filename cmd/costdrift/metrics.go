package main

import (
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
)

// metrics is what the daemon exports on /metrics. It has a registry of its
// own, so that nothing a library registers globally leaks into it.
type metrics struct {
	reg             *prometheus.Registry
	cycles          *prometheus.CounterVec
	ticksSkipped    prometheus.Counter
	stageSeconds    *prometheus.HistogramVec
	rowsSynced      prometheus.Counter
	rowsRejected    prometheus.Counter
	alertsOpen      *prometheus.GaugeVec
	deliveryFailing prometheus.Gauge
	mailFailures    prometheus.Counter
	lastSuccess     prometheus.Gauge
}

func newMetrics() *metrics {
	m := &metrics{
		reg: prometheus.NewRegistry(),
		cycles: prometheus.NewCounterVec(prometheus.CounterOpts{Name: "costdrift_cycles_total",
			Help: "Cycles (sync, analysis, alerts, mail) finished, by status (ok, failed)."}, []string{"status"}),
		ticksSkipped: prometheus.NewCounter(prometheus.CounterOpts{Name: "costdrift_ticks_skipped_total",
			Help: "Scheduled ticks skipped because the previous cycle was still running."}),
		stageSeconds: prometheus.NewHistogramVec(prometheus.HistogramOpts{Name: "costdrift_stage_duration_seconds",
			Help:    "Time each stage of a cycle took (sync, analyze, cycle for the whole).",
			Buckets: prometheus.ExponentialBuckets(0.01, 4, 10)}, []string{"stage"}),
		rowsSynced: prometheus.NewCounter(prometheus.CounterOpts{Name: "costdrift_rows_synced_total",
			Help: "Rows written to the store (new or changed) by the daemon's syncs."}),
		rowsRejected: prometheus.NewCounter(prometheus.CounterOpts{Name: "costdrift_rows_rejected_total",
			Help: "Source rows the daemon's syncs could not use."}),
		alertsOpen: prometheus.NewGaugeVec(prometheus.GaugeOpts{Name: "costdrift_alerts_open",
			Help: "Open alerts after the latest cycle, by kind."}, []string{"kind"}),
		deliveryFailing: prometheus.NewGauge(prometheus.GaugeOpts{Name: "costdrift_deliveries_failing",
			Help: "Alert deliveries (alert and recipient) whose latest attempt failed, after the latest cycle."}),
		mailFailures: prometheus.NewCounter(prometheus.CounterOpts{Name: "costdrift_mail_delivery_failures_total",
			Help: "Alert digests the daemon could not deliver: one per recipient and failed attempt."}),
		lastSuccess: prometheus.NewGauge(prometheus.GaugeOpts{Name: "costdrift_last_success_timestamp_seconds",
			Help: "Unix time the latest successful cycle finished; 0 before the first."}),
	}
	m.reg.MustRegister(m.cycles, m.ticksSkipped, m.stageSeconds, m.rowsSynced, m.rowsRejected, m.alertsOpen,
		m.deliveryFailing, m.mailFailures, m.lastSuccess,
		collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	// Both outcomes show from the start, so that a rate over them is defined.
	m.cycles.WithLabelValues("ok")
	m.cycles.WithLabelValues("failed")
	return m
}

// observe takes a cycle's figures.
func (m *metrics) observe(r *pipeline.CycleResult) {
	loaded, rejected := r.RowsSynced()
	m.rowsSynced.Add(float64(loaded))
	m.rowsRejected.Add(float64(rejected))
	for _, stage := range []string{"sync", "analyze"} {
		if d, ok := r.Cycle.Stages[stage]; ok {
			m.stageSeconds.WithLabelValues(stage).Observe(d.Seconds())
		}
	}
	m.mailFailures.Add(float64(len(r.Mail.Failed())))
	if r.Counted {
		m.alertsOpen.Reset()
		for _, k := range costdrift.AlertKinds() {
			m.alertsOpen.WithLabelValues(string(k)).Set(float64(r.OpenAlerts[k]))
		}
		m.deliveryFailing.Set(float64(r.DeliveriesFailing))
	}
	m.stageSeconds.WithLabelValues("cycle").Observe(r.Duration.Seconds())
	m.cycles.WithLabelValues(r.Cycle.Status).Inc()
	if r.Err == nil {
		m.lastSuccess.Set(float64(time.Now().Unix()))
	}
}
