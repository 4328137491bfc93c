package main

import (
	"context"
	"net/http/httptest"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// Signing in with the users file, as typed and clicked in Chromium: the
// form passes axe-core, the page after names the user, and signing out
// comes back to the form.
func TestWebSignInInChromium(t *testing.T) {
	chromium := needTool(t, "chromium", "chromium")
	axe := needAxe(t)
	cfg := ownDemo(t)
	srv := httptest.NewServer(signInView(t, filepath.Dir(cfg)).Handler())
	defer srv.Close()

	opts := []chromedp.ExecAllocatorOption{chromedp.ExecPath(chromium), chromedp.Headless, chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.NoFirstRun, chromedp.UserDataDir(t.TempDir())}
	actx, cancel := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancel()
	ctx, cancel := chromedp.NewContext(actx)
	defer cancel()
	ctx, cancel = context.WithTimeout(ctx, 2*time.Minute)
	defer cancel()

	for _, size := range []struct{ width, height int64 }{{1280, 800}, {390, 844}} {
		if err := chromedp.Do(ctx, chromedp.EmulateViewport(size.width, size.height), chromedp.Navigate(srv.URL+"/objects"),
			chromedp.WaitVisible(chromedp.CSS("#password"))); err != nil {
			t.Fatal(err)
		}
		inBrowser(t, ctx, chromedp.Evaluate[bool](axe+"\n;true"))
		for _, v := range inBrowser(t, ctx, chromedp.Evaluate[[]string](axeRun, chromedp.EvalAwaitPromise)) {
			t.Errorf("sign-in form at %dx%d: axe-core: %s", size.width, size.height, v)
		}
	}
	if err := chromedp.Do(ctx,
		chromedp.SendKeys(chromedp.CSS("#name"), "ana.accountant"),
		chromedp.SendKeys(chromedp.CSS("#password"), "correct horse battery"),
		chromedp.Click(chromedp.CSS("form.login button")),
		chromedp.WaitVisible(chromedp.CSS("form.signout")),
	); err != nil {
		t.Fatal(err)
	}
	page := inBrowser(t, ctx, chromedp.Text(chromedp.CSS("body")))
	if !strings.Contains(page, "Signed in as ana.accountant") || !strings.Contains(page, "Objects 1–") {
		t.Errorf("after signing in, the objects page asked for:\n%s", page)
	}
	inBrowser(t, ctx, chromedp.Evaluate[bool](axe+"\n;true"))
	for _, v := range inBrowser(t, ctx, chromedp.Evaluate[[]string](axeRun, chromedp.EvalAwaitPromise)) {
		t.Errorf("signed in: axe-core: %s", v)
	}
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS("form.signout button")), chromedp.WaitVisible(chromedp.CSS("#password"))); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/"), chromedp.WaitVisible(chromedp.CSS("#password"))); err != nil {
		t.Errorf("after signing out the overview does not ask to sign in: %v", err)
	}
}
