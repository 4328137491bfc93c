package main

import (
	"context"
	"database/sql"
	"fmt"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/log"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"
)

// axeCoreEnv names the file of axe-core (axe.min.js) the browser test
// (not COSTDRIFT_*, which the config reads as overrides)
// injects into every page; .ci/run installs it with npm and sets it.
const axeCoreEnv = "AXE_CORE_JS"

// needAxe reads axe-core: in CI (CI=true) its absence fails the test,
// elsewhere it skips with how to install it.
func needAxe(t *testing.T) string {
	t.Helper()
	path := os.Getenv(axeCoreEnv)
	if path != "" {
		b, err := os.ReadFile(path)
		if err == nil {
			return string(b)
		}
	}
	msg := fmt.Sprintf("axe-core not found (%s=%q): npm install --prefix DIR axe-core@4.14.1, then set %s=DIR/node_modules/axe-core/axe.min.js", axeCoreEnv, path, axeCoreEnv)
	if os.Getenv("CI") == "true" {
		t.Fatal(msg + " (CI=true: tests may not be skipped)")
	}
	t.Skip(msg)
	return ""
}

// axeRun runs axe-core on the page and lists its serious and critical
// violations, each with the elements it found them on.
const axeRun = `axe.run(document, {resultTypes: ['violations']}).then(r => r.violations
	.filter(v => v.impact === 'serious' || v.impact === 'critical')
	.map(v => v.impact + ' ' + v.id + ': ' + v.help + ' at ' + v.nodes.map(n => n.target.join(' ')).join(', ')))`

