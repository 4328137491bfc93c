package xlsxsource

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"strconv"
	"strings"
	"time"

	"github.com/xuri/excelize/v2"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Options describe one XLSX source.
type Options struct {
	Source string // the source's configured name, stored with every row
	// Columns maps canonical names (entry_id, date, amount, ...) to the
	// headers the sheet uses instead.
	Columns map[string]string
	// Sheet is the worksheet's name, or its position counted from 1; ""
	// means the first sheet. A sheet whose name is a number is found by
	// name before position.
	Sheet string
	// DateLayout is the Go layout of dates written as text; "" for
	// 2006-01-02. Date cells need no layout.
	DateLayout string
	// Notation applies to amounts and values written as text; number cells
	// carry no notation.
	Notation money.Notation
	Currency money.Currency
	// Period maps a posting date to its period.
	Period func(time.Time) string
	// Layout of an activity sheet: "long", "wide", or "" to detect.
	Layout string
	// Fixed says the workbook's reading has no settings (a plan): see
	// canon.Rules.
	Fixed bool
}

// rules are the row rules of the source's options.
func (opt Options) rules() canon.Rules {
	return canon.Rules{Source: opt.Source, Currency: opt.Currency, Notation: opt.Notation, DateLayout: opt.DateLayout, Period: opt.Period,
		Fixed: opt.Fixed}
}

// unzipInMemory is the largest worksheet or shared-string part excelize
// keeps in memory; a larger one is unpacked to a temporary file and read
// from there, so that memory does not grow with the sheet.
const unzipInMemory = 1 << 20

// maxRaw caps the stored text of a rejected row.
const maxRaw = 4096

// oleMagic starts a Compound File: an encrypted OOXML package or an old
// binary .xls workbook, neither of which is a zip.
var oleMagic = []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}

// rawValues asks excelize for the value a cell stores rather than its
// formatted text: a number as written in the file, a date as its serial.
var rawValues = excelize.Options{RawCellValue: true}

// table is an open worksheet positioned after its header row.
type table struct {
	name  string // the file as shown in messages
	sheet string
	wb    *excelize.File
	rows  *excelize.Rows
	attrs *attrReader
	zip   *zip.ReadCloser

	date1904  bool
	dateStyle map[int]bool // cell style index -> has a date or time format

	row    int // 1-based number of the current row
	cells  []cell
	header []string
}

// open opens the workbook at path, chooses the sheet and reads the header:
// the first row with any value.
func open(path, display, sheet string) (*table, error) {
	if err := sniff(path, display); err != nil {
		return nil, err
	}
	z, err := zip.OpenReader(path)
	if err != nil {
		if errors.Is(err, zip.ErrFormat) {
			return nil, fmt.Errorf("%s is not an XLSX workbook (it is not a zip archive); save it as an Excel workbook (.xlsx)", display)
		}
		return nil, fmt.Errorf("%s: cannot open the workbook: %v", display, err)
	}
	if findPart(&z.Reader, "xl/workbook.xml") == nil {
		z.Close()
		return nil, fmt.Errorf("%s is a zip archive but not an XLSX workbook (it has no xl/workbook.xml)", display)
	}
	wb, err := excelize.OpenFile(path, excelize.Options{UnzipXMLSizeLimit: unzipInMemory})
	if err != nil {
		z.Close()
		return nil, fmt.Errorf("%s: cannot open the workbook: %v", display, err)
	}
	t := &table{name: display, wb: wb, zip: z, dateStyle: map[int]bool{}}
	if err := t.start(sheet); err != nil {
		t.close()
		return nil, err
	}
	return t, nil
}

