package costdrifttest

import (
	"bytes"
	"fmt"
	"go/build"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
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

// MailpitServer is one running mailpit: its SMTP port, the base address of
// its HTTP API and what it has logged.
type MailpitServer struct {
	SMTPPort int
	API      string
	cmd      *exec.Cmd
	log      *syncBuffer
}

// Log is what the server has written so far.
func (m *MailpitServer) Log() string { return m.log.String() }

// StartMailpit runs mailpit with its SMTP server on smtpPort (0: a free
// loopback port) and the extra flags, waits until both its API and its SMTP
// port answer, and stops it when the test ends.
func StartMailpit(tb testing.TB, smtpPort int, flags ...string) *MailpitServer {
	tb.Helper()
	bin := Mailpit(tb)
	if smtpPort == 0 {
		smtpPort = FreePort(tb)
	}
	httpPort := FreePort(tb)
	args := append([]string{"--smtp", fmt.Sprintf("127.0.0.1:%d", smtpPort), "--listen", fmt.Sprintf("127.0.0.1:%d", httpPort),
		"--database", filepath.Join(tb.TempDir(), "mailpit.db"), "--smtp-disable-rdns", "--disable-version-check", "--quiet"}, flags...)
	m := &MailpitServer{SMTPPort: smtpPort, API: fmt.Sprintf("http://127.0.0.1:%d", httpPort), log: &syncBuffer{}}
	m.cmd = exec.Command(bin, args...)
	m.cmd.Stdout, m.cmd.Stderr = m.log, m.log
	if err := m.cmd.Start(); err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { m.cmd.Process.Kill(); m.cmd.Wait() })
	deadline := time.Now().Add(15 * time.Second)
	for {
		resp, err := http.Get(m.API + "/api/v1/messages")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == 200 {
				break
			}
		}
		if time.Now().After(deadline) {
			tb.Fatalf("mailpit did not answer on %s: %v\n%s", m.API, err, m.Log())
		}
		time.Sleep(50 * time.Millisecond)
	}
	// The SMTP side may open a moment after the API.
	for {
		c, err := net.Dial("tcp", fmt.Sprintf("127.0.0.1:%d", smtpPort))
		if err == nil {
			c.Close()
			return m
		}
		if time.Now().After(deadline) {
			tb.Fatalf("mailpit SMTP port %d not open: %v\n%s", smtpPort, err, m.Log())
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// FreePort is a loopback TCP port nothing listens on at the moment.
func FreePort(tb testing.TB) int {
	tb.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		tb.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

// syncBuffer is a buffer a child process writes while a test reads it.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}
