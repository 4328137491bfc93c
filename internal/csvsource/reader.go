package csvsource

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"time"
	"unicode/utf8"

	"golang.org/x/text/encoding/charmap"
	"golang.org/x/text/transform"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Options describe one CSV source.
type Options struct {
	Source string // the source's configured name, stored with every row
	// Columns maps canonical names (entry_id, date, amount, ...) to the
	// headers the file uses instead.
	Columns    map[string]string
	Delimiter  rune   // 0: detect ',' ';' or tab from the header line
	DateLayout string // Go layout of posting dates; "" for 2006-01-02
	Notation   money.Notation
	Currency   money.Currency
	// Period maps a posting date to its period.
	Period func(time.Time) string
	// Layout of an activity file: "long", "wide", or "" to detect.
	Layout string
	// Encoding of the file: "" or utf-8, windows-1252, iso-8859-1.
	Encoding string
	// Progress, when set, is told how many bytes of the file were read.
	Progress func(done int64)
	// Fixed says the file's reading has no settings (a plan): see
	// canon.Rules.
	Fixed bool
}

// rules are the row rules of the source's options.
func (opt Options) rules() canon.Rules {
	return canon.Rules{Source: opt.Source, Currency: opt.Currency, Notation: opt.Notation, DateLayout: opt.DateLayout, Period: opt.Period,
		Fixed: opt.Fixed}
}

// fill sets the cells of a record's bound columns.
func fill(row *canon.Row, bound []canon.Bound, rec []string) {
	for _, b := range bound {
		row[b.Column] = canon.TextCell(rec[b.Index])
	}
}

// table is an open CSV file positioned after its header.
type table struct {
	name   string
	r      *csv.Reader
	header []string
	line   int
	// The file, and where the current record starts in it, so that a row
	// the CSV reader cannot split is still stored as it was written.
	file  io.ReaderAt
	bom   int64 // bytes before the CSV reader's first byte
	start int64 // reader offset of the current record
	// decoded says the file is read through a character-set decoder, so
	// reader offsets are not file offsets.
	decoded bool
	delim   rune
	last    []string // the current record, for the raw text of a decoded file
}

// maxField is the longest field a row may hold: no ledger column needs
// more, and a runaway quoted field must not land in the store.
const maxField = 65536

// rowProblem says why a record cannot be used whatever its columns mean:
// a wrong number of fields, text that is not UTF-8, a field too long.
func (t *table) rowProblem(rec []string) string {
	if len(rec) != len(t.header) {
		return fmt.Sprintf("has %d fields, the header has %d", len(rec), len(t.header))
	}
	for _, f := range rec {
		if len(f) > maxField {
			return fmt.Sprintf("a field is %d bytes long, more than the %d allowed", len(f), maxField)
		}
		if !utf8.ValidString(f) {
			return "not valid UTF-8; set `encoding: windows-1252` (or iso-8859-1) for this source if the file is not UTF-8"
		}
	}
	return ""
}

// decoderFor returns the decoder of a source's declared encoding, or nil
// for UTF-8.
func decoderFor(name string) (transform.Transformer, error) {
	switch strings.ToLower(name) {
	case "", "utf-8", "utf8":
		return nil, nil
	case "windows-1252", "cp1252":
		return charmap.Windows1252.NewDecoder(), nil
	case "iso-8859-1", "latin1":
		return charmap.ISO8859_1.NewDecoder(), nil
	}
	return nil, fmt.Errorf("unknown encoding %q", name)
}

// progressReader reports how many bytes of the file were read, about every
// megabyte.
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

// maxRaw caps the stored text of a malformed row: an unclosed quote can run
// to the end of the file.
const maxRaw = 4096