// sniff turns the failures that excelize would report vaguely into
// messages that say what to do: a missing file, a folder, an encrypted or
// old binary workbook.
func sniff(path, display string) error {
	f, err := os.Open(path)
	if err != nil {
		var pe *os.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return fmt.Errorf("cannot read %s: %v", display, err)
	}
	defer f.Close()
	if st, err := f.Stat(); err == nil && st.IsDir() {
		return fmt.Errorf("cannot read %s: it is a folder, not a file", display)
	}
	head := make([]byte, len(oleMagic))
	n, _ := io.ReadFull(f, head)
	if n == 0 {
		return fmt.Errorf("%s is empty: expected an XLSX workbook", display)
	}
	if !bytes.Equal(head[:n], oleMagic) {
		return nil
	}
	// A password-protected workbook is a Compound File holding a stream
	// named EncryptionInfo; the name is stored in UTF-16LE.
	encrypted, err := contains(f, utf16le("EncryptionInfo"))
	if err != nil {
		return fmt.Errorf("cannot read %s: %v", display, err)
	}
	if encrypted {
		return fmt.Errorf("%s is encrypted (password-protected); save a copy without a password for costdrift to read", display)
	}
	return fmt.Errorf("%s is an old binary Excel workbook (.xls), not XLSX; save it as an Excel workbook (.xlsx)", display)
}

// start chooses the sheet, prepares the row iterator and the cell-type
// reader, and reads the header row.
func (t *table) start(sheet string) error {
	sheets := t.wb.GetSheetList()
	if len(sheets) == 0 {
		return fmt.Errorf("%s has no worksheets", t.name)
	}
	name, err := chooseSheet(sheets, sheet)
	if err != nil {
		return fmt.Errorf("%s %v", t.name, err)
	}
	t.sheet = name
	props, err := t.wb.GetWorkbookProps()
	if err != nil {
		return fmt.Errorf("%s: cannot read the workbook properties: %v", t.name, err)
	}
	t.date1904 = props.Date1904 != nil && *props.Date1904
	if t.attrs, err = openAttrs(&t.zip.Reader, name); err != nil {
		return fmt.Errorf("%s: sheet %s: %v", t.name, name, err)
	}
	if t.rows, err = t.wb.Rows(name); err != nil {
		return fmt.Errorf("%s: sheet %s: %v", t.name, name, err)
	}
	for {
		ok, err := t.next()
		if err != nil {
			return err
		}
		if !ok {
			return fmt.Errorf("%s: sheet %s is empty: expected a header row and rows", t.name, name)
		}
		if !blank(t.cells) {
			break
		}
	}
	t.header = make([]string, len(t.cells))
	for i, c := range t.cells {
		t.header[i] = c.text
	}
	return nil
}

// chooseSheet finds a sheet by name (exactly, then ignoring case, which is
// how spreadsheets compare sheet names), then by position from 1.
func chooseSheet(sheets []string, want string) (string, error) {
	if want == "" {
		return sheets[0], nil
	}
	for _, s := range sheets {
		if s == want {
			return s, nil
		}
	}
	for _, s := range sheets {
		if strings.EqualFold(s, want) {
			return s, nil
		}
	}
	if n, err := strconv.Atoi(strings.TrimSpace(want)); err == nil {
		if n >= 1 && n <= len(sheets) {
			return sheets[n-1], nil
		}
		return "", fmt.Errorf("has no sheet %d: it has %d (%s)", n, len(sheets), strings.Join(sheets, ", "))
	}
	return "", fmt.Errorf("has no sheet %q: its sheets are %s", want, strings.Join(sheets, ", "))
}

func (t *table) close() {
	if t.rows != nil {
		t.rows.Close()
	}
	if t.attrs != nil {
		t.attrs.close()
	}
	if t.zip != nil {
		t.zip.Close()
	}
	t.wb.Close() // also removes excelize's temporary files
}

// next reads the next row into t.cells; false at the end of the sheet.
// Rows the file leaves out come back empty, so t.row is the row number a
// spreadsheet shows.
func (t *table) next() (bool, error) {
	if !t.rows.Next() {
		if err := t.rows.Error(); err != nil {
			return false, fmt.Errorf("%s: sheet %s after row %d: %v", t.name, t.sheet, t.row, err)
		}
		// excelize ends a sheet quietly where its XML breaks off; the
		// cell-type reader sees whether rows were left behind.
		if err := t.attrs.finish(); err != nil {
			return false, fmt.Errorf("%s: sheet %s is damaged after row %d: %v", t.name, t.sheet, t.row, err)
		}
		return false, nil
	}
	t.row++
	values, err := t.rows.Columns(rawValues)
	if err != nil {
		return false, fmt.Errorf("%s:%s!%d: cannot read the row: %v", t.name, t.sheet, t.row, err)
	}
	attrs, err := t.attrs.row(t.row)
	if err != nil {
		return false, fmt.Errorf("%s: sheet %s is damaged at row %d: %v", t.name, t.sheet, t.row, err)
	}
	t.cells = t.cells[:0]
	for i, v := range values {
		var a cellAttr
		if i < len(attrs) {
			a = attrs[i]
		}
		t.cells = append(t.cells, t.classify(a, v))
	}
	return true, nil
}

