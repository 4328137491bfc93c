package main

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"html"
	"io"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/present"
	"github.com/costdrift/costdrift/internal/sqlite"
	"github.com/costdrift/costdrift/internal/web"
)

// webView builds the web view of the demo in dir as `costdrift serve`
// does, with the given proxy header ("" for loopback only).
func webView(t testing.TB, dir, authHeader string) (*web.Server, *pipeline.Env, *sqlite.DB) {
	t.Helper()
	return webViewWith(t, dir, func(e *pipeline.Env) { e.Config.HTTP.AuthHeader = authHeader })
}

// signInView is the web view of the demo in dir signing users in from a
// users file there that holds ana.accountant, password "correct horse
// battery".
func signInView(t testing.TB, dir string) *web.Server {
	t.Helper()
	users := filepath.Join(dir, "users")
	if err := web.AddUser(users, "ana.accountant", "correct horse battery"); err != nil {
		t.Fatal(err)
	}
	v, _, _ := webViewWith(t, dir, func(e *pipeline.Env) { e.Config.HTTP.UsersFile = users })
	return v
}

// webViewWith builds the web view of the demo in dir as `costdrift serve`
// does, with its settings changed by set.
func webViewWith(t testing.TB, dir string, set func(*pipeline.Env)) (*web.Server, *pipeline.Env, *sqlite.DB) {
	t.Helper()
	e, err := pipeline.Load(filepath.Join(dir, "costdrift.yaml"), today)
	if err != nil {
		t.Fatal(err)
	}
	set(e)
	db, err := e.OpenToRead(context.Background(), true)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	v, err := newView(e, func() *pipeline.Env { return e }, db, nil)
	if err != nil {
		t.Fatal(err)
	}
	return v, e, db
}

// fetch fetches path from srv and returns the status and body.
func fetch(t *testing.T, srv *httptest.Server, path string) (*http.Response, string) {
	t.Helper()
	res, err := srv.Client().Get(srv.URL + path)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		t.Fatal(err)
	}
	return res, string(b)
}

// tagText is a page's text without its markup, spaces folded, for checks
// of what a reader sees.
func tagText(html string) string {
	s := regexp.MustCompile(`(?s)<svg.*?</svg>|<[^>]*>`).ReplaceAllString(html, " ")
	for _, r := range [][2]string{{"&#43;", "+"}, {"&amp;", "&"}, {"&lt;", "<"}, {"&gt;", ">"}, {"&#39;", "'"}, {"&#34;", `"`}, {"&quot;", `"`}} {
		s = strings.ReplaceAll(s, r[0], r[1])
	}
	return strings.Join(strings.Fields(s), " ")
}

