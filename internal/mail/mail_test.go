package mail

import (
	"bytes"
	"flag"
	"fmt"
	"math"
	netmail "net/mail"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/mail")

// caution is the footer the command passes (report.Caution); the mail
// package takes it as text.
const caution = `Formulas are statistical estimates from past data, valid only inside the observed activity range
(the relevant range). They support, and never replace, the accountant's judgement and the
organisation's policies. Ledger data is confidential: keep this report to its intended readers.`

func alert(id int64, kind costdrift.AlertKind, object string, sev costdrift.Severity) costdrift.Alert {
	return costdrift.Alert{ID: id, Kind: kind, Object: object, Severity: sev, Status: costdrift.AlertOpen,
		Message: string(kind) + " on " + object, Fingerprint: costdrift.Fingerprint(kind, object, "")}
}

func TestRoutes(t *testing.T) {
	weld := alert(1, costdrift.AlertRateShift, "6200/WELD", costdrift.SeverityWarning)
	rent := alert(2, costdrift.AlertDataGap, "6500", costdrift.SeverityWarning)
	info := alert(3, costdrift.AlertSpendingOutlier, "6400/PAINT", costdrift.SeverityInfo)
	source := alert(4, costdrift.AlertSourceFailure, "gl", costdrift.SeverityCritical)
	plant := alert(5, costdrift.AlertRateShift, "6100/PLANT/2", costdrift.SeverityWarning)
	for _, tc := range []struct {
		name string
		r    Recipient
		a    costdrift.Alert
		want bool // glob routing on whole codes as the README defines it (Mail): * and ? match "/" too
	}{
		{"everything", Recipient{}, weld, true},
		{"cost centre glob", Recipient{CostCenters: []string{"WE*"}}, weld, true},
		{"other cost centre", Recipient{CostCenters: []string{"PAINT"}}, weld, false},
		{"account range glob", Recipient{Accounts: []string{"62??"}}, weld, true},
		{"account glob misses", Recipient{Accounts: []string{"5*"}}, weld, false},
		{"both must match", Recipient{Accounts: []string{"62*"}, CostCenters: []string{"PAINT"}}, weld, false},
		{"no cost centre, star", Recipient{CostCenters: []string{"*"}}, rent, true},
		{"no cost centre, named list", Recipient{CostCenters: []string{"WELD"}}, rent, false},
		{"below min severity", Recipient{MinSeverity: costdrift.SeverityWarning}, info, false},
		{"at min severity", Recipient{MinSeverity: costdrift.SeverityWarning}, weld, true},
		{"source to star", Recipient{CostCenters: []string{"*"}, Accounts: []string{"62*"}}, source, true},
		{"source to everything", Recipient{}, source, true},
		{"source not to a narrow list", Recipient{CostCenters: []string{"WELD"}}, source, false},
		{"source below min severity", Recipient{MinSeverity: costdrift.SeverityCritical}, source, true},
		{"cost centre with a slash, star", Recipient{CostCenters: []string{"*"}}, plant, true},
		{"cost centre with a slash, prefix", Recipient{CostCenters: []string{"PLANT/*"}}, plant, true},
		{"cost centre with a slash, ?", Recipient{CostCenters: []string{"PLANT?2"}}, plant, true},
		{"cost centre with a slash, other", Recipient{CostCenters: []string{"OTHER*"}}, plant, false},
		{"cost centre with a slash, both lists", Recipient{Accounts: []string{"61*"}, CostCenters: []string{"*"}}, plant, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := Routes(tc.r, tc.a); got != tc.want {
				t.Errorf("Routes(%+v, %s) = %v, want %v", tc.r, tc.a.Object, got, tc.want)
			}
		})
	}
}

