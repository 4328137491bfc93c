// Package web is the web view for the cost accountant: server-rendered
// pages over the store, each a call into the application layer
// (internal/pipeline) and a template; decisions are forms that POST. It
// holds no logic of the product's own: what a page shows is what the
// commands print.
package web

import (
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"embed"
	"encoding/base64"
	"errors"
	"fmt"
	"html/template"
	"io/fs"
	"log/slog"
	"net"
	"net/http"
	"net/url"
	"strings"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/sqlite"
)

//go:embed templates/*.html static/*
var assets embed.FS

// Options are how the view is served.
type Options struct {
	// AuthHeader names the header a trusted reverse proxy sets to the
	// signed-in user's name; "" serves loopback clients only, as the
	// local user.
	AuthHeader string
	// UsersFile is a file of names and bcrypt hashes (see AddUser) that
	// users sign in against with a form; "" offers no sign-in form.
	UsersFile string
	// LocalUser is who a loopback client's decisions are recorded under
	// when there is no AuthHeader.
	LocalUser string
	Log       *slog.Logger
}

// Server serves the pages of one store.
type Server struct {
	env   func() *pipeline.Env
	db    *sqlite.DB
	opt   Options
	pages map[string]*template.Template
	key   []byte // signs the CSRF tokens; new at every start

	sessions sessions
}

// ErrRemoteWithoutAuth is why a view that would listen beyond this machine
// refuses to start: ledger data is confidential.
var ErrRemoteWithoutAuth = errors.New("http.allow_remote is true but no authentication is set: set http.users_file (users added with `costdrift users add`) or http.auth_header (the header your reverse proxy sets to the signed-in user)")

// CheckRemote refuses a listener beyond loopback without authentication:
// a users file to sign in against, or a trusted proxy's header.
func CheckRemote(allowRemote bool, authHeader, usersFile string) error {
	if allowRemote && strings.TrimSpace(authHeader) == "" && strings.TrimSpace(usersFile) == "" {
		return ErrRemoteWithoutAuth
	}
	return nil
}

// New builds the server; env is read on every request, so that a daemon's
// reloaded config is the one in force.
func New(env func() *pipeline.Env, db *sqlite.DB, opt Options) (*Server, error) {
	if opt.Log == nil {
		opt.Log = slog.Default()
	}
	if opt.AuthHeader == "" && opt.UsersFile == "" && opt.LocalUser == "" {
		return nil, errors.New("web: no user to record decisions under")
	}
	s := &Server{env: env, db: db, opt: opt, pages: map[string]*template.Template{}, key: make([]byte, 32)}
	if _, err := rand.Read(s.key); err != nil {
		return nil, fmt.Errorf("web: key: %w", err)
	}
	names, err := fs.Glob(assets, "templates/*.html")
	if err != nil {
		return nil, fmt.Errorf("web: templates: %w", err)
	}
	for _, n := range names {
		if n == "templates/layout.html" {
			continue
		}
		t, err := template.New("layout.html").Funcs(funcs).ParseFS(assets, "templates/layout.html", n)
		if err != nil {
			return nil, fmt.Errorf("web: %s: %w", n, err)
		}
		s.pages[strings.TrimSuffix(strings.TrimPrefix(n, "templates/"), ".html")] = t
	}
	return s, nil
}

// Mount adds the view's pages to mux, beside whatever it serves already
// (the daemon's /healthz and /metrics).
func (s *Server) Mount(mux *http.ServeMux) {
	static, _ := fs.Sub(assets, "static")
	files := http.StripPrefix("/static/", http.FileServerFS(static))
	if s.opt.UsersFile != "" {
		// The sign-in page needs its stylesheet before anyone is signed
		// in; the files are the program's own and hold no ledger data.
		mux.Handle("GET /static/", http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			securityHeaders(w.Header())
			files.ServeHTTP(w, r)
		}))
	} else {
		mux.Handle("GET /static/", s.guard(files))
	}
	if s.opt.UsersFile != "" {
		mux.HandleFunc("GET /login", s.loginPage)
		mux.HandleFunc("POST /login", s.login)
		mux.HandleFunc("POST /logout", s.logout)
	}
	mux.Handle("GET /{$}", s.page(s.overview))
	mux.Handle("GET /objects", s.page(s.objects))
	mux.Handle("GET /object", s.page(s.object))
	mux.Handle("GET /object/lines", s.page(s.lines))
	mux.Handle("GET /alerts", s.page(s.alerts))
	mux.Handle("GET /proposals", s.page(s.proposals))
	mux.Handle("GET /budgets", s.page(s.budgets))
	mux.Handle("GET /sources", s.page(s.sources))
	// Decisions are POSTs only: a GET of these answers 405 and changes
	// nothing.
	mux.Handle("POST /alerts/ack", s.action(s.ack))
	mux.Handle("POST /object/pin", s.action(s.pin))
	mux.Handle("POST /object/exclude", s.action(s.exclude))
	mux.Handle("POST /proposals/decide", s.action(s.approve))
}