// Every page of the demo answers 200 with the security headers, shows what
// the store holds, and carries the cautions in its footer.
func TestWebPagesShowTheStore(t *testing.T) {
	dir := demoDir(t)
	v, _, _ := webView(t, dir, "")
	srv := httptest.NewServer(v.Handler())
	defer srv.Close()
	store := filepath.Join(dir, "costdrift.db")
	rows := reportJSON(t, filepath.Join(dir, "costdrift.yaml"))

	res, body := fetch(t, srv, "/")
	if res.StatusCode != 200 {
		t.Fatalf("/: %d\n%s", res.StatusCode, body)
	}
	csp := res.Header.Get("Content-Security-Policy")
	for _, want := range []string{"default-src 'none'", "frame-ancestors 'none'", "form-action 'self'"} {
		if !strings.Contains(csp, want) {
			t.Errorf("Content-Security-Policy %q lacks %q", csp, want)
		}
	}
	if strings.Contains(csp, "script-src") {
		t.Errorf("Content-Security-Policy %q allows a script", csp)
	}
	if got := res.Header.Get("X-Frame-Options"); got != "DENY" {
		t.Errorf("X-Frame-Options %q, want DENY", got)
	}
	var csrf *http.Cookie
	for _, c := range res.Cookies() {
		if c.Name == "costdrift_csrf" {
			csrf = c
		}
	}
	if csrf == nil || !csrf.HttpOnly || csrf.SameSite != http.SameSiteStrictMode || csrf.Secure {
		t.Errorf("cookie %+v: want costdrift_csrf, HttpOnly, SameSite=Strict, not Secure over plain HTTP", csrf)
	}
	text := tagText(body)
	// The demo's classes per cost centre, counted in the store; the
	// overview's row for WELD must say the same.
	wantWeld := []string{"WELD"}
	for _, class := range []string{"fixed", "variable", "mixed", "step", "unexplained", "insufficient_data"} {
		wantWeld = append(wantWeld, itoa(count(t, store, `SELECT COUNT(*) FROM current_behaviour WHERE cost_center = 'WELD' AND class = '`+class+`'`)))
	}
	wantWeld = append(wantWeld, itoa(count(t, store, `SELECT COUNT(*) FROM current_behaviour WHERE cost_center = 'WELD'`)))
	if !strings.Contains(text, strings.Join(wantWeld, " ")) {
		t.Errorf("overview lacks the WELD row %q:\n%s", strings.Join(wantWeld, " "), text)
	}
	for _, sev := range []string{"critical", "warning", "info"} {
		n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE status = 'open' AND severity = '`+sev+`'`)
		if !strings.Contains(text, itoa(n)+" "+sev) {
			t.Errorf("overview lacks %d open %s alerts:\n%s", n, sev, text)
		}
	}
	for _, want := range []string{"Formulas are statistical estimates", "They are not advice", "your organisation's policies", "Ledger data is confidential"} {
		if !strings.Contains(text, want) {
			t.Errorf("footer lacks %q", want)
		}
	}

	res, body = fetch(t, srv, "/objects")
	if res.StatusCode != 200 {
		t.Fatalf("/objects: %d", res.StatusCode)
	}
	text = tagText(body)
	if n := count(t, store, `SELECT COUNT(*) FROM current_behaviour`); !strings.Contains(text, "Objects 1–"+itoa(n)+" of "+itoa(n)) {
		t.Errorf("objects page lacks the count of %d:\n%s", n, text)
	}
	for object, r := range rows {
		if !strings.Contains(text, object+" "+r["account_name"].(string)) || !strings.Contains(text, r["formula"].(string)) {
			t.Errorf("objects page lacks %s with %q", object, r["formula"])
		}
	}
	_, body = fetch(t, srv, "/objects?cost_center=PAINT&class=fixed")
	text = tagText(body)
	want := count(t, store, `SELECT COUNT(*) FROM current_behaviour WHERE cost_center = 'PAINT' AND class = 'fixed'`)
	if !strings.Contains(text, "of "+itoa(want)) || strings.Contains(text, "/WELD") {
		t.Errorf("PAINT's fixed objects: want %d, no WELD:\n%s", want, text)
	}

	res, body = fetch(t, srv, "/object?o="+url.QueryEscape("6200/WELD"))
	if res.StatusCode != 200 {
		t.Fatalf("/object 6200/WELD: %d\n%s", res.StatusCode, body)
	}
	text = tagText(body)
	for _, want := range []string{rows["6200/WELD"]["formula"].(string), rows["6200/WELD"]["reason"].(string), "Drivers tried", "High-low beside least squares", "Diagnostics"} {
		if !strings.Contains(text, want) {
			t.Errorf("object page lacks %q:\n%s", want, text)
		}
	}
	if n := strings.Count(body, "<svg "); n != 2 {
		t.Errorf("object page has %d charts, want 2 (over time, against the driver)", n)
	}
	// The history and the alerts, as `costdrift history` gives them.
	var hist struct {
		Formulas []struct{ From, Formula string }
		Alerts   []struct{ Message string }
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", filepath.Join(dir, "costdrift.yaml"), "history", "6110/PAINT", "--format", "json")), &hist); err != nil {
		t.Fatal(err)
	}
	_, body = fetch(t, srv, "/object?o="+url.QueryEscape("6110/PAINT"))
	text = tagText(body)
	if len(hist.Formulas) != 2 || len(hist.Alerts) == 0 {
		t.Fatalf("the demo's 6110/PAINT history: %+v", hist)
	}
	for _, f := range hist.Formulas {
		if !strings.Contains(text, f.From) || !strings.Contains(text, f.Formula) {
			t.Errorf("object page lacks the history's %s %s", f.From, f.Formula)
		}
	}
	if !strings.Contains(text, "sup-F") || !strings.Contains(text, hist.Alerts[0].Message) {
		t.Errorf("object page lacks the break's test or the alert %q:\n%s", hist.Alerts[0].Message, text)
	}
	// The accruals, as `costdrift explain` gives them (README, "Costs posted
	// quarterly or yearly, and accruals").
	var ex struct {
		Accruals struct {
			Pairs []struct {
				Period      string
				Description string
			}
			Periods []struct{ Period string }
		}
	}
	exJSON := mustRun(t, "--config", filepath.Join(dir, "costdrift.yaml"), "explain", "6500/WELD", "--format", "json")
	if err := json.Unmarshal([]byte(exJSON), &ex); err != nil || len(ex.Accruals.Pairs) != 1 || len(ex.Accruals.Periods) != 2 {
		t.Fatalf("the demo's 6500/WELD accruals: %+v (%v)", ex.Accruals, err)
	}
	_, body = fetch(t, srv, "/object?o="+url.QueryEscape("6500/WELD"))
	text = tagText(body)
	for _, want := range []string{"Accruals", "2025-11 2025-12 WELD 465.53 EUR GJ-2025-11-0001 / GJ-2025-12-0001 " + ex.Accruals.Pairs[0].Description,
		"2025-11 1,795.10 EUR 465.53 EUR 0.00 EUR +465.53 EUR 1,329.57 EUR", "2025-12 1,818.81 EUR 0.00 EUR 465.53 EUR -465.53 EUR 2,284.34 EUR"} {
		if !strings.Contains(text, want) {
			t.Errorf("6500/WELD's page lacks %q of its accruals:\n%s", want, text)
		}
	}
	if res, _ := fetch(t, srv, "/object?o=9999/NOPE"); res.StatusCode != http.StatusNotFound {
		t.Errorf("an unknown object answers %d, want 404", res.StatusCode)
	}
	if res, body := fetch(t, srv, "/static/style.css"); res.StatusCode != 200 || !strings.Contains(body, "@media print") {
		t.Errorf("stylesheet: %d", res.StatusCode)
	}
}

func itoa(n int) string { return strconv.Itoa(n) }

// Off this machine the view answers only through the trusted proxy, which
// names the user; `serve` and `run` refuse to listen beyond loopback
// without it.
func TestWebNeedsAuthenticationOffLoopback(t *testing.T) {
	dir := demoDir(t)
	local, _, _ := webView(t, dir, "")
	r := httptest.NewRequest("GET", "/", nil)
	r.RemoteAddr = "192.0.2.7:50000"
	w := httptest.NewRecorder()
	local.Handler().ServeHTTP(w, r)
	if w.Code != http.StatusForbidden {
		t.Errorf("a remote client without a proxy: %d, want 403", w.Code)
	}
	proxied, _, _ := webView(t, dir, "X-Remote-User")
	for _, tc := range []struct {
		user string
		code int
	}{{"", http.StatusForbidden}, {"kari.nordmann", http.StatusOK}} {
		r := httptest.NewRequest("GET", "/", nil)
		r.RemoteAddr = "192.0.2.7:50000"
		if tc.user != "" {
			r.Header.Set("X-Remote-User", tc.user)
		}
		w := httptest.NewRecorder()
		proxied.Handler().ServeHTTP(w, r)
		if w.Code != tc.code {
			t.Errorf("proxy header %q: %d, want %d", tc.user, w.Code, tc.code)
		}
		if tc.code == 200 && !strings.Contains(w.Body.String(), "Signed in as <strong>kari.nordmann</strong>") {
			t.Errorf("the page does not name the proxy's user")
		}
	}

	if err := checkListen("0.0.0.0:0", false, "", ""); err == nil || !strings.Contains(err.Error(), "not a loopback address") {
		t.Errorf("remote without allow_remote: %v", err)
	}
	if err := checkListen("0.0.0.0:0", true, "", ""); !errors.Is(err, web.ErrRemoteWithoutAuth) {
		t.Errorf("allow_remote without auth: %v, want ErrRemoteWithoutAuth", err)
	}
	if err := checkListen("0.0.0.0:0", true, "X-Remote-User", ""); err != nil {
		t.Errorf("allow_remote with a proxy header: %v", err)
	}
	if err := checkListen("127.0.0.1:0", false, "", ""); err != nil {
		t.Errorf("loopback: %v", err)
	}
	// The commands themselves refuse, before they open anything.
	cfg := filepath.Join(t.TempDir(), "costdrift.yaml")
	writeFile(t, cfg, "store: "+filepath.Join(filepath.Dir(ownDemo(t)), "costdrift.db")+"\ncurrency: EUR\nhttp:\n  listen: 0.0.0.0:0\n  allow_remote: true\n")
	for _, command := range []string{"serve", "run"} {
		if _, err := run(t, "--config", cfg, command); !errors.Is(err, web.ErrRemoteWithoutAuth) {
			t.Errorf("%s with allow_remote and no auth: %v, want ErrRemoteWithoutAuth", command, err)
		}
	}
}

// Hostile account names and searches are shown as text, never obeyed as
// markup, on every page.
func TestWebEscapesHostileText(t *testing.T) {
	dir := filepath.Dir(ownDemo(t))
	db, err := sql.Open("sqlite3", filepath.Join(dir, "costdrift.db"))
	if err != nil {
		t.Fatal(err)
	}
	const evil = `Power <script>alert("x")</script> <img src=x onerror=alert(1)> & "quoted"`
	if _, err := db.Exec(`UPDATE accounts SET name = ? WHERE account = '6200'`, evil); err != nil {
		t.Fatal(err)
	}
	db.Close()
	v, _, _ := webView(t, dir, "")
	srv := httptest.NewServer(v.Handler())
	defer srv.Close()
	for _, path := range []string{"/", "/alerts?status=all", "/proposals", "/budgets?plan=plan-2026-q3", "/budgets?variance=2026-06", "/sources", "/objects", "/objects?q=" + url.QueryEscape(evil), "/objects?q=" + url.QueryEscape(`"><script>alert(2)</script>`),
		"/object?o=" + url.QueryEscape("6200/WELD"), "/object?o=" + url.QueryEscape("<script>alert(3)</script>")} {
		_, body := fetch(t, srv, path)
		for _, bad := range []string{"<script", "<img"} {
			if strings.Contains(body, bad) {
				t.Errorf("%s: the page holds %q unescaped", path, bad)
			}
		}
	}
	_, body := fetch(t, srv, "/object?o="+url.QueryEscape("6200/WELD"))
	if !strings.Contains(tagText(body), evil) {
		t.Errorf("the object page does not show the account's name as text")
	}
	_, body = fetch(t, srv, "/objects?q="+url.QueryEscape("script>alert"))
	if !strings.Contains(tagText(body), "6200/WELD") || !strings.Contains(tagText(body), "of 2") {
		t.Errorf("a search on the hostile name finds the two 6200 objects:\n%s", tagText(body))
	}
}