// TestRoutesObject: an account code with a "/" (6100/01) in a cost centre
// with one (PLANT/2) makes the Object "6100/01/PLANT/2", which no split at
// a "/" can read back; the caller passes the object as the store holds it.
func TestRoutesObject(t *testing.T) {
	a := alert(1, costdrift.AlertRateShift, "6100/01/PLANT/2", costdrift.SeverityWarning)
	o := costdrift.CostObject{Account: "6100/01", CostCenter: "PLANT/2"}
	for _, tc := range []struct {
		name string
		r    Recipient
		want bool // glob routing on whole codes, as the README defines it (Mail)
	}{
		{"everything", Recipient{}, true},
		{"star", Recipient{CostCenters: []string{"*"}, Accounts: []string{"*"}}, true},
		{"cost centre prefix", Recipient{CostCenters: []string{"PLANT/*"}}, true},
		{"whole cost centre", Recipient{CostCenters: []string{"PLANT/2"}}, true},
		{"other cost centre", Recipient{CostCenters: []string{"OTHER*"}}, false},
		{"cost centre is not the account's tail", Recipient{CostCenters: []string{"01/*"}}, false},
		{"account prefix", Recipient{Accounts: []string{"6100/*"}}, true},
		{"whole account", Recipient{Accounts: []string{"6100/01"}, CostCenters: []string{"PLANT/?"}}, true},
		{"account is not the object's head", Recipient{Accounts: []string{"6100"}}, false},
		{"other account", Recipient{Accounts: []string{"62*"}}, false},
	} {
		if got := RoutesObject(tc.r, a, o); got != tc.want {
			t.Errorf("%s: RoutesObject(%+v) = %v, want %v", tc.name, tc.r, got, tc.want)
		}
	}
	// An account without a cost centre still reaches only an empty list or "*".
	gap := alert(2, costdrift.AlertDataGap, "6100/01", costdrift.SeverityWarning)
	account := costdrift.CostObject{Account: "6100/01"}
	if !RoutesObject(Recipient{CostCenters: []string{"*"}}, gap, account) || RoutesObject(Recipient{CostCenters: []string{"01"}}, gap, account) {
		t.Errorf("account 6100/01 without a cost centre: routed to 01, or not to *")
	}
}

func TestDueAndBackoff(t *testing.T) {
	now := time.Date(2026, 1, 5, 6, 0, 0, 0, time.UTC)
	warn := alert(1, costdrift.AlertRateShift, "6200/WELD", costdrift.SeverityWarning)
	crit := warn
	crit.Severity = costdrift.SeverityCritical
	for _, tc := range []struct {
		name string
		a    costdrift.Alert
		prev *State
		want bool
	}{
		{"never sent", warn, nil, true},
		{"sent at this severity", warn, &State{SeveritySent: costdrift.SeverityWarning}, false},
		{"escalated since", crit, &State{SeveritySent: costdrift.SeverityWarning}, true},
		{"failed, backoff not over", warn, &State{Failed: true, Attempts: 1, NextAttempt: now.Add(time.Minute)}, false},
		{"failed, backoff over", warn, &State{Failed: true, Attempts: 1, NextAttempt: now}, true},
		{"escalation failed, retry due", crit, &State{SeveritySent: costdrift.SeverityWarning, Failed: true, NextAttempt: now.Add(-time.Second)}, true},
	} {
		if got := Due(tc.a, tc.prev, now); got != tc.want {
			t.Errorf("%s: Due = %v, want %v", tc.name, got, tc.want)
		}
	}
	// 5 min × 2^(attempts−1), capped at 6 h (hand-worked: 5, 10, 20, 40,
	// 80, 160, 320 min, then 640 > 360).
	for attempts, want := range map[int]time.Duration{1: 5 * time.Minute, 2: 10 * time.Minute, 3: 20 * time.Minute,
		7: 320 * time.Minute, 8: 6 * time.Hour, 40: 6 * time.Hour} {
		if got := Backoff(attempts); got != want {
			t.Errorf("Backoff(%d) = %s, want %s", attempts, got, want)
		}
	}
}

// sampleDigest is invented: two behaviour changes and a failing source.
func sampleDigest(to string) Digest {
	shift := alert(7, costdrift.AlertRateShift, "6400/ASSY", costdrift.SeverityWarning)
	shift.Period = "2025-02"
	shift.Message = "6400/ASSY Freight out: rate per shipment fell from 2025-02, 14.48 to 11.92 (18 % of the cost at the activity before)"
	shift.Evidence = costdrift.AlertEvidence{Test: new("sup-F"), Statistic: new(696.16), P: new(0.0002), Break: new("2025-02"),
		FixedBefore: new(0.0), FixedAfter: new(0.0), RateBefore: new(14.48), RateAfter: new(11.92), R2: new(0.9951), N: new(17),
		PeriodsAfter: new(17), Provisional: new(false)}
	recl := alert(8, costdrift.AlertReclassified, "6300/PAINT", costdrift.SeverityCritical)
	recl.Period = "2025-09"
	recl.Message = "6300/PAINT Paint is now mixed on machine hours (was fixed) since 2025-09"
	recl.Evidence = costdrift.AlertEvidence{ClassBefore: new("fixed"), ClassAfter: new("mixed"), DriverBefore: new(""),
		DriverAfter: new("machine_hours"), FixedBefore: new(2100.0), RateBefore: new(math.NaN()), FixedAfter: new(850.0),
		RateAfter: new(3.125), Since: new("2025-09"), Reason: new("slope significant"), R2: new(0.82), N: new(36)}
	src := alert(9, costdrift.AlertSourceFailure, "gl", costdrift.SeverityWarning)
	src.Message = "source gl failed: data/gl.csv: no such file"
	src.Evidence = costdrift.AlertEvidence{FailuresInARow: new(2), Error: new("data/gl.csv: no such file")}
	return Digest{To: to, From: "costdrift <costdrift@example.test>", Date: time.Date(2026, 1, 5, 6, 0, 0, 0, time.UTC), Cautions: caution,
		Items: []Item{
			{Alert: recl, AccountName: "Paint", Class: "mixed", Driver: "machine_hours", Chart: tinyPNG},
			{Alert: shift, AccountName: "Freight out", Class: "variable", Driver: "shipments", Chart: tinyPNG},
			{Alert: src},
		}}
}

