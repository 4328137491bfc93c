package saftsource

import (
	"bufio"
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"regexp"
	"strconv"
	"strings"
	"time"
	"unicode"

	"github.com/costdrift/costdrift/internal/money"
)

// Namespace is the XML namespace of every element of a Norwegian SAF-T
// Financial file; versions 1.0 to 1.40 share it, so it says nothing about
// the version.
const Namespace = "urn:StandardAuditFile-Taxation-Financial:NO"

// cashRegisterNamespace is that of SAF-T Cash Register files, which hold
// till transactions, not a general ledger; they are refused by name so the
// user learns what the file is.
const cashRegisterNamespace = "urn:StandardAuditFile-Taxation-CashRegister:NO"

// Options describe one SAF-T source.
type Options struct {
	Source string // the source's configured name, stored with every row
	// Currency is the store's functional currency; the file's
	// Header/DefaultCurrencyCode must be the same, because every Amount in
	// the file is in that currency.
	Currency money.Currency
	// Period maps a posting date to its period.
	Period func(time.Time) string
	// AnalysisType is the code of the Analysis dimension whose AnalysisID
	// becomes the cost centre (the codes are set per file, e.g. "A" for
	// departments); "" leaves every line without a cost centre.
	AnalysisType string
	// Progress, when set, is told how many bytes of the file were read.
	Progress func(done int64)
}

// Totals are what ReadLedger read beside what the file declares of itself.
// Amounts are in minor units of Options.Currency.
type Totals struct {
	// Rows is the number of rows given to the writer: ledger lines stored
	// plus rejects. A Line split between k cost centres is k rows, so Rows
	// can exceed Lines.
	Rows int
	// Lines is the number of GeneralLedgerEntries/Journal/Transaction/Line
	// elements read, whatever became of them.
	Lines int
	// Entries is the number of Transaction elements (vouchers) read.
	Entries int
	// DebitMinor and CreditMinor add up every line's DebitAmount/Amount and
	// CreditAmount/Amount as written, rejected lines included: they check
	// that the whole file was read, not what was stored.
	DebitMinor, CreditMinor int64
	// UnreadableAmounts counts line amounts that could not be parsed, and so
	// are missing from the sums; FirstUnreadable is where the first is.
	UnreadableAmounts int
	FirstUnreadable   string

	// The control totals the file declares in GeneralLedgerEntries.
	DeclaredEntries     int64
	DeclaredDebitMinor  int64
	DeclaredCreditMinor int64

	Currency money.Currency // the currency of the amounts above
	Version  string         // Header/AuditFileVersion as written; unreliable, for messages only
}

// Check compares the totals read with the control totals the file declares
// and returns an error naming every difference, or nil when they agree:
//
//	Entries == NumberOfEntries, DebitMinor == TotalDebit, CreditMinor == TotalCredit
//
// A difference means the file is incomplete or damaged (or an amount could
// not be read), so a ledger stored from it would not agree with the books.
func (t Totals) Check() error {
	var diffs []string
	if int64(t.Entries) != t.DeclaredEntries {
		diffs = append(diffs, fmt.Sprintf("NumberOfEntries declares %d, the file holds %d transactions", t.DeclaredEntries, t.Entries))
	}
	if t.DebitMinor != t.DeclaredDebitMinor {
		diffs = append(diffs, fmt.Sprintf("TotalDebit declares %s, the lines' debits add up to %s",
			formatMinor(t.DeclaredDebitMinor, t.Currency.Exponent), formatMinor(t.DebitMinor, t.Currency.Exponent)))
	}
	if t.CreditMinor != t.DeclaredCreditMinor {
		diffs = append(diffs, fmt.Sprintf("TotalCredit declares %s, the lines' credits add up to %s",
			formatMinor(t.DeclaredCreditMinor, t.Currency.Exponent), formatMinor(t.CreditMinor, t.Currency.Exponent)))
	}
	if len(diffs) == 0 {
		return nil
	}
	msg := "control totals do not match, the file is incomplete or damaged: " + strings.Join(diffs, "; ")
	if t.UnreadableAmounts > 0 {
		msg += fmt.Sprintf(" (%d line amount(s) could not be read, the first at %s)", t.UnreadableAmounts, t.FirstUnreadable)
	}
	return errors.New(msg)
}

// maxRaw caps the stored text of a rejected element.
const maxRaw = 4096

// file is an open SAF-T file and its token decoder.
type file struct {
	display string
	src     io.ReaderAt // the file's bytes, for the raw text of rejects
	d       *xml.Decoder
	bom     int64  // bytes of byte-order mark before the decoder's first byte
	ns      string // namespace of the root element: Namespace, or "" for none
	rooted  bool   // the root element has been read
	charset string // an encoding other than UTF-8 that the file declared
}