// classify types a cell from its XML type and style. A number cell whose
// format shows a date holds a serial day number.
func (t *table) classify(a cellAttr, v string) cell {
	if v == "" {
		return cell{}
	}
	switch a.t {
	case "s", "inlineStr", "str":
		return cell{text: v, kind: textCell}
	case "b":
		if v == "1" {
			return cell{text: "TRUE", kind: boolCell}
		}
		return cell{text: "FALSE", kind: boolCell}
	case "e":
		return cell{text: v, kind: errorCell}
	case "d":
		return cell{text: v, kind: isoDateCell}
	case "", "n":
		if !a.present {
			// Every value comes from a <c> element; without one the two
			// readers disagree, and text is the kind read most strictly.
			return cell{text: v, kind: textCell}
		}
		if t.isDateStyle(a.s) {
			return cell{text: v, kind: dateCell}
		}
		return cell{text: v, kind: numberCell}
	}
	return cell{text: v, kind: textCell}
}

func (t *table) isDateStyle(s int) bool {
	if s == 0 {
		return false // the default style is General
	}
	d, ok := t.dateStyle[s]
	if !ok {
		if st, err := t.wb.GetStyle(s); err == nil {
			d = isDateFormat(st.NumFmt, st.CustomNumFmt)
		}
		t.dateStyle[s] = d
	}
	return d
}

// bind binds the header's columns, or says which the sheet lacks.
func (t *table) bind(mapping map[string]string, cols canon.Columns) (canon.Binding, error) {
	b, err := canon.Bind(t.header, mapping, cols)
	if err != nil {
		return b, fmt.Errorf("%s: %w", t.location(), err)
	}
	return b, nil
}

// at returns the cell of the current row at a position; blank beyond the
// row's last cell.
func (t *table) at(i int) cell {
	if i >= len(t.cells) {
		return cell{}
	}
	return t.cells[i]
}

// fill sets the cells of the current row's bound columns.
func (t *table) fill(row *canon.Row, bound []canon.Bound, opt Options) {
	for _, b := range bound {
		row[b.Column] = t.canonical(b.Column, t.at(b.Index), opt)
	}
}

// overflow names a column beyond the header that holds a value: it would
// be lost without a word, as a CSV row with too many fields is not.
func (t *table) overflow() string {
	for i := len(t.header); i < len(t.cells); i++ {
		if t.cells[i].kind != blankCell {
			return fmt.Sprintf("column %s has a value but the header ends at column %s", columnName(i), columnName(len(t.header)-1))
		}
	}
	return ""
}

func columnName(i int) string {
	s, err := excelize.ColumnNumberToName(i + 1)
	if err != nil {
		return strconv.Itoa(i + 1)
	}
	return s
}

func (t *table) location() string { return fmt.Sprintf("%s:%s!%d", t.name, t.sheet, t.row) }

// raw writes the current row as a CSV line for the reject table: cells as
// the file stores them (a date cell as its serial).
func (t *table) raw() string {
	rec := make([]string, len(t.cells))
	for i, c := range t.cells {
		rec[i] = c.text
	}
	var b strings.Builder
	w := csv.NewWriter(&b)
	w.Write(rec)
	w.Flush()
	s := strings.TrimRight(b.String(), "\r\n")
	if len(s) > maxRaw {
		s = s[:maxRaw]
	}
	return s
}

