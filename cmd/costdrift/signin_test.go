package main

import (
	"bytes"
	"errors"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/web"
)

// runIn runs the command with in as its standard input.
func runIn(t *testing.T, in string, args ...string) (string, error) {
	t.Helper()
	var out, errw bytes.Buffer
	root := newRoot(&out, &errw, today)
	root.SetIn(strings.NewReader(in))
	root.SetArgs(args)
	err := root.Execute()
	return out.String() + errw.String(), err
}

// `costdrift users` keeps http.users_file: the password from standard
// input, never an argument; the file owner-only.
func TestUsersCommand(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "costdrift.yaml")
	writeFile(t, cfg, "store: costdrift.db\ncurrency: EUR\nhttp:\n  users_file: users\n")
	if out, err := runIn(t, "correct horse battery\n", "--config", cfg, "users", "add", "ana.accountant"); err != nil || !strings.Contains(out, "ana.accountant can sign in") {
		t.Fatalf("users add: %v\n%s", err, out)
	}
	if _, err := runIn(t, "staple gun 2026", "--config", cfg, "users", "add", "ole.controller"); err != nil {
		t.Fatalf("users add without a final line break: %v", err)
	}
	if _, err := runIn(t, "short\n", "--config", cfg, "users", "add", "eva"); err == nil {
		t.Error("a password of 5 characters was accepted")
	}
	if _, err := runIn(t, "", "--config", cfg, "users", "add", "eva"); err == nil {
		t.Error("no password at all was accepted")
	}
	path := filepath.Join(dir, "users")
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != 0o600 {
		t.Fatalf("users file: %v %v, want mode 0600", fi, err)
	}
	u, err := web.ReadUsers(path)
	if err != nil {
		t.Fatal(err)
	}
	if !u.Verify("ana.accountant", "correct horse battery") || !u.Verify("ole.controller", "staple gun 2026") || u.Verify("ana.accountant", "staple gun 2026") {
		t.Error("the stored hashes do not verify as added")
	}
	if out := mustRun(t, "--config", cfg, "users", "list"); out != "ana.accountant\nole.controller\n" {
		t.Errorf("users list:\n%s", out)
	}
	mustRun(t, "--config", cfg, "users", "remove", "ole.controller")
	if out := mustRun(t, "--config", cfg, "users", "list"); out != "ana.accountant\n" {
		t.Errorf("users list after remove:\n%s", out)
	}
	if _, err := run(t, "--config", cfg, "users", "remove", "ole.controller"); !errors.Is(err, web.ErrNoSuchUser) {
		t.Errorf("removing an unknown user: %v", err)
	}
	writeFile(t, cfg, "store: costdrift.db\ncurrency: EUR\n")
	if _, err := run(t, "--config", cfg, "users", "list"); err == nil || !strings.Contains(err.Error(), "http.users_file is not set") {
		t.Errorf("users without http.users_file: %v", err)
	}
}