// The demo in headless Chromium, as an accountant would use it: every
// page opened at a desktop's and a phone's size, its visible text checked
// against the store, axe-core run on it, no console error, no sideways
// scrolling on the phone, the skip link first in the keyboard's order; then
// an alert acknowledged and a formula pinned through the forms, and the
// store checked. Screenshots go to $WEB_SCREENSHOTS when set.
func TestWebViewInChromium(t *testing.T) {
	chromium := needTool(t, "chromium", "chromium")
	axe := needAxe(t)
	cfg := ownDemo(t)
	dir := filepath.Dir(cfg)
	store := filepath.Join(dir, "costdrift.db")
	rows := reportJSON(t, cfg)
	v, _, _ := webView(t, dir, "")
	srv := httptest.NewServer(v.Handler())
	defer srv.Close()
	shots := os.Getenv("WEB_SCREENSHOTS")
	if shots == "" {
		shots = t.TempDir()
	}

	opts := []chromedp.ExecAllocatorOption{chromedp.ExecPath(chromium), chromedp.Headless, chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.NoFirstRun, chromedp.UserDataDir(t.TempDir())}
	actx, cancel := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancel()
	var mu sync.Mutex
	var consoleErrors []string
	ctx, cancel := chromedp.NewContext(actx, chromedp.WithListener(func(ev any) {
		// The tab's loop calls this: note the error and return.
		var msg string
		switch ev := ev.(type) {
		case *runtime.EventConsoleAPICalled:
			if ev.Type == runtime.ConsoleAPICalledTypeError {
				msg = fmt.Sprintf("console.error with %d arguments", len(ev.Args))
				if len(ev.Args) > 0 && ev.Args[0].Description != "" {
					msg += ": " + ev.Args[0].Description
				}
			}
		case *runtime.EventExceptionThrown:
			msg = "exception: " + ev.ExceptionDetails.Text
		case *log.EventEntryAdded:
			if ev.Entry.Level == log.EntryLevelError {
				msg = fmt.Sprintf("%s: %s (%s)", ev.Entry.Source, ev.Entry.Text, ev.Entry.URL)
			}
		}
		if msg != "" {
			mu.Lock()
			consoleErrors = append(consoleErrors, msg)
			mu.Unlock()
		}
	}))
	defer cancel()
	ctx, cancel = context.WithTimeout(ctx, 5*time.Minute)
	defer cancel()

	storeCount := func(query string) string { return itoa(count(t, store, query)) }
	openAlert := func() string {
		var msg string
		db := openRO(t, store)
		defer db.Close()
		if err := db.QueryRow(`SELECT message FROM alerts WHERE id = 1`).Scan(&msg); err != nil {
			t.Fatal(err)
		}
		return msg
	}()
	pages := []struct {
		name, path string
		want       []string
	}{
		{"overview", "/", []string{"Open alerts", storeCount(`SELECT COUNT(*) FROM alerts WHERE status = 'open' AND severity = 'warning'`) + "\nwarning",
			"All\t" + storeCount(`SELECT COUNT(*) FROM current_behaviour WHERE class = 'fixed'`)}},
		{"objects", "/objects", []string{"Objects 1–" + storeCount(`SELECT COUNT(*) FROM current_behaviour`) + " of " + storeCount(`SELECT COUNT(*) FROM current_behaviour`),
			rows["6300/ASSY"]["formula"].(string)}},
		{"object", "/object?o=6200%2FWELD", []string{rows["6200/WELD"]["formula"].(string), rows["6200/WELD"]["reason"].(string), "Drivers tried", "High-low beside least squares"}},
		{"object with accruals", "/object?o=6500%2FWELD", []string{rows["6500/WELD"]["formula"].(string), "Accruals", "Net effect per period"}},
		{"lines", "/object/lines?o=6200%2FWELD&p=2026-06", []string{"Back to 6200/WELD", "Lines in 2026-06",
			storeCount(`SELECT COUNT(*) FROM gl_lines WHERE account = '6200' AND cost_center = 'WELD' AND period = '2026-06'`)}},
		{"alerts", "/alerts", []string{openAlert, "Acknowledge alert 1"}},
		{"proposals", "/proposals", []string{"Approval is not required"}},
		{"budget", "/budgets?plan=plan-2026-q3", []string{"Budget plan-2026-q3", "6300/ASSY Supervision"}},
		{"variances", "/budgets?variance=2026-06", []string{"Variances 2026-06", "6300/ASSY Supervision"}},
		{"sources", "/sources", []string{"Sync runs", "No row was rejected."}},
	}
	for _, size := range []struct {
		name          string
		width, height int64
	}{{"1280x800", 1280, 800}, {"390x844", 390, 844}} {
		for _, p := range pages {
			err := chromedp.Do(ctx, chromedp.EmulateViewport(size.width, size.height), chromedp.Navigate(srv.URL+p.path),
				chromedp.WaitVisible(chromedp.CSS("main h1")))
			if err != nil {
				t.Fatalf("%s at %s: %v", p.name, size.name, err)
			}
			text := inBrowser(t, ctx, chromedp.Text(chromedp.CSS("main")))
			png := inBrowser(t, ctx, chromedp.CaptureScreenshot())
			overflow := inBrowser(t, ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > window.innerWidth`))
			if err := chromedp.Do(ctx, chromedp.KeyEvent(kb.Tab)); err != nil {
				t.Fatal(err)
			}
			focused := inBrowser(t, ctx, chromedp.Evaluate[string](`document.activeElement.textContent`))
			inBrowser(t, ctx, chromedp.Evaluate[bool](axe+"\n;true"))
			violations := inBrowser(t, ctx, chromedp.Evaluate[[]string](axeRun, chromedp.EvalAwaitPromise))
			for _, want := range p.want {
				if !strings.Contains(text, want) {
					t.Errorf("%s at %s: the page does not show %q:\n%s", p.name, size.name, want, text)
				}
			}
			for _, v := range violations {
				t.Errorf("%s at %s: axe-core: %s", p.name, size.name, v)
			}
			if focused != "Skip to the content" {
				t.Errorf("%s at %s: the first Tab focuses %q, want the skip link", p.name, size.name, focused)
			}
			if overflow {
				t.Errorf("%s at %s: the page scrolls sideways", p.name, size.name)
			}
			if err := os.WriteFile(filepath.Join(shots, p.name+"-"+size.name+".png"), png, 0o600); err != nil {
				t.Fatal(err)
			}
		}
	}

	// An acknowledgement and a pin through the forms, as typed and clicked.
	if err := chromedp.Do(ctx); err != nil { // the tab, before a step's own deadline
		t.Fatal(err)
	}
	for i, step := range []chromedp.Action[chromedp.Void]{
		chromedp.EmulateViewport(1280, 800),
		chromedp.Navigate(srv.URL + "/alerts"),
		chromedp.SendKeys(chromedp.CSS("#note-1"), "lease renewed in July, as agreed"),
		chromedp.Click(chromedp.CSS("#alert-1 button")),
		chromedp.WaitVisible(chromedp.CSS("#alert-1 .decide-note")),
		chromedp.Navigate(srv.URL + "/object?o=6500%2FWELD"),
		chromedp.SetValue(chromedp.CSS("#pin-class"), "fixed"),
		chromedp.Clear(chromedp.CSS("#pin-driver")), // a fixed formula has none
		chromedp.SendKeys(chromedp.CSS("#pin-fixed"), "1200.00"),
		chromedp.SendKeys(chromedp.CSS("#pin-reason"), "service contract to 2027"),
		chromedp.Click(chromedp.CSS("#decide-h ~ form button")),
		chromedp.WaitVisible(chromedp.CSS("#pinned")),
	} {
		sctx, cancel := context.WithTimeout(ctx, 30*time.Second)
		err := chromedp.Do(sctx, step)
		cancel()
		if err != nil {
			page, _ := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("body")))
			t.Fatalf("form step %d: %v\n%s", i, err, page)
		}
	}
	after := inBrowser(t, ctx, chromedp.Text(chromedp.CSS("main")))
	if n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE id = 1 AND status = 'acknowledged'`); n != 1 {
		t.Error("the form did not acknowledge alert 1")
	}
	user, err := decider("")
	if err != nil {
		t.Fatal(err)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE kind = 'note' AND alert_id = 1 AND made_by = '`+user+`'`); n != 1 {
		t.Errorf("the note is not stored under %s", user)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM current_pins WHERE object = '6500/WELD' AND class = 'fixed' AND made_by = '`+user+`'`); n != 1 {
		t.Error("the form did not pin 6500/WELD")
	}
	if !strings.Contains(after, "Pinned\ncost = 1,200.00") && !strings.Contains(after, "cost = 1,200.00 by "+user) {
		t.Errorf("the object page after the pin:\n%s", after)
	}
	mu.Lock()
	defer mu.Unlock()
	for _, e := range consoleErrors {
		t.Errorf("console: %s", e)
	}
}

// inBrowser runs one action in the browser and returns its result.
func inBrowser[T any](t *testing.T, ctx context.Context, a chromedp.Action[T]) T {
	t.Helper()
	v, err := chromedp.Run(ctx, a)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

func openRO(t *testing.T, store string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	return db
}
