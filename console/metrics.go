package console

import (
	"net/http"
	"path/filepath"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"benchtender/agent"
	"benchtender/record"
)

// Metrics are the campaign's figures for lab IT in the Prometheus text
// format (github.com/prometheus/client_golang, the reference client),
// on the console's /metrics. Counters count from the daemon's start;
// gauges are read from the journal when scraped.
type Metrics struct {
	reg       *prometheus.Registry
	entries   *prometheus.CounterVec
	planSecs  prometheus.Histogram
	scanLag   prometheus.Histogram
	watchTrbl prometheus.Counter
}

// NewMetrics registers the campaign's metrics; the gauges replay the
// journal in cfg's state folder once at every scrape.
func NewMetrics(cfg agent.Config) *Metrics {
	reg := prometheus.NewRegistry()
	labels := prometheus.Labels{"campaign": cfg.Campaign.Name}
	m := &Metrics{
		reg: reg,
		entries: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "benchtender_journal_entries_total", ConstLabels: labels,
			Help: "Journal entries recorded since the daemon started, by kind (ingest, revision, quarantine, duplicate, proposal, hold, signoff-approve, signoff-reject, handoff, handoff-ok, ...).",
		}, []string{"kind"}),
		planSecs: prometheus.NewHistogram(prometheus.HistogramOpts{
			Name: "benchtender_plan_seconds", ConstLabels: labels,
			Help:    "Time of one planning step: fitting the surrogate and choosing the next setpoint.",
			Buckets: []float64{0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30, 100},
		}),
		scanLag: prometheus.NewHistogram(prometheus.HistogramOpts{
			Name: "benchtender_ingest_lag_seconds", ConstLabels: labels,
			Help:    "Time from a result file's last change to its ingest (settle time included).",
			Buckets: []float64{0.5, 1, 2, 3, 5, 10, 30, 60, 300},
		}),
		watchTrbl: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "benchtender_watcher_errors_total", ConstLabels: labels,
			Help: "Errors the folder watcher met and recovered from (unreadable folder, lost events).",
		}),
	}
	reg.MustRegister(m.entries, m.planSecs, m.scanLag, m.watchTrbl)
	reg.MustRegister(newStateCollector(filepath.Join(cfg.Campaign.StateDir, "journal.log"), labels))
	return m
}

// Entry counts a journal entry; give it to agent.Options.Notify. A
// proposal counts as a hold too when held, an ingest of a later result
// for a run as a revision too; a sign-off counts by its action, as an
// approval or a rejection.
func (m *Metrics) Entry(e record.Entry) {
	kind := e.Kind
	switch {
	case e.Kind == record.KindProposal && e.Decision != nil && e.Decision.Verdict == "hold":
		m.entries.WithLabelValues("hold").Inc()
	case e.Kind == record.KindSignoff:
		kind = "signoff-" + e.Action
	case e.Kind == record.KindIngest && e.Revision > 0:
		m.entries.WithLabelValues("revision").Inc()
	}
	m.entries.WithLabelValues(kind).Inc()
}

// Planned implements agent.Observer.
func (m *Metrics) Planned(d time.Duration) { m.planSecs.Observe(d.Seconds()) }

// Ingested implements agent.Observer.
func (m *Metrics) Ingested(lag time.Duration) { m.scanLag.Observe(lag.Seconds()) }

// WatchTrouble implements agent.Observer.
func (m *Metrics) WatchTrouble(error) { m.watchTrbl.Inc() }

// Handler serves the metrics.
func (m *Metrics) Handler() http.Handler {
	return promhttp.HandlerFor(m.reg, promhttp.HandlerOpts{})
}

// stateCollector reports the campaign's state as gauges, replaying the
// journal once per scrape.
type stateCollector struct {
	journal                    string
	held, inFlight, done, stop *prometheus.Desc
}

func newStateCollector(journal string, labels prometheus.Labels) *stateCollector {
	d := func(name, help string) *prometheus.Desc { return prometheus.NewDesc(name, help, nil, labels) }
	return &stateCollector{journal: journal,
		held:     d("benchtender_runs_held", "Moves waiting for sign-off now."),
		inFlight: d("benchtender_runs_in_flight", "Runs handed off and awaiting their result."),
		done:     d("benchtender_runs_done", "Runs with a recorded result."),
		stop:     d("benchtender_all_stop", "1 while an all-stop halts every handoff."),
	}
}

func (c *stateCollector) Describe(ch chan<- *prometheus.Desc) {
	ch <- c.held
	ch <- c.inFlight
	ch <- c.done
	ch <- c.stop
}

func (c *stateCollector) Collect(ch chan<- prometheus.Metric) {
	es, err := record.ReadJournal(c.journal)
	if err != nil {
		ch <- prometheus.NewInvalidMetric(c.held, err)
		return
	}
	st := record.Replay(es)
	stop := 0.0
	if st.AllStop != "" {
		stop = 1
	}
	for _, m := range []struct {
		d *prometheus.Desc
		v float64
	}{{c.held, float64(len(st.Held()))}, {c.inFlight, float64(len(st.InFlight()))}, {c.done, float64(len(st.TrialRuns()))}, {c.stop, stop}} {
		ch <- prometheus.MustNewConstMetric(m.d, prometheus.GaugeValue, m.v)
	}
}
