package web

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// actionFunc records one decision under user and says where the browser
// goes next.
type actionFunc func(ctx context.Context, e *pipeline.Env, r *http.Request, user string) (next string, err error)

// badInput is a refusal of what the form said, answered 400 with the
// pipeline's one line.
type badInput struct{ error }

// action serves a form's POST: the CSRF token checked first, the decision
// recorded under the signed-in user, then a redirect (303) to a page that
// shows it, so that reloading does not decide twice.
func (s *Server) action(do actionFunc) http.Handler {
	return s.guard(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		e := s.env()
		r.Body = http.MaxBytesReader(w, r.Body, 64<<10)
		if err := r.ParseForm(); err != nil {
			s.fail(w, r, http.StatusBadRequest, "the form could not be read")
			return
		}
		if !s.csrfOK(r) {
			s.fail(w, r, http.StatusForbidden, "the form's token is missing or stale: reload the page and submit again")
			return
		}
		next, err := do(r.Context(), e, r, s.user(r))
		var bad badInput
		switch {
		case errors.As(err, &bad):
			s.fail(w, r, http.StatusBadRequest, bad.Error())
			return
		case err != nil:
			s.opt.Log.Error("web action", "path", r.URL.Path, "error", err)
			s.fail(w, r, http.StatusBadRequest, err.Error())
			return
		}
		http.Redirect(w, r, next, http.StatusSeeOther)
	}))
}

// fail answers a refused action with the reason on a page of its own.
func (s *Server) fail(w http.ResponseWriter, r *http.Request, code int, msg string) {
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(code)
	s.render(w, "error", view{Title: "Not done", User: s.user(r), Currency: s.env().Currency.Code, Data: msg})
}

func (s *Server) ack(ctx context.Context, e *pipeline.Env, r *http.Request, user string) (string, error) {
	id, err := strconv.ParseInt(r.PostFormValue("alert"), 10, 64)
	if err != nil || id <= 0 {
		return "", badInput{errors.New("no alert named")}
	}
	if err := pipeline.Acknowledge(ctx, e, s.db, id, r.PostFormValue("until"), user, r.PostFormValue("note")); err != nil {
		return "", badInput{err}
	}
	return "/alerts?status=acknowledged#alert-" + strconv.FormatInt(id, 10), nil
}

func (s *Server) pin(ctx context.Context, e *pipeline.Env, r *http.Request, user string) (string, error) {
	f := r.PostFormValue
	lag := 0
	if v := strings.TrimSpace(f("lag")); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil {
			return "", badInput{fmt.Errorf("lag: %q is not a whole number of periods", v)}
		}
		lag = n
	}
	in := pipeline.PinInput{Object: f("object"), Class: f("class"), Driver: strings.TrimSpace(f("driver")), Lag: lag,
		Fixed: strings.TrimSpace(f("fixed")), Rate: strings.TrimSpace(f("rate")), Until: strings.TrimSpace(f("until")),
		Reason: f("reason"), By: user}
	if _, err := pipeline.Pin(ctx, e, s.db, in); err != nil {
		return "", badInput{err}
	}
	return objectLink(in.Object), nil
}

func (s *Server) exclude(ctx context.Context, e *pipeline.Env, r *http.Request, user string) (string, error) {
	object := r.PostFormValue("object")
	periods := strings.FieldsFunc(r.PostFormValue("periods"), func(c rune) bool { return c == ',' || c == ' ' })
	if len(periods) == 0 {
		return "", badInput{errors.New("no period given: name the periods to leave out, such as 2025-03")}
	}
	if err := pipeline.Exclude(ctx, e, s.db, object, periods, user, r.PostFormValue("reason")); err != nil {
		return "", badInput{err}
	}
	return objectLink(object), nil
}

func (s *Server) approve(ctx context.Context, e *pipeline.Env, r *http.Request, user string) (string, error) {
	object := r.PostFormValue("object")
	var err error
	if r.PostFormValue("decision") == "decline" {
		err = pipeline.Decline(ctx, e, s.db, object, user, r.PostFormValue("reason"))
	} else {
		err = pipeline.Approve(ctx, e, s.db, object, user, r.PostFormValue("reason"))
	}
	if err != nil {
		return "", badInput{err}
	}
	return "/proposals", nil
}

func objectLink(object string) string { return "/object?" + url.Values{"o": {object}}.Encode() }

// alertStatuses are the lists the alerts page offers.
var alertStatuses = []string{costdrift.AlertOpen, costdrift.AlertAcknowledged, costdrift.AlertResolved, sqlite.AlertStatusAll}

type alertsData struct {
	Status   string
	Statuses []string
	Alerts   []pipeline.AlertView
}

func (s *Server) alerts(ctx context.Context, e *pipeline.Env, r *http.Request) (string, string, any, error) {
	status := r.URL.Query().Get("status")
	known := false
	for _, st := range alertStatuses {
		known = known || st == status
	}
	if !known {
		status = costdrift.AlertOpen
	}
	as, err := pipeline.ViewAlerts(ctx, s.db, status)
	if err != nil {
		return "", "", nil, err
	}
	return "Alerts", "alerts", alertsData{Status: status, Statuses: alertStatuses, Alerts: as}, nil
}

type proposalsData struct {
	Required  bool
	Proposals []pipeline.ProposalView
}

func (s *Server) proposals(ctx context.Context, e *pipeline.Env, _ *http.Request) (string, string, any, error) {
	ps, required, err := pipeline.ViewProposals(ctx, e, s.db)
	if err != nil {
		return "", "", nil, err
	}
	return "Proposals", "proposals", proposalsData{Required: required, Proposals: ps}, nil
}

type budgetsData struct {
	Plan, Name string
	pipeline.Budgets
}

func (s *Server) budgets(ctx context.Context, _ *pipeline.Env, r *http.Request) (string, string, any, error) {
	plan, name := r.URL.Query().Get("plan"), r.URL.Query().Get("variance")
	b, err := pipeline.ViewBudgets(ctx, s.db, plan, name)
	if err != nil {
		return "", "", nil, err
	}
	return "Budgets and variances", "budgets", budgetsData{Plan: plan, Name: name, Budgets: b}, nil
}

// sourcesRuns and sourcesRejects bound the sources page.
const (
	sourcesRuns    = 50
	sourcesRejects = 200
)

func (s *Server) sources(ctx context.Context, e *pipeline.Env, _ *http.Request) (string, string, any, error) {
	src, err := pipeline.ViewSources(ctx, e, s.db, sourcesRuns, sourcesRejects)
	if err != nil {
		return "", "", nil, err
	}
	return "Sources", "sources", src, nil
}