// tinyPNG is a valid 1×1 PNG (the format's smallest image).
var tinyPNG = []byte{0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n', 0, 0, 0, 0x0d, 'I', 'H', 'D', 'R', 0, 0, 0, 1, 0, 0, 0, 1, 8, 6, 0, 0, 0,
	0x1f, 0x15, 0xc4, 0x89, 0, 0, 0, 0x0d, 'I', 'D', 'A', 'T', 0x78, 0x9c, 0x63, 0xf8, 0xcf, 0xc0, 0xf0, 0x1f, 0, 0x05, 0, 0x01, 0xff,
	0x89, 0x99, 0x3d, 0x1d, 0, 0, 0, 0, 'I', 'E', 'N', 'D', 0xae, 0x42, 0x60, 0x82}

func TestTextGolden(t *testing.T) {
	got, err := Text(sampleDigest("costs@example.test"))
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join("..", "..", "testdata", "mail", "digest.txt")
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (go test ./internal/mail/ -run TestTextGolden -update writes it)", err)
	}
	if got != string(want) {
		t.Errorf("text part differs from %s (-update rewrites it):\n%s", path, got)
	}
}

func TestSubject(t *testing.T) {
	d := sampleDigest("x@example.test")
	// Cost centres, else the source, in the digest's order.
	if got, want := Subject(d.Items), "costdrift: 3 changes in cost behaviour, 1 critical (PAINT, ASSY, source gl)"; got != want {
		t.Errorf("Subject = %q, want %q", got, want)
	}
	if got, want := Subject(d.Items[1:2]), "costdrift: 1 change in cost behaviour (ASSY)"; got != want {
		t.Errorf("Subject = %q, want %q", got, want)
	}
	rent := alert(1, costdrift.AlertDataGap, "6500", costdrift.SeverityWarning)
	var many []Item
	for _, o := range []string{"6200/A", "6200/B", "6200/C", "6200/D", "6200/E"} {
		many = append(many, Item{Alert: alert(2, costdrift.AlertFixedShift, o, costdrift.SeverityWarning)})
	}
	many = append(many, Item{Alert: rent})
	if got, want := Subject(many), "costdrift: 6 changes in cost behaviour (A, B, C, +3 more)"; got != want {
		t.Errorf("Subject = %q, want %q", got, want)
	}
}

// TestSubjectCodesWithSlash: the subject names the cost centre the store
// holds (PLANT/2), or the account when there is none (6100/01), not what a
// split of "6100/01/PLANT/2" at its first "/" would give.
func TestSubjectCodesWithSlash(t *testing.T) {
	items := []Item{
		{Alert: alert(1, costdrift.AlertRateShift, "6100/01/PLANT/2", costdrift.SeverityWarning),
			Object: costdrift.CostObject{Account: "6100/01", CostCenter: "PLANT/2"}},
		{Alert: alert(2, costdrift.AlertDataGap, "6100/01", costdrift.SeverityWarning),
			Object: costdrift.CostObject{Account: "6100/01"}},
	}
	if got, want := Subject(items), "costdrift: 2 changes in cost behaviour (PLANT/2, 6100/01)"; got != want {
		t.Errorf("Subject = %q, want %q", got, want)
	}
}

const hostile = `<script>alert("x")</script>`

func hostileDigest() Digest {
	d := sampleDigest("costs@example.test")
	d.Items[0].AccountName = hostile
	d.Items[0].Alert.Message = "6300/PAINT " + hostile + " is now mixed"
	d.Items[1].Alert.Object = "6400/" + hostile
	return d
}

