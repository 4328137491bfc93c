package mail

import (
	"bufio"
	"context"
	"crypto/tls"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	gomail "github.com/wneessen/go-mail"
)

// holdingServer listens on 127.0.0.1 and, on each connection, greets (or,
// with silent, says nothing at all), answers EHLO, and then never answers
// again. held receives each connection that got that far, and hungUp each
// one the client has closed.
func holdingServer(t *testing.T, silent bool) (port int, held, hungUp chan struct{}) {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	held, hungUp = make(chan struct{}, 16), make(chan struct{}, 16)
	var mu sync.Mutex
	var open []net.Conn
	var conns sync.WaitGroup
	t.Cleanup(func() {
		ln.Close()
		mu.Lock()
		for _, c := range open {
			c.Close()
		}
		mu.Unlock()
		conns.Wait()
	})
	go func() {
		for {
			c, err := ln.Accept()
			if err != nil {
				return
			}
			mu.Lock()
			open = append(open, c)
			mu.Unlock()
			conns.Add(1)
			go func() {
				defer conns.Done()
				defer c.Close()
				r := bufio.NewReader(c)
				if !silent {
					fmt.Fprintf(c, "220 hold.example.test ESMTP\r\n")
					for {
						line, err := r.ReadString('\n')
						if err != nil {
							return
						}
						if cmd := strings.ToUpper(line); strings.HasPrefix(cmd, "EHLO") || strings.HasPrefix(cmd, "HELO") {
							fmt.Fprintf(c, "250 hold.example.test\r\n")
							continue
						}
						break
					}
				}
				held <- struct{}{}
				io.Copy(io.Discard, r) // until the client hangs up
				hungUp <- struct{}{}
			}()
		}
	}()
	return ln.Addr().(*net.TCPAddr).Port, held, hungUp
}

// A delivery stuck on a server that stops answering ends as soon as its
// context does, not when the command timeout runs out (a daemon being
// stopped waits for it), and closes its connection. Both a server silent
// from the start (no greeting) and one that hangs after EHLO.
func TestSendEndsWithItsContext(t *testing.T) {
	m, err := Message(sampleDigest("costs@example.test"))
	if err != nil {
		t.Fatal(err)
	}
	for _, silent := range []bool{true, false} {
		t.Run(fmt.Sprintf("silent %v", silent), func(t *testing.T) {
			port, held, hungUp := holdingServer(t, silent)
			ctx, cancel := context.WithCancel(t.Context())
			go func() {
				select {
				case <-held:
				case <-time.After(10 * time.Second):
				}
				cancel()
			}()
			start := time.Now()
			res := Server{Host: "127.0.0.1", Port: port, TLS: "none", ConnectTimeout: 20 * time.Second, SendTimeout: time.Minute}.Send(ctx, []*gomail.Msg{m})
			took := time.Since(start)
			if res[0].Err == nil {
				t.Fatal("a held delivery reported success")
			}
			if took > 3*time.Second {
				t.Errorf("Send returned %v after it started, its context cancelled on reaching the server: it waited for the timeout", took.Round(time.Millisecond))
			}
			select {
			case <-hungUp:
			case <-time.After(2 * time.Second):
				t.Error("Send returned but left its connection to the server open")
			}
		})
	}
}

// Implicit TLS ("tls", usually port 465) with AUTH delivers through a
// server that requires TLS from the first byte.
func TestSendImplicitTLSThroughMailpit(t *testing.T) {
	certFile, keyFile, pool := selfSigned(t)
	authFile := filepath.Join(t.TempDir(), "auth")
	os.WriteFile(authFile, []byte("costdrift:"+testPassword+"\n"), 0o600)
	mp := startMailpit(t, 0, "--smtp-tls-cert", certFile, "--smtp-tls-key", keyFile, "--smtp-require-tls", "--smtp-auth-file", authFile)
	m, err := Message(sampleDigest("costs@example.test"))
	if err != nil {
		t.Fatal(err)
	}
	res := Server{Host: "127.0.0.1", Port: mp.SMTPPort, TLS: "tls", Username: "costdrift", Password: testPassword,
		ConnectTimeout: 5 * time.Second, TLSConfig: &tls.Config{RootCAs: pool}}.Send(t.Context(), []*gomail.Msg{m})
	if res[0].Err != nil || !strings.HasPrefix(res[0].Answer, "250") {
		t.Fatalf("implicit TLS: %v, answer %q\n%s", res[0].Err, res[0].Answer, mp.Log())
	}
	if got := mp.messages(); len(got["costs@example.test"]) != 1 {
		t.Errorf("messages by recipient %v, want one to costs@example.test", got)
	}
}