// openFile opens path and reads up to its root element (see newFile); the
// caller closes the returned file. progress, when set, is told how many
// bytes were read.
func openFile(path, display string, progress func(int64)) (*file, io.Closer, error) {
	f, err := os.Open(path)
	if err != nil {
		var pe *os.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return nil, nil, fmt.Errorf("cannot read %s: %v", display, err)
	}
	if st, err := f.Stat(); err == nil && st.IsDir() {
		f.Close()
		return nil, nil, fmt.Errorf("cannot read %s: it is a folder, not a file", display)
	}
	x, err := newFile(f, display, progress)
	if err != nil {
		f.Close()
		return nil, nil, err
	}
	return x, f, nil
}

// progressReader reports the bytes read through it every MiB and at the
// end of the file.
type progressReader struct {
	r      io.Reader
	done   int64
	last   int64
	report func(int64)
}

func (p *progressReader) Read(b []byte) (int, error) {
	n, err := p.r.Read(b)
	p.done += int64(n)
	if p.done-p.last >= 1<<20 || err == io.EOF {
		p.last = p.done
		p.report(p.done)
	}
	return n, err
}

// newFile skips a UTF-8 byte-order mark and reads up to the root element,
// which must be AuditFile in the SAF-T Financial namespace (or in none).
// Everything else is an error naming display. progress, when set, is told
// how many bytes the decoder has read.
func newFile(src io.ReaderAt, display string, progress func(int64)) (*file, error) {
	var in io.Reader = io.NewSectionReader(src, 0, math.MaxInt64)
	if progress != nil {
		in = &progressReader{r: in, report: progress}
	}
	br := bufio.NewReaderSize(in, 1<<16)
	x := &file{display: display, src: src}
	if head, err := br.Peek(3); err == nil && bytes.Equal(head, []byte("\xef\xbb\xbf")) {
		br.Discard(3)
		x.bom = 3
	}
	first, err := br.Peek(512)
	if err != nil && !errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("cannot read %s: %v", display, err)
	}
	if len(first) < 512 && len(bytes.TrimSpace(first)) == 0 {
		return nil, fmt.Errorf("%s is empty: expected a SAF-T Financial XML file", display)
	}
	x.d = xml.NewDecoder(br)
	x.d.CharsetReader = func(label string, input io.Reader) (io.Reader, error) {
		switch strings.ToLower(label) {
		case "utf8", "us-ascii", "ascii": // the same bytes as UTF-8
			return input, nil
		}
		x.charset = label
		return nil, errors.New("unsupported encoding")
	}
	if err := x.root(); err != nil {
		return nil, err
	}
	return x, nil
}

// root reads up to the root element and checks its name.
func (x *file) root() error {
	for {
		tok, err := x.d.Token()
		if errors.Is(err, io.EOF) {
			return fmt.Errorf("%s is not XML: it has no root element", x.display)
		}
		if err != nil {
			return x.xmlError(err)
		}
		switch t := tok.(type) {
		case xml.CharData:
			if len(bytes.TrimSpace(t)) > 0 {
				return fmt.Errorf("%s is not XML: it starts with text, not an element", x.display)
			}
		case xml.StartElement:
			x.rooted = true
			switch {
			case t.Name.Space == cashRegisterNamespace:
				return fmt.Errorf("%s is a SAF-T Cash Register file (namespace %s), not SAF-T Financial: it holds no general ledger", x.display, t.Name.Space)
			case t.Name.Space != Namespace && t.Name.Space != "":
				return fmt.Errorf("%s: root element %s is in namespace %s, not SAF-T Financial's %s", x.display, shorten(t.Name.Local), shorten(t.Name.Space), Namespace)
			case t.Name.Local != "AuditFile":
				return fmt.Errorf("%s: root element is %s, not AuditFile: this is not a SAF-T Financial file", x.display, shorten(t.Name.Local))
			}
			x.ns = t.Name.Space
			return nil
		}
	}
}

// ours reports whether an element belongs to the file's schema. The
// namespace URI decides, never the prefix the file happens to use.
func (x *file) ours(n xml.Name) bool { return n.Space == x.ns }

// token returns the next token; an error (io.EOF included: inside the
// root element it means the file stops short) is a whole-file error.
func (x *file) token() (xml.Token, error) {
	tok, err := x.d.Token()
	if err != nil {
		return nil, x.xmlError(err)
	}
	return tok, nil
}

// text decodes a simple element's character data, trimmed.
func (x *file) text(start *xml.StartElement) (string, error) {
	var s string
	if err := x.d.DecodeElement(&s, start); err != nil {
		return "", x.xmlError(err)
	}
	return strings.TrimSpace(s), nil
}

// decode decodes one element into v.
func (x *file) decode(v any, start *xml.StartElement) error {
	if err := x.d.DecodeElement(v, start); err != nil {
		return x.xmlError(err)
	}
	return nil
}

// skip passes over the rest of an element.
func (x *file) skip() error {
	if err := x.d.Skip(); err != nil {
		return x.xmlError(err)
	}
	return nil
}