func TestHTMLEscapesEverything(t *testing.T) {
	html, err := HTML(hostileDigest())
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(html, "<script") {
		t.Errorf("HTML part carries a script element:\n%s", html)
	}
	if !strings.Contains(html, "&lt;script&gt;") {
		t.Errorf("HTML part lacks the escaped account name")
	}
	for _, want := range []string{`src="cid:chart-8@costdrift"`, `src="cid:chart-7@costdrift"`, "costdrift explain 6300/PAINT",
		"Formulas are statistical estimates", "850.00 &#43; 3.13 × machine hours", "2,100.00", "&lt; 0.001", "0.995"} {
		if !strings.Contains(html, want) {
			t.Errorf("HTML part lacks %q", want)
		}
	}
	// Nothing remote: the only image sources are content ids.
	if strings.Contains(html, "http://") || strings.Contains(html, "https://") {
		t.Errorf("HTML part refers to a remote resource")
	}
	if strings.Count(html, "<img") != 2 {
		t.Errorf("%d images, want 2 (no chart for the source alert)", strings.Count(html, "<img"))
	}
	txt, _ := Text(hostileDigest())
	// The pasted command must stay one shell word.
	if !strings.Contains(txt, `costdrift explain '6400/<script>alert("x")</script>'`) {
		t.Errorf("text part lacks the quoted explain command:\n%s", txt)
	}
}

func TestCheckRefusesPlainTextOverNetwork(t *testing.T) {
	for _, tc := range []struct {
		s    Server
		fail bool
	}{
		{Server{Host: "smtp.example.test", Port: 587, TLS: "starttls"}, false},
		{Server{Host: "smtp.example.test", Port: 465, TLS: "tls"}, false},
		{Server{Host: "smtp.example.test", Port: 25, TLS: "none"}, true},
		{Server{Host: "192.0.2.1", Port: 25, TLS: "none"}, true},
		{Server{Host: "localhost", Port: 25, TLS: "none"}, false},
		{Server{Host: "127.0.0.1", Port: 25, TLS: "none"}, false},
		{Server{Host: "::1", Port: 25, TLS: "none"}, false},
		{Server{Host: "smtp.example.test", Port: 25, TLS: "maybe"}, true},
	} {
		err := tc.s.Check()
		if (err != nil) != tc.fail {
			t.Errorf("Check(%s, %s) = %v, want failure %v", tc.s.Host, tc.s.TLS, err, tc.fail)
		}
		if err != nil && tc.s.TLS == "none" && !strings.Contains(err.Error(), "not a loopback host") {
			t.Errorf("unclear error: %v", err)
		}
	}
	res := Server{Host: "smtp.example.test", Port: 25, TLS: "none"}.Send(t.Context(), nil)
	if len(res) != 0 {
		t.Errorf("Send of nothing returned %v", res)
	}
}

func TestOutboxWritesOwnerOnlyEml(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "outbox")
	d := sampleDigest("costs@example.test")
	m, err := Message(d)
	if err != nil {
		t.Fatal(err)
	}
	p1, err := WriteOutbox(dir, m, d.Date, d.To)
	if err != nil {
		t.Fatal(err)
	}
	p2, err := WriteOutbox(dir, m, d.Date, d.To)
	if err != nil {
		t.Fatal(err)
	}
	if p1 == p2 || filepath.Base(p1) != "20260105T060000Z-costs_example.test.eml" {
		t.Errorf("outbox files %s, %s", p1, p2)
	}
	for path, want := range map[string]os.FileMode{dir: 0o700 | os.ModeDir, p1: 0o600, p2: 0o600} {
		st, err := os.Stat(path)
		if err != nil {
			t.Fatal(err)
		}
		if st.Mode() != want {
			t.Errorf("%s: mode %s, want %s", path, st.Mode(), want)
		}
	}
	raw, _ := os.ReadFile(p1)
	msg, err := netmail.ReadMessage(bytes.NewReader(raw))
	if err != nil {
		t.Fatal(err)
	}
	if got, want := msg.Header.Get("Subject"), "costdrift: 3 changes in cost behaviour, 1 critical (PAINT, ASSY, source gl)"; got != want {
		t.Errorf("Subject %q, want %q", got, want)
	}
	for _, want := range []string{"Content-Type: text/plain", "Content-Type: text/html", "Content-Id: <chart-8@costdrift>",
		"Content-Id: <chart-7@costdrift>", "To: <costs@example.test>"} {
		if !strings.Contains(string(raw), want) {
			t.Errorf(".eml lacks %q", want)
		}
	}
}