// With a users file the view signs users in with a form: a token on the
// form, the password checked, a session cookie the page's script cannot
// read, decisions under the signed-in name, and signing out ends it.
func TestWebSignIn(t *testing.T) {
	cfg := ownDemo(t)
	dir := filepath.Dir(cfg)
	store := filepath.Join(dir, "costdrift.db")
	v := signInView(t, dir)
	srv := httptest.NewServer(v.Handler())
	defer srv.Close()
	c := browser(t, srv)
	get := func(path string) (int, string) {
		t.Helper()
		res, err := c.Get(srv.URL + path)
		if err != nil {
			t.Fatal(err)
		}
		res.Body.Close()
		return res.StatusCode, res.Header.Get("Location")
	}
	decisions := func() int { return count(t, store, `SELECT COUNT(*) FROM decisions`) }
	before := decisions()

	// Signed out, even on loopback, a page sends the browser to sign in
	// and an action is refused.
	if code, loc := get("/objects?cc=WELD"); code != http.StatusSeeOther || loc != "/login?next=%2Fobjects%3Fcc%3DWELD" {
		t.Errorf("signed out: %d to %q, want 303 to the sign-in form", code, loc)
	}
	if code, _ := post(t, c, srv, "/alerts/ack", url.Values{"alert": {"1"}, "note": {"x"}}); code != http.StatusForbidden {
		t.Errorf("ack signed out: %d, want 403", code)
	}
	if code, _ := get("/static/style.css"); code != http.StatusOK {
		t.Errorf("the stylesheet signed out: %d, want 200", code)
	}

	token := open(t, c, srv, "/login?next=%2Falerts")
	form := url.Values{"name": {"ana.accountant"}, "password": {"correct horse battery"}, "next": {"/alerts"}}
	sessionCookies := func() []*http.Cookie {
		u, _ := url.Parse(srv.URL)
		var out []*http.Cookie
		for _, ck := range c.Jar.Cookies(u) {
			if ck.Name == "costdrift_session" {
				out = append(out, ck)
			}
		}
		return out
	}
	// The sign-in form without its token, or with a forged one, is
	// refused before the password is looked at.
	for _, bad := range []string{"", "AAAA" + token[4:]} {
		f := url.Values{"csrf": {bad}}
		for k, x := range form {
			f[k] = x
		}
		if code, _ := post(t, c, srv, "/login", f); code != http.StatusForbidden {
			t.Errorf("sign-in with token %q: %d, want 403", bad, code)
		}
	}
	// A wrong password, or a name not in the file, signs no one in.
	for _, wrong := range [][2]string{{"ana.accountant", "correct horse batter"}, {"ole.controller", "correct horse battery"}} {
		f := url.Values{"csrf": {token}, "name": {wrong[0]}, "password": {wrong[1]}, "next": {"/alerts"}}
		if code, loc := post(t, c, srv, "/login", f); code != http.StatusSeeOther || !strings.HasPrefix(loc, "/login?failed=1") {
			t.Errorf("sign-in as %s with a wrong password: %d %q", wrong[0], code, loc)
		}
	}
	if len(sessionCookies()) != 0 {
		t.Fatal("a session cookie was set without the right password")
	}
	if code, _ := get("/"); code != http.StatusSeeOther {
		t.Errorf("after wrong passwords: %d, want 303 to the sign-in form", code)
	}

	form.Set("csrf", token)
	res, err := c.PostForm(srv.URL+"/login", form)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther || res.Header.Get("Location") != "/alerts" {
		t.Errorf("sign-in: %d to %q, want 303 to /alerts", res.StatusCode, res.Header.Get("Location"))
	}
	var set *http.Cookie
	for _, ck := range res.Cookies() {
		if ck.Name == "costdrift_session" {
			set = ck
		}
	}
	if set == nil || !set.HttpOnly || set.SameSite != http.SameSiteStrictMode || set.Secure {
		t.Errorf("session cookie %+v: want HttpOnly, SameSite=Strict, and not Secure over plain HTTP", set)
	}

	// Behind a proxy that terminates TLS the cookie is HTTPS-only.
	proxied := httptest.NewRequest("POST", "/login", strings.NewReader(form.Encode()))
	proxied.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	proxied.Header.Set("X-Forwarded-Proto", "https")
	for _, ck := range c.Jar.Cookies(mustURL(t, srv.URL)) {
		if ck.Name != "costdrift_session" { // signed out, as the token was made
			proxied.AddCookie(ck)
		}
	}
	w0 := httptest.NewRecorder()
	v.Handler().ServeHTTP(w0, proxied)
	secure := false
	for _, ck := range w0.Result().Cookies() {
		secure = secure || (ck.Name == "costdrift_session" && ck.Secure && ck.HttpOnly)
	}
	if w0.Code != http.StatusSeeOther || !secure {
		t.Errorf("sign-in over HTTPS through a proxy: %d, Secure session cookie %v", w0.Code, secure)
	}

	_, page := func() (int, string) {
		res, err := c.Get(srv.URL + "/alerts")
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		var b bytes.Buffer
		b.ReadFrom(res.Body)
		return res.StatusCode, b.String()
	}()
	if !strings.Contains(page, "Signed in as <strong>ana.accountant</strong>") || !strings.Contains(page, `action="/logout"`) {
		t.Errorf("the page does not name the signed-in user or offer to sign out")
	}
	// Opening pages and a GET of an action record nothing.
	token = open(t, c, srv, "/alerts")
	for _, path := range []string{"/", "/objects", "/object?o=6200%2FWELD", "/alerts/ack?alert=1&note=x&csrf=" + url.QueryEscape(token)} {
		get(path)
	}
	if decisions() != before {
		t.Fatalf("a GET changed the store: decisions %d → %d", before, decisions())
	}
	ack := url.Values{"csrf": {token}, "alert": {"1"}, "note": {"lease renewed in July, as agreed"}}
	if code, _ := post(t, c, srv, "/alerts/ack", ack); code != http.StatusSeeOther {
		t.Errorf("ack signed in: %d, want 303", code)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE kind = 'note' AND alert_id = 1 AND made_by = 'ana.accountant'`); n != 1 {
		t.Error("the note is not in the audit trail under the signed-in user")
	}

	// Signing out needs the token too; then the session is over, even for
	// a copy of its cookie.
	if code, _ := post(t, c, srv, "/logout", url.Values{}); code != http.StatusForbidden {
		t.Errorf("sign-out without a token: %d, want 403", code)
	}
	if code, loc := post(t, c, srv, "/logout", url.Values{"csrf": {token}}); code != http.StatusSeeOther || !strings.HasPrefix(loc, "/login") {
		t.Errorf("sign-out: %d %q", code, loc)
	}
	if code, _ := get("/"); code != http.StatusSeeOther {
		t.Errorf("after signing out: %d, want 303 to the sign-in form", code)
	}
	r := httptest.NewRequest("GET", "/", nil)
	r.AddCookie(set)
	w := httptest.NewRecorder()
	v.Handler().ServeHTTP(w, r)
	if w.Code != http.StatusSeeOther {
		t.Errorf("the old session cookie after sign-out: %d, want 303", w.Code)
	}

	// A user taken out of the file is signed out at the next page.
	token = open(t, c, srv, "/login")
	form.Set("csrf", token)
	if code, _ := post(t, c, srv, "/login", form); code != http.StatusSeeOther {
		t.Fatalf("sign-in again: %d", code)
	}
	if code, _ := get("/"); code != http.StatusOK {
		t.Fatalf("signed in again: %d", code)
	}
	if err := web.RemoveUser(filepath.Join(dir, "users"), "ana.accountant"); err != nil {
		t.Fatal(err)
	}
	if code, _ := get("/"); code != http.StatusSeeOther {
		t.Errorf("a removed user's page: %d, want 303 to the sign-in form", code)
	}
}

// allow_remote starts with a users file or a proxy's header, and with
// neither refuses.
func TestRemoteNeedsUsersFileOrHeader(t *testing.T) {
	if err := checkListen("0.0.0.0:0", true, "", "users"); err != nil {
		t.Errorf("allow_remote with a users file: %v", err)
	}
	if err := checkListen("0.0.0.0:0", true, "", ""); !errors.Is(err, web.ErrRemoteWithoutAuth) {
		t.Errorf("allow_remote with neither: %v", err)
	}
	cfg := filepath.Join(t.TempDir(), "costdrift.yaml")
	writeFile(t, cfg, "store: "+filepath.Join(filepath.Dir(ownDemo(t)), "costdrift.db")+"\ncurrency: EUR\nhttp:\n  listen: 0.0.0.0:0\n  allow_remote: true\n  users_file: \" \"\n")
	for _, command := range []string{"serve", "run"} {
		if _, err := run(t, "--config", cfg, command); !errors.Is(err, web.ErrRemoteWithoutAuth) {
			t.Errorf("%s with allow_remote and a blank users_file: %v, want ErrRemoteWithoutAuth", command, err)
		}
	}
}

func mustURL(t *testing.T, s string) *url.URL {
	t.Helper()
	u, err := url.Parse(s)
	if err != nil {
		t.Fatal(err)
	}
	return u
}
