package mail

import (
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/json"
	"encoding/pem"
	"io"
	"math/big"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"

	gomail "github.com/wneessen/go-mail"
)

// The tests below talk to a real SMTP server: mailpit, started on free
// loopback ports and read back through its HTTP API.

func freePort(t *testing.T) int { return costdrifttest.FreePort(t) }

// mailpit is one running server.
type mailpit struct {
	t *testing.T
	*costdrifttest.MailpitServer
}

// startMailpit runs mailpit on smtpPort (0: a free one) with extra flags,
// and waits until it answers.
func startMailpit(t *testing.T, smtpPort int, flags ...string) *mailpit {
	t.Helper()
	return &mailpit{t: t, MailpitServer: costdrifttest.StartMailpit(t, smtpPort, flags...)}
}

type apiAddress struct{ Name, Address string }

type apiSummary struct {
	ID      string
	To      []apiAddress
	Subject string
}

type apiMessage struct {
	ID      string
	To      []apiAddress
	Subject string
	Text    string
	HTML    string
	Inline  []struct{ PartID, FileName, ContentType, ContentID string }
}

func (m *mailpit) get(path string, v any) []byte {
	m.t.Helper()
	resp, err := http.Get(m.API + path)
	if err != nil {
		m.t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil || resp.StatusCode != 200 {
		m.t.Fatalf("GET %s: %d %v %s", path, resp.StatusCode, err, b)
	}
	if v != nil {
		if err := json.Unmarshal(b, v); err != nil {
			m.t.Fatalf("GET %s: %v", path, err)
		}
	}
	return b
}

// messages returns every message, by recipient address.
func (m *mailpit) messages() map[string][]apiMessage {
	m.t.Helper()
	var list struct{ Messages []apiSummary }
	m.get("/api/v1/messages", &list)
	out := map[string][]apiMessage{}
	for _, s := range list.Messages {
		var msg apiMessage
		m.get("/api/v1/message/"+s.ID, &msg)
		for _, to := range msg.To {
			out[to.Address] = append(out[to.Address], msg)
		}
	}
	return out
}

func (m *mailpit) raw(id string) string { return string(m.get("/api/v1/message/"+id+"/raw", nil)) }

// selfSigned writes a certificate for 127.0.0.1 and localhost, and its key,
// and returns their paths and a pool that trusts it.
func selfSigned(t *testing.T) (certFile, keyFile string, pool *x509.CertPool) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{
		SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: "costdrift test SMTP"},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(24 * time.Hour),
		KeyUsage: x509.KeyUsageDigitalSignature | x509.KeyUsageCertSign, ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth},
		BasicConstraintsValid: true, IsCA: true,
		IPAddresses: []net.IP{net.ParseIP("127.0.0.1")}, DNSNames: []string{"localhost"},
	}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	keyDER, err := x509.MarshalECPrivateKey(key)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	certFile, keyFile = filepath.Join(dir, "cert.pem"), filepath.Join(dir, "key.pem")
	os.WriteFile(certFile, pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der}), 0o600)
	os.WriteFile(keyFile, pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: keyDER}), 0o600)
	cert, _ := x509.ParseCertificate(der)
	pool = x509.NewCertPool()
	pool.AddCert(cert)
	return certFile, keyFile, pool
}

const testPassword = "s3cret-Pw-never-in-mail"