// open opens path, detects the delimiter, strips a UTF-8 byte-order mark
// and reads the header. An empty file is an error.
func open(path, display string, opt Options) (*table, io.Closer, error) {
	delim := opt.Delimiter
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
	var src io.Reader = f
	if opt.Progress != nil {
		src = &progressReader{r: f, report: opt.Progress}
	}
	decoder, err := decoderFor(opt.Encoding)
	if err != nil {
		f.Close()
		return nil, nil, fmt.Errorf("%s: %v", display, err)
	}
	if decoder != nil {
		src = transform.NewReader(src, decoder)
	}
	br := bufio.NewReaderSize(src, 1<<16)
	var bom int64
	head, err := br.Peek(3)
	if err == nil && bytes.Equal(head, []byte("\xef\xbb\xbf")) {
		br.Discard(3)
		bom = 3
	}
	first, err := br.Peek(4096)
	if err != nil && !errors.Is(err, io.EOF) {
		f.Close()
		return nil, nil, fmt.Errorf("cannot read %s: %v", display, err)
	}
	if len(bytes.TrimSpace(first)) == 0 {
		f.Close()
		return nil, nil, fmt.Errorf("%s is empty: expected a header line and rows", display)
	}
	if delim == 0 {
		delim = detectDelimiter(first)
	}
	r := csv.NewReader(br)
	r.Comma = delim
	r.FieldsPerRecord = -1 // a wrong count is a reject for that row, not the end of the file
	r.ReuseRecord = true
	header, err := r.Read()
	if err != nil {
		f.Close()
		return nil, nil, fmt.Errorf("%s: cannot read the header line: %v", display, err)
	}
	t := &table{name: display, r: r, header: append([]string(nil), header...), line: 1,
		file: f, bom: bom, decoded: decoder != nil, delim: delim}
	for _, h := range t.header {
		if !utf8.ValidString(h) {
			f.Close()
			return nil, nil, fmt.Errorf("%s: the header is not valid UTF-8; set `encoding: windows-1252` (or iso-8859-1) for this source", display)
		}
	}
	return t, f, nil
}

// detectDelimiter picks the most frequent of ',', ';' and tab outside
// quotes in the header line; a comma when none occurs.
func detectDelimiter(sample []byte) rune {
	if i := bytes.IndexAny(sample, "\r\n"); i >= 0 {
		sample = sample[:i]
	}
	counts := map[rune]int{}
	inQuotes := false
	for _, c := range string(sample) {
		switch {
		case c == '"':
			inQuotes = !inQuotes
		case !inQuotes && (c == ',' || c == ';' || c == '\t'):
			counts[c]++
		}
	}
	best, n := ',', 0
	for _, c := range []rune{',', ';', '\t'} {
		if counts[c] > n {
			best, n = c, counts[c]
		}
	}
	return best
}

// next returns the next record, or io.EOF. Records that the CSV reader
// cannot parse (a stray quote) come back as a row error.
func (t *table) next() ([]string, error) {
	t.start = t.r.InputOffset()
	rec, err := t.r.Read()
	t.last = rec
	var pe *csv.ParseError
	switch {
	case err == nil:
		t.line, _ = t.r.FieldPos(0)
	case errors.As(err, &pe):
		t.line = pe.StartLine
	}
	return rec, err
}

func (t *table) location() string { return fmt.Sprintf("%s:%d", t.name, t.line) }

// rawInput returns the current record's text as it stands in the file, for
// the reject table: re-encoding the fields would not give back the row as
// read, and a row the CSV reader cannot split has no fields.
func (t *table) rawInput() string {
	if t.decoded {
		raw := strings.Join(t.last, string(t.delim))
		if len(raw) > maxRaw {
			raw = raw[:maxRaw]
		}
		return raw
	}
	n := t.r.InputOffset() - t.start
	if n > maxRaw {
		n = maxRaw
	}
	buf := make([]byte, n)
	// ReadAt leaves the file position, and so the CSV reader, untouched.
	k, _ := t.file.ReadAt(buf, t.bom+t.start)
	// The span also holds the empty lines the reader skipped before it.
	return strings.Trim(string(buf[:k]), "\r\n")
}

// blank reports whether every field of a record is empty: such lines are
// skipped, as spreadsheets often leave them at the end.
func blank(rec []string) bool {
	for _, f := range rec {
		if strings.TrimSpace(f) != "" {
			return false
		}
	}
	return true
}

// rows calls row for every data record of the table, in file order, and
// returns how many records it read. A record the CSV reader cannot split is
// rejected here; blank lines are skipped; the context is checked now and then.
func (t *table) rows(ctx context.Context, display string, opt Options, w costdrift.SourceWriter, row func(rec []string) error) (int, error) {
	read := 0
	for {
		rec, err := t.next()
		if errors.Is(err, io.EOF) {
			return read, nil
		}
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			read++
			if err := t.reject(opt, w, "malformed CSV: "+pe.Err.Error()); err != nil {
				return read, err
			}
			continue
		}
		if err != nil {
			return read, fmt.Errorf("%s: %w", display, err)
		}
		if blank(rec) {
			continue
		}
		read++
		if err := checkCtx(ctx, read); err != nil {
			return read, err
		}
		if err := row(rec); err != nil {
			return read, err
		}
	}
}

// reject stores the current record as rejected, with its location and the
// row as written.
func (t *table) reject(opt Options, w costdrift.SourceWriter, reason string) error {
	return w.Reject(costdrift.Reject{Source: opt.Source, Location: t.location(), Reason: reason, Raw: t.rawInput()})
}

func checkCtx(ctx context.Context, n int) error {
	if n%4096 == 0 {
		return ctx.Err()
	}
	return nil
}