// Handler is the view on its own, as `costdrift serve` serves it.
func (s *Server) Handler() http.Handler {
	mux := http.NewServeMux()
	s.Mount(mux)
	return mux
}

// user is who the request comes from, "" when it may not be served: the
// proxy's header, else the user signed in with the users file; with
// neither configured, the local user on loopback.
func (s *Server) user(r *http.Request) string {
	if s.opt.AuthHeader != "" {
		if name := strings.TrimSpace(r.Header.Get(s.opt.AuthHeader)); name != "" {
			return name
		}
	}
	if s.opt.UsersFile != "" {
		return s.sessionUser(r)
	}
	if s.opt.AuthHeader != "" {
		return ""
	}
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return ""
	}
	if ip := net.ParseIP(host); ip == nil || !ip.IsLoopback() {
		return ""
	}
	return s.opt.LocalUser
}

// securityHeaders keep the pages from being framed, sniffed or made to
// run anything: no script at all; the charts draw with style attributes,
// which cannot run code, so those alone are allowed inline.
func securityHeaders(h http.Header) {
	h.Set("Content-Security-Policy", "default-src 'none'; style-src 'self'; style-src-attr 'unsafe-inline'; img-src 'self' data:; form-action 'self'; frame-ancestors 'none'; base-uri 'none'")
	h.Set("X-Frame-Options", "DENY")
	h.Set("X-Content-Type-Options", "nosniff")
	h.Set("Referrer-Policy", "no-referrer")
	h.Set("Cache-Control", "no-store")
}

// guard answers only a known user, with the security headers.
func (s *Server) guard(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		securityHeaders(w.Header())
		if s.user(r) == "" {
			if s.opt.UsersFile != "" && r.Method == http.MethodGet {
				http.Redirect(w, r, "/login?"+url.Values{"next": {r.URL.RequestURI()}}.Encode(), http.StatusSeeOther)
				return
			}
			http.Error(w, "sign-in required: this view answers this machine only, or a reverse proxy that names the user", http.StatusForbidden)
			return
		}
		next.ServeHTTP(w, r)
	})
}

// csrfCookie holds a random value per browser; a form carries the value's
// signature, which another site can neither read nor forge.
const csrfCookie = "costdrift_csrf"

// csrfToken returns the form token for this browser, setting its cookie
// on the first visit.
func (s *Server) csrfToken(w http.ResponseWriter, r *http.Request) string {
	value := ""
	if c, err := r.Cookie(csrfCookie); err == nil && len(c.Value) >= 32 {
		value = c.Value
	} else {
		b := make([]byte, 32)
		rand.Read(b) // never fails (crypto/rand)
		value = base64.RawURLEncoding.EncodeToString(b)
		http.SetCookie(w, &http.Cookie{Name: csrfCookie, Value: value, Path: "/", HttpOnly: true,
			SameSite: http.SameSiteStrictMode, Secure: s.overTLS(r)})
	}
	return s.sign(value, s.user(r))
}

// overTLS says whether the browser reached the view over HTTPS: directly,
// or through a proxy that terminates TLS, which says so in
// X-Forwarded-Proto. The header is believed only where a proxy is
// expected (a proxy's user header or a users file behind one); a client
// that forges it only makes its own cookies HTTPS-only.
func (s *Server) overTLS(r *http.Request) bool {
	return r.TLS != nil || ((s.opt.AuthHeader != "" || s.opt.UsersFile != "") && r.Header.Get("X-Forwarded-Proto") == "https")
}

func (s *Server) sign(value, user string) string {
	m := hmac.New(sha256.New, s.key)
	m.Write([]byte(value + "\x00" + user))
	return base64.RawURLEncoding.EncodeToString(m.Sum(nil))
}

// csrfOK checks a POSTed form's token against the browser's cookie.
func (s *Server) csrfOK(r *http.Request) bool {
	c, err := r.Cookie(csrfCookie)
	if err != nil {
		return false
	}
	given := r.PostFormValue("csrf")
	return given != "" && hmac.Equal([]byte(given), []byte(s.sign(c.Value, s.user(r))))
}