// blank reports whether a row holds no value: such rows are skipped, as
// sheets often have them between blocks and at the end.
// each calls row for every data row of the sheet, in order, with the row in
// t.cells, and returns how many rows it read; blank rows are skipped and the
// context is checked now and then.
func (t *table) each(ctx context.Context, row func() error) (int, error) {
	read := 0
	for {
		ok, err := t.next()
		if err != nil || !ok {
			return read, err
		}
		if blank(t.cells) {
			continue
		}
		read++
		if err := checkCtx(ctx, read); err != nil {
			return read, err
		}
		if err := row(); err != nil {
			return read, err
		}
	}
}

// reject stores the current row as rejected, with its location and values.
func (t *table) reject(opt Options, w costdrift.SourceWriter, reason string) error {
	return w.Reject(costdrift.Reject{Source: opt.Source, Location: t.location(), Reason: reason, Raw: t.raw()})
}

func blank(cells []cell) bool {
	for _, c := range cells {
		if strings.TrimSpace(c.text) != "" {
			return false
		}
	}
	return true
}

func checkCtx(ctx context.Context, n int) error {
	if n%4096 == 0 {
		return ctx.Err()
	}
	return nil
}

// contains reports whether r holds pattern, reading it in chunks.
func contains(r io.Reader, pattern []byte) (bool, error) {
	buf := make([]byte, 64<<10)
	keep := 0 // bytes carried over, so that a match across chunks is found
	for {
		n, err := r.Read(buf[keep:])
		end := keep + n
		if bytes.Contains(buf[:end], pattern) {
			return true, nil
		}
		if err == io.EOF {
			return false, nil
		}
		if err != nil {
			return false, err
		}
		keep = min(len(pattern)-1, end)
		copy(buf, buf[end-keep:end])
	}
}

func utf16le(s string) []byte {
	b := make([]byte, 0, 2*len(s))
	for _, c := range []byte(s) {
		b = append(b, c, 0)
	}
	return b
}

// cellAttr is what the worksheet XML says about a cell besides its value:
// its type and style. excelize's row iterator reports only the text, and
// its per-cell lookups (GetCellType, GetCellStyle) load the whole sheet
// into memory; yet only the type tells the number 1.5 from the text
// "1.500" (fifteen hundred with a "." thousands separator), and only the
// style tells a serial date from a count.
type cellAttr struct {
	present bool
	t       string // "" or "n" number, "s" "inlineStr" "str" text, "b", "e", "d"
	s       int    // index into the style sheet's cell formats
}

// attrReader walks the sheet's XML beside excelize's iterator, one row at a
// time, keeping only the current row. It reads the part straight from the
// zip, so it also notices a sheet whose XML breaks off, where excelize's
// iterator just stops.
type attrReader struct {
	rc      io.ReadCloser
	d       *xml.Decoder
	peeked  bool // a <row> start has been read and its cells not yet
	peekRow int
	last    int
	done    bool
	cells   []cellAttr
}

// openAttrs finds the part that holds the sheet (workbook.xml names it,
// its relationships give the path) and starts reading it.
func openAttrs(z *zip.Reader, sheet string) (*attrReader, error) {
	rid, err := sheetRelation(z, sheet)
	if err != nil {
		return nil, err
	}
	target, err := relationTarget(z, rid)
	if err != nil {
		return nil, err
	}
	f := findPart(z, target)
	if f == nil {
		return nil, fmt.Errorf("the workbook has no part %s", target)
	}
	rc, err := f.Open()
	if err != nil {
		return nil, err
	}
	return &attrReader{rc: rc, d: xml.NewDecoder(rc)}, nil
}

func (a *attrReader) close() { a.rc.Close() }

// row returns the attributes of row n's cells by column (0-based), or nil
// for a row the file leaves out. Rows must be asked for in order.
func (a *attrReader) row(n int) ([]cellAttr, error) {
	for {
		if !a.peeked {
			ok, err := a.nextRow()
			if err != nil || !ok {
				return nil, err
			}
		}
		if a.peekRow > n {
			return nil, nil
		}
		if err := a.readCells(); err != nil {
			return nil, err
		}
		if a.last == n {
			return a.cells, nil
		}
	}
}

// finish reports whether rows are left after the last one delivered.
func (a *attrReader) finish() error {
	if !a.peeked {
		ok, err := a.nextRow()
		if err != nil {
			return err
		}
		if !ok {
			return nil
		}
	}
	return fmt.Errorf("row %d could not be read", a.peekRow)
}