// formToken is the CSRF token of the first form on a page.
var formToken = regexp.MustCompile(`name="csrf" value="([^"]+)"`)

// browser is a client with a cookie jar, as a browser keeps its cookies.
func browser(t *testing.T, srv *httptest.Server) *http.Client {
	t.Helper()
	jar, err := cookiejar.New(nil)
	if err != nil {
		t.Fatal(err)
	}
	c := *srv.Client() // a copy: the server's client is one for every caller
	c.Jar = jar
	c.CheckRedirect = func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }
	return &c
}

// open fetches a page with c and returns its CSRF token.
func open(t *testing.T, c *http.Client, srv *httptest.Server, path string) string {
	t.Helper()
	res, err := c.Get(srv.URL + path)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(res.Body)
	res.Body.Close()
	m := formToken.FindStringSubmatch(string(b))
	if res.StatusCode != 200 || m == nil {
		t.Fatalf("%s: %d, no form token", path, res.StatusCode)
	}
	return html.UnescapeString(m[1])
}

func post(t *testing.T, c *http.Client, srv *httptest.Server, path string, form url.Values) (int, string) {
	t.Helper()
	res, err := c.PostForm(srv.URL+path, form)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, res.Header.Get("Location") + string(b)
}

// Decisions are forms that POST with the page's token: without it, with
// another browser's, or as a GET nothing is stored; with it the decision
// is stored under the signed-in user and the browser is sent back to see
// it.
func TestWebDecisions(t *testing.T) {
	cfg := ownDemo(t)
	dir := filepath.Dir(cfg)
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	writeFile(t, cfg, strings.Replace(string(text), "approval: none ", "approval: required", 1))
	store := filepath.Join(dir, "costdrift.db")
	v, _, _ := webView(t, dir, "X-Remote-User")
	proxy := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		r.Header.Set("X-Remote-User", "ana.accountant")
		v.Handler().ServeHTTP(w, r)
	}))
	defer proxy.Close()
	decisions := func() int { return count(t, store, `SELECT COUNT(*) FROM decisions`) }
	openAlerts := func() int { return count(t, store, `SELECT COUNT(*) FROM alerts WHERE status = 'open'`) }
	before, open0 := decisions(), openAlerts()

	c := browser(t, proxy)
	token := open(t, c, proxy, "/alerts")
	other := open(t, browser(t, proxy), proxy, "/alerts") // another browser's cookie and token
	ack := url.Values{"alert": {"1"}, "note": {"lease renewed in July, as agreed"}}

	// Every page and every GET of an action leaves the store as it was.
	for _, path := range []string{"/", "/objects", "/object?o=6200%2FWELD", "/alerts", "/alerts?status=all", "/proposals", "/budgets?plan=plan-2026-q3", "/sources",
		"/alerts/ack?alert=1&csrf=" + url.QueryEscape(token), "/object/pin", "/object/exclude", "/proposals/decide"} {
		res, err := c.Get(proxy.URL + path)
		if err != nil {
			t.Fatal(err)
		}
		res.Body.Close()
		isAction := !strings.HasPrefix(path, "/alerts?") && strings.Count(path, "/") == 2
		if isAction && res.StatusCode != http.StatusMethodNotAllowed {
			t.Errorf("GET %s: %d, want 405", path, res.StatusCode)
		}
	}
	for _, tc := range []struct {
		name  string
		token string
	}{{"no token", ""}, {"another browser's token", other}, {"a forged token", "AAAA" + token[4:]}} {
		form := url.Values{"csrf": {tc.token}}
		for k, v := range ack {
			form[k] = v
		}
		if code, _ := post(t, c, proxy, "/alerts/ack", form); code != http.StatusForbidden {
			t.Errorf("ack with %s: %d, want 403", tc.name, code)
		}
	}
	if decisions() != before || openAlerts() != open0 {
		t.Fatalf("the store changed without a valid POST: decisions %d → %d, open alerts %d → %d", before, decisions(), open0, openAlerts())
	}

	ack.Set("csrf", token)
	if code, body := post(t, c, proxy, "/alerts/ack", ack); code != http.StatusSeeOther || !strings.HasPrefix(body, "/alerts?status=acknowledged#alert-1") {
		t.Errorf("ack: %d %s, want 303 to the acknowledged alerts", code, body)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE id = 1 AND status = 'acknowledged'`); n != 1 {
		t.Error("alert 1 is not acknowledged")
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE kind = 'note' AND alert_id = 1 AND made_by = 'ana.accountant' AND reason = 'lease renewed in July, as agreed'`); n != 1 {
		t.Error("the note is not in the audit trail under the proxy's user")
	}

	token = open(t, c, proxy, "/object?o=6500%2FWELD")
	pin := url.Values{"csrf": {token}, "object": {"6500/WELD"}, "class": {"fixed"}, "fixed": {"1200.00"}, "reason": {"service contract to 2027"}}
	if code, body := post(t, c, proxy, "/object/pin", pin); code != http.StatusSeeOther || body != "/object?o=6500%2FWELD" {
		t.Errorf("pin: %d %s", code, body)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM current_pins WHERE object = '6500/WELD' AND class = 'fixed' AND made_by = 'ana.accountant'`); n != 1 {
		t.Errorf("the pin is not stored under the proxy's user")
	}
	_, page := fetch(t, proxy, "/object?o=6500%2FWELD")
	if text := tagText(page); !strings.Contains(text, "Pinned cost = 1,200.00 by ana.accountant") || !strings.Contains(text, "ana.accountant: pin: service contract to 2027") {
		t.Errorf("the object page does not show the pin:\n%s", text)
	}
	// A pin the pipeline refuses stores nothing and says why, 400.
	pin.Set("reason", "")
	n0 := decisions()
	if code, body := post(t, c, proxy, "/object/pin", pin); code != http.StatusBadRequest || !strings.Contains(body, "reason") {
		t.Errorf("pin without a reason: %d\n%s", code, body)
	}
	exclude := url.Values{"csrf": {token}, "object": {"6200/WELD"}, "periods": {"2025-03, 2025-04"}, "reason": {"meter fault"}}
	if code, _ := post(t, c, proxy, "/object/exclude", exclude); code != http.StatusSeeOther {
		t.Errorf("exclude: %d", code)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE kind = 'exclude' AND object = '6200/WELD' AND made_by = 'ana.accountant'`); n != 2 || decisions() != n0+2 {
		t.Errorf("%d exclusions stored under the proxy's user, want 2", n)
	}

	token = open(t, c, proxy, "/proposals")
	_, page = fetch(t, proxy, "/proposals")
	if !strings.Contains(tagText(page), "6100/WELD") {
		t.Fatalf("proposals page lacks 6100/WELD:\n%s", tagText(page))
	}
	if code, _ := post(t, c, proxy, "/proposals/decide", url.Values{"csrf": {token}, "object": {"6100/WELD"}, "decision": {"decline"}}); code != http.StatusBadRequest {
		t.Errorf("decline without a reason: %d, want 400", code)
	}
	if code, _ := post(t, c, proxy, "/proposals/decide", url.Values{"csrf": {token}, "object": {"6100/WELD"}, "decision": {"approve"}, "reason": {"matches the lease"}}); code != http.StatusSeeOther {
		t.Errorf("approve: %d", code)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE kind = 'approve' AND object = '6100/WELD' AND made_by = 'ana.accountant' AND reason = 'matches the lease'`); n != 1 {
		t.Error("the approval is not in the audit trail under the proxy's user")
	}
	if _, page = fetch(t, proxy, "/proposals"); strings.Contains(tagText(page), "6100/WELD") {
		t.Error("6100/WELD still waits after its approval")
	}
}

// The sources page shows every reject of the bad-input corpus with its
// reason, counted by file, and the rows as read escaped; the budgets page
// shows the saved budget's and variance report's figures as the store's
// views round them.
func TestWebSourcesAndBudgets(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	os.Remove(filepath.Join(gl, "gl.csv"))
	want := map[string]corpusCase{}
	for i, tc := range ledgerCorpus() {
		if tc.fails || tc.rejected == 0 || len(tc.content) > 1<<20 {
			continue
		}
		name := fmt.Sprintf("case-%02d.csv", i)
		writeFile(t, filepath.Join(gl, name), strings.ReplaceAll(tc.content, "G1,1,", fmt.Sprintf("G%d,1,", i)))
		want[name] = tc
	}
	writeFile(t, filepath.Join(gl, "hostile.csv"), "entry_id,line,date,account,cost_center,amount,description\n"+
		"H0,1,2026-01-05,6100,WELD,1.00,ok\nH0,2,2026-01-05,6100,WELD,-1.00,ok\n"+
		"H1,1,2026-02-30,6100,<b>WELD</b>,1.00,<script>alert(1)</script>\n")
	mustRun(t, "--config", cfg, "sync")
	v, _, _ := webView(t, dir, "")
	srv := httptest.NewServer(v.Handler())
	defer srv.Close()
	res, body := fetch(t, srv, "/sources")
	if res.StatusCode != 200 {
		t.Fatalf("/sources: %d", res.StatusCode)
	}
	if strings.Contains(body, "<script") || strings.Contains(body, "<b>") {
		t.Error("the sources page holds a rejected row's markup unescaped")
	}
	text := tagText(body)
	for name, tc := range want {
		path := filepath.Join("data", "gl", name) // as the rejects' locations name it, relative to the config
		if !strings.Contains(text, path+" ") {
			t.Errorf("the sources page does not list %s", name)
			continue
		}
		if !strings.Contains(text, tc.reason) {
			t.Errorf("%s (%s): reason %q not shown", name, tc.name, tc.reason)
		}
		// The file's row: path, loaded at, rows stored, rows rejected. A
		// duplicate key is found across a load, and its reject names the
		// entry, not a line of the file.
		perFile := tc.rejected
		if tc.reason == "duplicate key" {
			perFile = 0
		}
		row := regexp.MustCompile(regexp.QuoteMeta(path) + ` \S+ (\d+) (\d+)`).FindStringSubmatch(text)
		if row == nil || row[1] != itoa(tc.stored) || row[2] != itoa(perFile) {
			t.Errorf("%s (%s): file row %q, want %d stored and %d rejected", name, tc.name, row, tc.stored, perFile)
		}
	}
	if !strings.Contains(text, "<script>alert(1)</script>") {
		t.Error("the hostile row is not shown as text")
	}
	rejects := count(t, filepath.Join(dir, "costdrift.db"), `SELECT COUNT(*) FROM rejects`)
	if !strings.Contains(text, "The newest "+itoa(min(rejects, 200))+" of "+itoa(rejects)+" rejected rows") {
		t.Errorf("the sources page does not count %d rejects", rejects)
	}

	demo := demoDir(t)
	v, _, _ = webView(t, demo, "")
	demoSrv := httptest.NewServer(v.Handler())
	defer demoSrv.Close()
	store := filepath.Join(demo, "costdrift.db")
	for _, tc := range []struct{ path, query string }{
		{"/budgets?plan=plan-2026-q3", `SELECT printf('%s %s', object, budget) FROM flexible_budget WHERE plan = 'plan-2026-q3' AND period = '2026-07' AND object = '6200/WELD'`},
		{"/budgets?variance=2026-06", `SELECT printf('%s %.2f', object, spending_variance) FROM spending_variances WHERE name = '2026-06' AND object = '6200/WELD'`},
	} {
		db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
		if err != nil {
			t.Fatal(err)
		}
		var line string
		err = db.QueryRow(tc.query).Scan(&line)
		db.Close()
		if err != nil {
			t.Fatal(err)
		}
		object, figure, _ := strings.Cut(line, " ")
		f, _ := strconv.ParseFloat(figure, 64)
		_, body := fetch(t, demoSrv, tc.path)
		if text := tagText(body); !strings.Contains(text, object+" Power") || !strings.Contains(text, present.Number(f, 2)) {
			t.Errorf("%s lacks %s with %s:\n%s", tc.path, object, present.Number(f, 2), text)
		}
	}
}

// `costdrift serve` as a user runs it: it says where to open the view,
// serves it there beside a store it only reads and leaves unlocked, and
// stops at SIGTERM with status 0.
func TestServeCommand(t *testing.T) {
	cfg := ownDemo(t)
	addr := freePort(t)
	cmd, logs := startCommand(t, "--config", cfg, "serve", "--listen", addr)
	want := "costdrift web view: open http://" + addr + "/"
	waitFor(t, 10*time.Second, "serve to say where it listens", func() bool { return strings.Contains(logs.String(), want) }, logs)
	if code, body := get(t, "http://"+addr+"/objects"); code != http.StatusOK || !strings.Contains(body, "Objects 1–14 of 14") {
		t.Errorf("GET /objects from serve: %d\n%s", code, body)
	}
	// A decision command beside it: serve holds no lock.
	mustRun(t, "--config", cfg, "pin", "6500/WELD", "--class", "fixed", "--fixed", "1200", "--reason", "service contract", "--by", "ana")
	stop(t, cmd, logs)
}
