package costdrifttest

import (
	"go/build"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// MailpitInstall is how a developer or CI installs the SMTP server the
// mail tests run against.
const MailpitInstall = "go install github.com/axllent/mailpit@v1.33.1"

// Mailpit finds the mailpit binary on PATH or in $(go env GOPATH)/bin.
// Missing, the test fails in CI (CI=true), where nothing may be skipped for a
// missing tool, and is skipped elsewhere with the command that installs it.
func Mailpit(tb testing.TB) string {
	tb.Helper()
	if p, err := exec.LookPath("mailpit"); err == nil {
		return p
	}
	gopath := os.Getenv("GOPATH")
	if gopath == "" {
		gopath = build.Default.GOPATH
	}
	p := filepath.Join(strings.Split(gopath, string(os.PathListSeparator))[0], "bin", "mailpit")
	if _, err := os.Stat(p); err == nil {
		return p
	}
	if os.Getenv("CI") == "true" {
		tb.Fatalf("mailpit not found on PATH or in GOPATH/bin; CI must install it: %s", MailpitInstall)
	}
	tb.Skipf("mailpit not found; install it to run the SMTP tests: %s", MailpitInstall)
	return ""
}
