package web

import (
	"crypto/rand"
	"encoding/base64"
	"net/http"
	"net/url"
	"sync"
	"time"
)

// sessionCookie names the browser's sign-in with the users file.
const sessionCookie = "costdrift_session"

// sessionLife is how long a sign-in lasts without being used again.
const sessionLife = 8 * time.Hour

// sessions are the sign-ins of this run, kept in memory only: signing out
// ends one at once, and a restart ends them all.
type sessions struct {
	mu sync.Mutex
	by map[string]session
}

type session struct {
	user    string
	expires time.Time
}

func (ss *sessions) start(user string, now time.Time) string {
	b := make([]byte, 32)
	rand.Read(b) // never fails (crypto/rand)
	id := base64.RawURLEncoding.EncodeToString(b)
	ss.mu.Lock()
	defer ss.mu.Unlock()
	if ss.by == nil {
		ss.by = map[string]session{}
	}
	for k, s := range ss.by {
		if now.After(s.expires) {
			delete(ss.by, k)
		}
	}
	ss.by[id] = session{user: user, expires: now.Add(sessionLife)}
	return id
}

// user is who the session id belongs to, "" when none or expired; using
// it extends it.
func (ss *sessions) user(id string, now time.Time) string {
	ss.mu.Lock()
	defer ss.mu.Unlock()
	s, ok := ss.by[id]
	if !ok || now.After(s.expires) {
		delete(ss.by, id)
		return ""
	}
	s.expires = now.Add(sessionLife)
	ss.by[id] = s
	return s.user
}

func (ss *sessions) end(id string) {
	ss.mu.Lock()
	defer ss.mu.Unlock()
	delete(ss.by, id)
}

// sessionUser is who the request's session cookie signs in, "" when none;
// a name taken out of the users file is signed out with it.
func (s *Server) sessionUser(r *http.Request) string {
	c, err := r.Cookie(sessionCookie)
	if err != nil {
		return ""
	}
	name := s.sessions.user(c.Value, time.Now())
	if name == "" {
		return ""
	}
	u, err := ReadUsers(s.opt.UsersFile)
	if err != nil {
		s.opt.Log.Error("web users file", "error", err)
		return ""
	}
	if _, ok := u[name]; !ok {
		s.sessions.end(c.Value)
		return ""
	}
	return name
}

type loginData struct {
	Failed bool
	Next   string
}

// loginPage shows the sign-in form; it is served to anyone, and changes
// nothing but the browser's CSRF cookie.
func (s *Server) loginPage(w http.ResponseWriter, r *http.Request) {
	securityHeaders(w.Header())
	v := view{Title: "Sign in", Nav: "login", User: s.user(r), CSRF: s.csrfToken(w, r), Currency: s.env().Currency.Code,
		Data: loginData{Failed: r.URL.Query().Get("failed") != "", Next: localNext(r.URL.Query().Get("next"))}}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	s.render(w, "login", v)
}

// login checks the form's token, then the name and password against the
// users file, and starts a session.
func (s *Server) login(w http.ResponseWriter, r *http.Request) {
	securityHeaders(w.Header())
	r.Body = http.MaxBytesReader(w, r.Body, 16<<10)
	if err := r.ParseForm(); err != nil {
		s.fail(w, r, http.StatusBadRequest, "the form could not be read")
		return
	}
	if !s.csrfOK(r) {
		s.fail(w, r, http.StatusForbidden, "the form's token is missing or stale: reload the page and submit again")
		return
	}
	u, err := ReadUsers(s.opt.UsersFile)
	if err != nil {
		s.opt.Log.Error("web users file", "error", err)
		s.fail(w, r, http.StatusInternalServerError, "the users file could not be read")
		return
	}
	name, next := r.PostFormValue("name"), localNext(r.PostFormValue("next"))
	if !u.Verify(name, r.PostFormValue("password")) {
		s.opt.Log.Warn("web sign-in refused", "user", name, "remote", r.RemoteAddr)
		http.Redirect(w, r, "/login?failed=1&next="+url.QueryEscape(next), http.StatusSeeOther)
		return
	}
	id := s.sessions.start(name, time.Now())
	http.SetCookie(w, &http.Cookie{Name: sessionCookie, Value: id, Path: "/", HttpOnly: true,
		SameSite: http.SameSiteStrictMode, Secure: s.overTLS(r), MaxAge: int(sessionLife / time.Second)})
	http.Redirect(w, r, next, http.StatusSeeOther)
}

// logout ends the session; it is a form with a token, so that another
// site cannot sign the user out.
func (s *Server) logout(w http.ResponseWriter, r *http.Request) {
	securityHeaders(w.Header())
	r.Body = http.MaxBytesReader(w, r.Body, 16<<10)
	if err := r.ParseForm(); err != nil || !s.csrfOK(r) {
		s.fail(w, r, http.StatusForbidden, "the form's token is missing or stale: reload the page and submit again")
		return
	}
	if c, err := r.Cookie(sessionCookie); err == nil {
		s.sessions.end(c.Value)
	}
	http.SetCookie(w, &http.Cookie{Name: sessionCookie, Value: "", Path: "/", HttpOnly: true,
		SameSite: http.SameSiteStrictMode, Secure: s.overTLS(r), MaxAge: -1})
	http.Redirect(w, r, "/login", http.StatusSeeOther)
}

// localNext keeps the page to go to after signing in on this site: a path
// of its own, never another host ("//host" or "/\host").
func localNext(next string) string {
	if len(next) < 1 || next[0] != '/' || (len(next) > 1 && (next[1] == '/' || next[1] == '\\')) {
		return "/"
	}
	return next
}