func TestPasswordFromEnvOrFile(t *testing.T) {
	t.Setenv("COSTDRIFT_TEST_SMTP_PW", "from-env")
	if pw, err := Password("COSTDRIFT_TEST_SMTP_PW", ""); err != nil || pw != "from-env" {
		t.Errorf("Password(env) = %q, %v", pw, err)
	}
	f := filepath.Join(t.TempDir(), "pw")
	os.WriteFile(f, []byte("from-file\r\nignored\n"), 0o600)
	if pw, err := Password("COSTDRIFT_TEST_SMTP_PW", f); err != nil || pw != "from-file" {
		t.Errorf("Password(file) = %q, %v", pw, err)
	}
	if _, err := Password("", filepath.Join(t.TempDir(), "missing")); err == nil || !strings.Contains(err.Error(), "mail.smtp.password_file") {
		t.Errorf("missing file: %v", err)
	}
}

// A password file others can read is refused, as a dsn_file is: it holds a
// secret. The message names the key, the mode and the fix, not the secret.
func TestPasswordFileMustBeOwnerOnly(t *testing.T) {
	for _, mode := range []os.FileMode{0o644, 0o666, 0o640, 0o604} {
		f := filepath.Join(t.TempDir(), "pw")
		os.WriteFile(f, []byte("s3cret-pass\n"), 0o600)
		os.Chmod(f, mode)
		_, err := Password("", f)
		if err == nil || !strings.Contains(err.Error(), "mail.smtp.password_file") || !strings.Contains(err.Error(), "chmod 600") ||
			strings.Contains(err.Error(), "s3cret") {
			t.Errorf("mode %04o: %v", mode, err)
		}
	}
	f := filepath.Join(t.TempDir(), "pw")
	os.WriteFile(f, []byte("s3cret-pass\n"), 0o400)
	if pw, err := Password("", f); err != nil || pw != "s3cret-pass" {
		t.Errorf("mode 0400: %q, %v", pw, err)
	}
}

// A digest with more charted alerts than the limit (README, Mail: 20)
// embeds the charts of the most important ones only, critical before
// warning before info and, within a severity, the newest first; the text
// says how to draw the others.
func TestDigestChartsOnlyTheMostImportant(t *testing.T) {
	base := time.Date(2026, 1, 5, 6, 0, 0, 0, time.UTC)
	var items []Item
	want := map[int64]bool{}
	// 30 alerts: ids 1-10 info, 11-20 warning, 21-30 critical; a larger
	// id is raised later. The 20 charted: the 10 critical and the 10
	// warnings.
	for id := int64(1); id <= 30; id++ {
		sev := costdrift.SeverityInfo
		switch {
		case id > 20:
			sev = costdrift.SeverityCritical
		case id > 10:
			sev = costdrift.SeverityWarning
		}
		a := alert(id, costdrift.AlertRateShift, fmt.Sprintf("6400/C%02d", id), sev)
		a.CreatedAt = base.Add(time.Duration(id) * time.Hour)
		items = append(items, Item{Alert: a, Driver: "shipments", Chart: tinyPNG})
		if id > 10 {
			want[id] = true
		}
	}
	// One more warning raised before all the others: the 21st in
	// importance, so without a chart.
	early := alert(31, costdrift.AlertRateShift, "6400/EARLY", costdrift.SeverityWarning)
	early.CreatedAt = base
	items = append(items, Item{Alert: early, Driver: "shipments", Chart: tinyPNG})
	d := Digest{To: "costs@example.test", From: "costdrift <costdrift@example.test>", Date: base, Cautions: caution, Items: items}
	m, err := Message(d)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if _, err := m.WriteTo(&buf); err != nil {
		t.Fatal(err)
	}
	raw := buf.String()
	if n := strings.Count(raw, "Content-Id: <chart-"); n != 20 {
		t.Errorf("%d chart parts, want 20", n)
	}
	for id := int64(1); id <= 31; id++ {
		has := strings.Contains(raw, fmt.Sprintf("Content-Id: <chart-%d@costdrift>", id))
		if has != want[id] {
			t.Errorf("alert %d: chart embedded %v, want %v", id, has, want[id])
		}
	}
	txt, err := Text(d)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range []string{"Charts are attached for the 20 most important alerts",
		"costdrift explain OBJECT --chart FILE"} {
		if !strings.Contains(txt, s) {
			t.Errorf("text part lacks %q:\n%s", s, txt)
		}
	}
	// The limit is not reached in a small digest: no note.
	small, err := Text(sampleDigest("costs@example.test"))
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(small, "Charts are attached for") {
		t.Errorf("a digest within the limit carries the note:\n%s", small)
	}
}