// TestSendSTARTTLSWithAuthThroughMailpit: two digests over STARTTLS with a
// self-signed certificate and AUTH, read back as routed, with both parts,
// the inline chart, the hostile name escaped and no password anywhere.
func TestSendSTARTTLSWithAuthThroughMailpit(t *testing.T) {
	certFile, keyFile, pool := selfSigned(t)
	authFile := filepath.Join(t.TempDir(), "auth")
	os.WriteFile(authFile, []byte("costdrift:"+testPassword+"\n"), 0o600)
	mp := startMailpit(t, 0, "--smtp-tls-cert", certFile, "--smtp-tls-key", keyFile, "--smtp-require-starttls",
		"--smtp-auth-file", authFile)
	server := Server{Host: "127.0.0.1", Port: mp.SMTPPort, TLS: "starttls", Username: "costdrift", Password: testPassword,
		ConnectTimeout: 5 * time.Second, SendTimeout: 20 * time.Second, TLSConfig: &tls.Config{RootCAs: pool}}

	paint := hostileDigest()
	paint.To = "paint@example.test"
	assy := sampleDigest("assy@example.test")
	assy.Items = assy.Items[1:2]
	var msgs []*gomail.Msg
	for _, d := range []Digest{paint, assy} {
		m, err := Message(d)
		if err != nil {
			t.Fatal(err)
		}
		msgs = append(msgs, m)
	}
	for i, r := range server.Send(t.Context(), msgs) {
		if r.Err != nil {
			t.Fatalf("message %d: %v\n%s", i, r.Err, mp.Log())
		}
		if !strings.HasPrefix(r.Answer, "250") {
			t.Errorf("message %d: server answer %q, want a 250 reply", i, r.Answer)
		}
		if strings.Contains(r.Answer, testPassword) {
			t.Errorf("answer holds the password")
		}
	}

	got := mp.messages()
	if len(got) != 2 || len(got["paint@example.test"]) != 1 || len(got["assy@example.test"]) != 1 {
		t.Fatalf("messages by recipient: %v", got)
	}
	p := got["paint@example.test"][0]
	if p.Subject != "costdrift: 3 changes in cost behaviour, 1 critical (PAINT, "+hostile+", source gl)" {
		t.Errorf("subject %q", p.Subject)
	}
	wantText, _ := Text(paint)
	if strings.TrimSpace(strings.ReplaceAll(p.Text, "\r\n", "\n")) != strings.TrimSpace(wantText) {
		t.Errorf("text part as received:\n%s\nwant\n%s", p.Text, wantText)
	}
	if strings.Contains(p.HTML, "<script") || !strings.Contains(p.HTML, "&lt;script&gt;") {
		t.Errorf("HTML part does not escape the hostile account name")
	}
	if len(p.Inline) != 2 || p.Inline[0].ContentType != "image/png" || p.Inline[0].ContentID != "chart-8@costdrift" {
		t.Errorf("inline parts %+v, want the two charts as image/png with their content ids", p.Inline)
	}
	a := got["assy@example.test"][0]
	if a.Subject != "costdrift: 1 change in cost behaviour (ASSY)" || len(a.Inline) != 1 || !strings.Contains(a.Text, "11.92 × shipments") {
		t.Errorf("second digest: %q, %d inline, text:\n%s", a.Subject, len(a.Inline), a.Text)
	}
	for _, m := range []apiMessage{p, a} {
		if raw := mp.raw(m.ID); strings.Contains(raw, testPassword) || !strings.Contains(raw, "Content-Type: image/png") {
			t.Errorf("raw message %s: password present %v, or no PNG part", m.ID, strings.Contains(raw, testPassword))
		}
	}
	if strings.Contains(mp.Log(), testPassword) {
		t.Errorf("the password appears in the server's log")
	}
}

// TestSendRefusesWithoutTLSOrWithWrongPassword: starttls is required (a
// server without it gets nothing), an untrusted certificate is refused, and
// a wrong password fails without echoing it.
func TestSendRefusesWithoutTLSOrWithWrongPassword(t *testing.T) {
	plain := startMailpit(t, 0)
	m, err := Message(sampleDigest("costs@example.test"))
	if err != nil {
		t.Fatal(err)
	}
	res := Server{Host: "127.0.0.1", Port: plain.SMTPPort, TLS: "starttls", ConnectTimeout: 5 * time.Second}.Send(t.Context(), []*gomail.Msg{m})
	if res[0].Err == nil {
		t.Error("starttls: sent to a server that offers no STARTTLS")
	}
	if n := len(plain.messages()); n != 0 {
		t.Errorf("%d messages reached the plain server under starttls", n)
	}
	// Plain text is allowed to loopback.
	res = Server{Host: "127.0.0.1", Port: plain.SMTPPort, TLS: "none", ConnectTimeout: 5 * time.Second}.Send(t.Context(), []*gomail.Msg{m})
	if res[0].Err != nil || len(plain.messages()) != 1 {
		t.Errorf("tls none to loopback: %v, %d messages", res[0].Err, len(plain.messages()))
	}

	certFile, keyFile, pool := selfSigned(t)
	authFile := filepath.Join(t.TempDir(), "auth")
	os.WriteFile(authFile, []byte("costdrift:"+testPassword+"\n"), 0o600)
	secure := startMailpit(t, 0, "--smtp-tls-cert", certFile, "--smtp-tls-key", keyFile, "--smtp-require-starttls", "--smtp-auth-file", authFile)
	untrusted := Server{Host: "127.0.0.1", Port: secure.SMTPPort, TLS: "starttls", Username: "costdrift", Password: testPassword,
		ConnectTimeout: 5 * time.Second}.Send(t.Context(), []*gomail.Msg{m})
	if untrusted[0].Err == nil {
		t.Error("sent over a certificate no authority vouches for")
	}
	wrong := "Wrong-" + testPassword
	res = Server{Host: "127.0.0.1", Port: secure.SMTPPort, TLS: "starttls", Username: "costdrift", Password: wrong,
		ConnectTimeout: 5 * time.Second, TLSConfig: &tls.Config{RootCAs: pool}}.Send(t.Context(), []*gomail.Msg{m})
	if res[0].Err == nil {
		t.Error("sent with a wrong password")
	} else if strings.Contains(res[0].Err.Error(), wrong) {
		t.Errorf("error shows the password: %v", res[0].Err)
	}
	if n := len(secure.messages()); n != 0 {
		t.Errorf("%d messages reached the server without trust or with a wrong password", n)
	}
}