// finish reads past the root element to the end of the file, which may
// hold only comments, processing instructions and blank space.
func (x *file) finish() error {
	for {
		tok, err := x.d.Token()
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return x.xmlError(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			return fmt.Errorf("%s: element %s after the end of AuditFile; the file is damaged", x.display, shorten(t.Name.Local))
		case xml.CharData:
			if len(bytes.TrimSpace(t)) > 0 {
				return fmt.Errorf("%s: text after the end of AuditFile; the file is damaged", x.display)
			}
		}
	}
}

// xmlError turns a decoder error into a one-line message naming the file.
func (x *file) xmlError(err error) error {
	if x.charset != "" {
		return fmt.Errorf("%s declares encoding %q; only UTF-8 SAF-T files can be read: export it again as UTF-8", x.display, x.charset)
	}
	var se *xml.SyntaxError
	if errors.As(err, &se) {
		if !x.rooted {
			return fmt.Errorf("%s is not XML: line %d: %s", x.display, se.Line, oneLine(se.Msg))
		}
		return fmt.Errorf("%s: XML breaks off or is malformed at line %d: %s (is the file truncated?)", x.display, se.Line, oneLine(se.Msg))
	}
	if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
		return fmt.Errorf("%s: the file ends inside AuditFile (is it truncated?)", x.display)
	}
	return fmt.Errorf("%s: %s", x.display, oneLine(err.Error()))
}

// raw returns the file's text between two decoder offsets, for a reject:
// the element as written is what a user can find in the file.
func (x *file) raw(from, to int64) string {
	n := to - from
	if n <= 0 {
		return ""
	}
	if n > maxRaw {
		n = maxRaw
	}
	buf := make([]byte, n)
	// ReadAt leaves the file position, and so the decoder, untouched.
	k, _ := x.src.ReadAt(buf, x.bom+from)
	return strings.TrimSpace(string(buf[:k]))
}

// decimalPattern is the lexical form of xs:decimal, the base of the
// schema's amount type SAFmonetaryType: an optional sign, digits and at
// most one decimal point, no exponent and no thousands separators.
var decimalPattern = regexp.MustCompile(`^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)$`)

// parseAmount reads an xs:decimal exactly into minor units.
func parseAmount(cur money.Currency, s string) (int64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, errors.New("empty amount")
	}
	if !decimalPattern.MatchString(s) {
		return 0, fmt.Errorf("amount %q is not a decimal number", shorten(s))
	}
	return cur.Parse(s, money.Notation{})
}

// zonePattern is the optional time zone of an xs:date.
var zonePattern = regexp.MustCompile(`^(Z|[+-](0[0-9]|1[0-4]):[0-5][0-9])$`)

// parseDate reads an xs:date, YYYY-MM-DD with an optional time zone. The
// zone says where the day is, not which day it is, so it is checked and
// then ignored.
func parseDate(s string) (time.Time, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return time.Time{}, errors.New("empty date")
	}
	day, zone := s, ""
	if len(s) > 10 {
		day, zone = s[:10], s[10:]
	}
	d, err := time.Parse("2006-01-02", day)
	if err != nil || (zone != "" && !zonePattern.MatchString(zone)) {
		return time.Time{}, fmt.Errorf("date %q is not YYYY-MM-DD", shorten(s))
	}
	return d, nil
}

// parseCount reads an xs:nonNegativeInteger.
func parseCount(s string) (int64, error) {
	n, err := strconv.ParseInt(strings.TrimPrefix(strings.TrimSpace(s), "+"), 10, 64)
	if err != nil || n < 0 {
		return 0, fmt.Errorf("%q is not a whole number from 0", shorten(s))
	}
	return n, nil
}

// formatMinor writes minor units as a decimal amount: 948704935 with
// exponent 2 is "9487049.35".
func formatMinor(v int64, exp int32) string {
	neg := v < 0
	u := uint64(v)
	if neg {
		u = -u // two's complement: also right for math.MinInt64
	}
	s := strconv.FormatUint(u, 10)
	if exp > 0 {
		if len(s) <= int(exp) {
			s = strings.Repeat("0", int(exp)-len(s)+1) + s
		}
		s = s[:len(s)-int(exp)] + "." + s[len(s)-int(exp):]
	}
	if neg {
		s = "-" + s
	}
	return s
}

// add returns a+b, or false when the sum does not fit in an int64.
func add(a, b int64) (int64, bool) {
	s := a + b
	if (b > 0 && s < a) || (b < 0 && s > a) {
		return 0, false
	}
	return s, true
}

// shorten keeps messages one short line when a field holds a novel or
// control characters (a line break in an ID, a namespace of "\r"):
// those are written as Go escapes.
func shorten(s string) string {
	if strings.IndexFunc(s, unicode.IsControl) >= 0 {
		q := strconv.Quote(s)
		s = q[1 : len(q)-1]
	}
	const max = 60
	if len(s) <= max {
		return s
	}
	cut := max
	for cut > 0 && !utf8Start(s[cut]) {
		cut--
	}
	return s[:cut] + "…"
}

func utf8Start(b byte) bool { return b&0xC0 != 0x80 }

// oneLine folds line breaks so that a message stays on one line.
func oneLine(s string) string {
	return strings.Join(strings.Fields(s), " ")
}
