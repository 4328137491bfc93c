package mail

import (
	"bytes"
	"context"
	"crypto/tls"
	"errors"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	gomail "github.com/wneessen/go-mail"
	maillog "github.com/wneessen/go-mail/log"

	"github.com/costdrift/costdrift/internal/atomicfile"
)

// Message builds the MIME message of a digest: multipart/alternative with
// the text part first and the HTML part, the charts embedded as inline
// PNG parts named by their content id.
func Message(d Digest) (*gomail.Msg, error) {
	txt, err := Text(d)
	if err != nil {
		return nil, err
	}
	html, err := HTML(d)
	if err != nil {
		return nil, err
	}
	m := gomail.NewMsg(gomail.WithNoDefaultUserAgent())
	if err := m.From(d.From); err != nil {
		return nil, fmt.Errorf("mail: from address %q: %w", d.From, err)
	}
	if err := m.To(d.To); err != nil {
		return nil, fmt.Errorf("mail: recipient %q: %w", d.To, err)
	}
	m.Subject(d.subject())
	m.SetDateWithValue(d.Date)
	m.SetMessageID()
	m.SetGenHeader(gomail.HeaderXMailer, "costdrift")
	m.SetBodyString(gomail.TypeTextPlain, txt)
	m.AddAlternativeString(gomail.TypeTextHTML, html)
	for _, v := range views(d.Items) {
		if v.CID == "" {
			continue
		}
		for _, it := range d.Items {
			if it.Alert.ID == v.ID {
				name := fmt.Sprintf("chart-%d.png", v.ID)
				if err := m.EmbedReader(name, bytes.NewReader(it.Chart), gomail.WithFileContentID("<"+v.CID+">"),
					gomail.WithFileContentType(gomail.ContentType("image/png"))); err != nil {
					return nil, fmt.Errorf("mail: chart of alert %d: %w", v.ID, err)
				}
				break
			}
		}
	}
	return m, nil
}

// Server is how to reach the SMTP server. TLS is "starttls" (the session
// must be upgraded, or nothing is sent), "tls" (TLS from the first byte)
// or "none" (plain text, refused unless Host is a loopback address).
type Server struct {
	Host     string
	Port     int
	TLS      string
	Username string // AUTH PLAIN or LOGIN when set
	Password string // never logged, stored or put in an error
	// ConnectTimeout bounds the connection and each SMTP command;
	// SendTimeout bounds one whole delivery (all of a cycle's messages).
	ConnectTimeout time.Duration
	SendTimeout    time.Duration
	// TLSConfig overrides the default (system roots, TLS 1.2 or later,
	// ServerName = Host); tests pass their own certificate authority.
	TLSConfig *tls.Config
}

// Loopback reports whether host is this machine: "localhost" or a loopback
// IP address. It does not resolve names.
func Loopback(host string) bool {
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(strings.Trim(host, "[]"))
	return ip != nil && ip.IsLoopback()
}

// Check refuses a setting that would send in the clear over a network.
func (s Server) Check() error {
	switch s.TLS {
	case "starttls", "tls":
	case "none":
		if !Loopback(s.Host) {
			return fmt.Errorf("mail.smtp.tls is none, but %s is not a loopback host: alert mail carries ledger data and is sent only over TLS; use starttls or tls, or none with localhost", s.Host)
		}
	default:
		return fmt.Errorf("mail.smtp.tls must be starttls, tls or none, not %q", s.TLS)
	}
	if s.Host == "" {
		return errors.New("mail.smtp.host is empty")
	}
	return nil
}

// Result is what happened to one message.
type Result struct {
	Err    error  // nil when the server accepted it
	Answer string // the server's last reply to it, e.g. "250 2.0.0 Ok: queued as …"
}