// nextRow reads up to the next <row> start; false at the end of the data.
func (a *attrReader) nextRow() (bool, error) {
	if a.done {
		return false, nil
	}
	for {
		tok, err := a.d.RawToken()
		if err == io.EOF {
			a.done = true
			return false, nil
		}
		if err != nil {
			return false, err
		}
		switch el := tok.(type) {
		case xml.StartElement:
			if el.Name.Local == "row" {
				a.peekRow = a.last + 1
				if r := attr(el, "r"); r != "" {
					if a.peekRow, err = strconv.Atoi(r); err != nil {
						return false, fmt.Errorf("bad row number %q", r)
					}
				}
				a.peeked = true
				return true, nil
			}
		case xml.EndElement:
			if el.Name.Local == "sheetData" {
				a.done = true
				return false, nil
			}
		}
	}
}

// readCells reads the peeked row's <c> elements up to </row>.
func (a *attrReader) readCells() error {
	a.cells = a.cells[:0]
	col := 0
	for {
		tok, err := a.d.RawToken()
		if err == io.EOF {
			return io.ErrUnexpectedEOF
		}
		if err != nil {
			return err
		}
		switch el := tok.(type) {
		case xml.StartElement:
			if el.Name.Local != "c" {
				continue
			}
			col++
			if ref := attr(el, "r"); ref != "" {
				if col, _, err = excelize.CellNameToCoordinates(ref); err != nil {
					return err
				}
			}
			for len(a.cells) < col {
				a.cells = append(a.cells, cellAttr{})
			}
			c := cellAttr{present: true, t: attr(el, "t")}
			if s := attr(el, "s"); s != "" {
				c.s, _ = strconv.Atoi(s)
			}
			a.cells[col-1] = c
		case xml.EndElement:
			if el.Name.Local == "row" {
				a.peeked = false
				a.last = a.peekRow
				return nil
			}
		}
	}
}

func attr(el xml.StartElement, name string) string {
	for _, a := range el.Attr {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

// sheetRelation returns the relationship id workbook.xml gives a sheet.
func sheetRelation(z *zip.Reader, sheet string) (string, error) {
	var rid string
	err := eachElement(z, "xl/workbook.xml", "sheet", func(el xml.StartElement) bool {
		if attr(el, "name") == sheet {
			rid = attr(el, "id") // r:id, in whichever namespace the file uses
			return false
		}
		return true
	})
	if err == nil && rid == "" {
		err = fmt.Errorf("xl/workbook.xml does not list the sheet")
	}
	return rid, err
}

// relationTarget resolves a workbook relationship id to a part path.
func relationTarget(z *zip.Reader, rid string) (string, error) {
	var target string
	err := eachElement(z, "xl/_rels/workbook.xml.rels", "Relationship", func(el xml.StartElement) bool {
		if attr(el, "Id") == rid {
			target = attr(el, "Target")
			return false
		}
		return true
	})
	if err == nil && target == "" {
		err = fmt.Errorf("the workbook's relationships have no %s", rid)
	}
	if strings.HasPrefix(target, "/") {
		return path.Clean(target[1:]), err
	}
	return path.Join("xl", target), err
}

// eachElement calls fn with every <local> start element of a part until fn
// returns false.
func eachElement(z *zip.Reader, part, local string, fn func(xml.StartElement) bool) error {
	f := findPart(z, part)
	if f == nil {
		return fmt.Errorf("the workbook has no part %s", part)
	}
	rc, err := f.Open()
	if err != nil {
		return err
	}
	defer rc.Close()
	d := xml.NewDecoder(rc)
	for {
		tok, err := d.RawToken()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return fmt.Errorf("%s: %v", part, err)
		}
		if el, ok := tok.(xml.StartElement); ok && el.Name.Local == local && !fn(el) {
			return nil
		}
	}
}

// findPart looks a part up as excelize does: backslashes as slashes, and
// without regard to case.
func findPart(z *zip.Reader, name string) *zip.File {
	for _, f := range z.File {
		if strings.EqualFold(strings.ReplaceAll(f.Name, "\\", "/"), name) {
			return f
		}
	}
	return nil
}