// Send delivers msgs over one connection and reports each message's fate.
// A failure to connect, to start TLS or to authenticate fails them all.
// Error texts never hold the password.
func (s Server) Send(ctx context.Context, msgs []*gomail.Msg) []Result {
	results := make([]Result, len(msgs))
	fail := func(err error) []Result {
		err = s.scrub(err)
		for i := range results {
			results[i] = Result{Err: err}
		}
		return results
	}
	if err := s.Check(); err != nil {
		return fail(err)
	}
	connect, total := s.ConnectTimeout, s.SendTimeout
	if connect <= 0 {
		connect = 30 * time.Second
	}
	if total <= 0 {
		total = 5 * time.Minute
	}
	tlsConf := s.TLSConfig
	if tlsConf == nil {
		tlsConf = &tls.Config{MinVersion: tls.VersionTLS12}
	}
	tlsConf = tlsConf.Clone()
	if tlsConf.ServerName == "" {
		tlsConf.ServerName = s.Host
	}
	replies := &replyLog{}
	// go-mail watches the context only while it connects: the greeting, each
	// command and its QUIT wait for the command timeout, and a QUIT that
	// gets no answer leaves the connection open. So the connection is
	// dialled here, and closed when the context ends and when Send returns:
	// that ends any wait at once.
	conn := &heldConn{}
	opts := s.options(connect, tlsConf, replies, conn)
	client, err := gomail.NewClient(s.Host, opts...)
	if err != nil {
		return fail(fmt.Errorf("smtp %s: %w", s.addr(), err))
	}
	ctx, cancel := context.WithTimeout(ctx, total)
	defer cancel()
	stop := context.AfterFunc(ctx, conn.close)
	defer stop()
	defer conn.close()
	// ended says why the context ended: the whole delivery's time ran out,
	// or the caller stopped it (a daemon shutting down).
	ended := func() error {
		if errors.Is(ctx.Err(), context.DeadlineExceeded) {
			return fmt.Errorf("smtp %s: sending took longer than %s", s.addr(), total)
		}
		return fmt.Errorf("smtp %s: delivery interrupted: %w", s.addr(), ctx.Err())
	}
	if err := client.DialWithContext(ctx); err != nil {
		if ctx.Err() != nil {
			return fail(ended())
		}
		return fail(fmt.Errorf("smtp %s: %w", s.addr(), err))
	}
	defer client.Close() // QUIT, before the connection is closed
	for i, m := range msgs {
		replies.reset()
		if err := client.Send(m); err != nil {
			results[i] = Result{Err: s.scrub(fmt.Errorf("smtp %s: %w", s.addr(), err)), Answer: replies.last()}
			if ctx.Err() != nil {
				return fail(ended())
			}
			continue
		}
		results[i] = Result{Answer: replies.last()}
	}
	return results
}

// heldConn is the connection of one delivery, closed from another
// goroutine when the delivery's context ends.
type heldConn struct {
	mu     sync.Mutex
	c      net.Conn
	closed bool
}

func (h *heldConn) set(c net.Conn) {
	h.mu.Lock()
	defer h.mu.Unlock()
	if h.closed {
		c.Close() // the context ended while it was dialled
		return
	}
	h.c = c
}

func (h *heldConn) close() {
	h.mu.Lock()
	defer h.mu.Unlock()
	h.closed = true
	if h.c != nil {
		h.c.Close()
	}
}

func (s Server) addr() string { return net.JoinHostPort(s.Host, fmt.Sprint(s.Port)) }

// scrub removes the password from an error text, in case a server echoes
// what it was sent.
func (s Server) scrub(err error) error {
	if err == nil || s.Password == "" || !strings.Contains(err.Error(), s.Password) {
		return err
	}
	return errors.New(strings.ReplaceAll(err.Error(), s.Password, "[password]"))
}

// replyLog keeps the server's replies of the current message; it logs
// nothing anywhere, and ignores what the client sends (AUTH included).
type replyLog struct {
	mu    sync.Mutex
	lines []string
}

func (r *replyLog) reset() { r.mu.Lock(); r.lines = nil; r.mu.Unlock() }

func (r *replyLog) last() string {
	r.mu.Lock()
	defer r.mu.Unlock()
	if len(r.lines) == 0 {
		return ""
	}
	return r.lines[len(r.lines)-1]
}

func (r *replyLog) add(l maillog.Log) {
	if l.Direction != maillog.DirServerToClient {
		return
	}
	line := strings.TrimSpace(fmt.Sprintf(l.Format, l.Messages...))
	if line == "" {
		return
	}
	r.mu.Lock()
	r.lines = append(r.lines, oneLine(line))
	r.mu.Unlock()
}

func (r *replyLog) Debugf(l maillog.Log) { r.add(l) }
func (r *replyLog) Infof(l maillog.Log)  { r.add(l) }
func (r *replyLog) Warnf(l maillog.Log)  { r.add(l) }
func (r *replyLog) Errorf(l maillog.Log) { r.add(l) }

// Password reads the SMTP password from the environment variable envName
// or, when file is set, from that file (its first line; the file should be
// owner-only: one that others can read or change is refused). Neither
// set, or the variable empty, is "": no AUTH.
func Password(envName, file string) (string, error) {
	if file != "" {
		f, err := os.Open(file)
		if err != nil {
			return "", fmt.Errorf("mail.smtp.password_file: %w", err)
		}
		defer f.Close()
		// The mode is checked on the open file, so that it is the file read.
		st, err := f.Stat()
		if err != nil {
			return "", fmt.Errorf("mail.smtp.password_file: %w", err)
		}
		if perm := st.Mode().Perm(); perm&0o077 != 0 {
			return "", fmt.Errorf("mail.smtp.password_file %s has mode %04o: people other than its owner can read or change it, and it holds a password; run chmod 600 %s", file, perm, file)
		}
		b, err := io.ReadAll(io.LimitReader(f, 64<<10))
		if err != nil {
			return "", fmt.Errorf("mail.smtp.password_file: %w", err)
		}
		line, _, _ := strings.Cut(string(b), "\n")
		return strings.TrimRight(line, "\r"), nil
	}
	if envName == "" {
		return "", nil
	}
	return os.Getenv(envName), nil
}

// WriteOutbox writes m as a new .eml file (mode 0600, whole or not at all)
// into dir, creating the folder owner-only (0700), and returns the file's
// path. name is part of the file name; the time keeps files in order.
func WriteOutbox(dir string, m *gomail.Msg, when time.Time, name string) (string, error) {
	if err := os.MkdirAll(dir, 0o700); err != nil {
		return "", fmt.Errorf("mail: outbox: %w", err)
	}
	safe := strings.Map(func(r rune) rune {
		if r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '.' || r == '-' || r == '_' {
			return r
		}
		return '_'
	}, name)
	base := when.UTC().Format("20060102T150405Z") + "-" + safe
	for i := 0; ; i++ {
		p := filepath.Join(dir, base+".eml")
		if i > 0 {
			p = filepath.Join(dir, fmt.Sprintf("%s-%d.eml", base, i))
		}
		// A new name each time, written whole or not at all: a mail client
		// or a pickup script never reads half a message.
		err := atomicfile.WriteNew(p, 0o600, func(w io.Writer) error {
			_, err := m.WriteTo(w)
			return err
		})
		if errors.Is(err, os.ErrExist) {
			continue
		}
		if err != nil {
			return "", fmt.Errorf("mail: outbox: %w", err)
		}
		return p, nil
	}
}

// options are the client's settings: port and timeout, the TLS policy,
// AUTH when a username is set, the replies logged into replies, and a
// dialler that keeps the connection in conn so that Send can close it.
func (s Server) options(connect time.Duration, tlsConf *tls.Config, replies *replyLog, conn *heldConn) []gomail.Option {
	opts := []gomail.Option{gomail.WithPort(s.Port), gomail.WithTimeout(connect), gomail.WithTLSConfig(tlsConf),
		gomail.WithDebugLog(), gomail.WithLogger(replies)}
	switch s.TLS {
	case "starttls":
		opts = append(opts, gomail.WithTLSPolicy(gomail.TLSMandatory))
	case "tls":
		opts = append(opts, gomail.WithSSL())
	case "none":
		opts = append(opts, gomail.WithTLSPolicy(gomail.NoTLS))
	}
	if s.Username != "" {
		// PLAIN, else LOGIN: what nearly every server offers. In the clear
		// only on loopback (Check has refused anything else).
		mechs := []gomail.SMTPAuthType{gomail.SMTPAuthPlain, gomail.SMTPAuthLogin}
		if s.TLS == "none" {
			mechs = []gomail.SMTPAuthType{gomail.SMTPAuthPlainNoEnc, gomail.SMTPAuthLoginNoEnc}
		}
		opts = append(opts, gomail.WithOpportunisticSMTPAuth(mechs...), gomail.WithUsername(s.Username),
			gomail.WithPassword(s.Password))
	}
	opts = append(opts, gomail.WithDialContextFunc(func(ctx context.Context, network, address string) (net.Conn, error) {
		d := &net.Dialer{}
		var c net.Conn
		var err error
		if s.TLS == "tls" {
			// A *tls.Conn, unwrapped, so that the session counts as
			// encrypted for AUTH.
			c, err = (&tls.Dialer{NetDialer: d, Config: tlsConf}).DialContext(ctx, network, address)
		} else {
			c, err = d.DialContext(ctx, network, address)
		}
		if err == nil {
			conn.set(c)
		}
		return c, err
	}))
	return opts
}
