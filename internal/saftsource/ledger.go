package saftsource

import (
	"context"
	"encoding/xml"
	"fmt"
	"strings"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// amountXML is an AmountStructure. Only Amount is read: it is in the
// file's default currency (Header/DefaultCurrencyCode). CurrencyCode,
// CurrencyAmount and ExchangeRate describe a foreign-currency original
// (CurrencyAmount x ExchangeRate = Amount) and are left alone.
type amountXML struct {
	Amount []string `xml:"Amount"`
}

// analysisXML is a line's Analysis: 1.20 files carry an unsigned
// AnalysisAmount on the line's side, 1.30 files a DebitAnalysisAmount or a
// CreditAnalysisAmount.
type analysisXML struct {
	Type   string      `xml:"AnalysisType"`
	ID     string      `xml:"AnalysisID"`
	Amount []amountXML `xml:"AnalysisAmount"`
	Debit  []amountXML `xml:"DebitAnalysisAmount"`
	Credit []amountXML `xml:"CreditAnalysisAmount"`
}

// lineXML is one GeneralLedgerEntries/Journal/Transaction/Line. Its
// children are matched by local name: the path to it has already been
// checked against the namespace.
type lineXML struct {
	AccountID   string        `xml:"AccountID"`
	Analysis    []analysisXML `xml:"Analysis"`
	Description string        `xml:"Description"`
	Debit       []amountXML   `xml:"DebitAmount"`
	Credit      []amountXML   `xml:"CreditAmount"`
}

// journal is what a Line needs of its Journal.
type journal struct {
	pos int    // position among the file's journals, 1-based
	id  string // JournalID; "" until read
}

// transaction is what a Line needs of its Transaction, read from the
// Transaction's children that come before the first line (the schema puts
// TransactionID, PeriodYear, TransactionDate and Description there).
type transaction struct {
	pos         int // position within its journal, 1-based
	id          string
	idRead      bool
	year        string // PeriodYear as a plain number; "" until read
	yearRead    bool
	yearWhy     string // why PeriodYear cannot be used
	date        string
	dateRead    bool
	description string
	descRead    bool
	entryID     string // "" until the journal's and transaction's IDs and the year are read
	duplicate   bool   // the entry ID was read before in this file
	lines       int    // Line elements read so far
	numbered    int    // the last LedgerLine.Line given in this entry
}

// ledger reads the GeneralLedgerEntries of one file.
type ledger struct {
	*file
	ctx      context.Context
	opt      Options
	rules    canon.Rules // the posting date's period, as every source kind gives it
	w        costdrift.SourceWriter
	tot      Totals
	currency string              // Header/DefaultCurrencyCode
	seen     map[string]struct{} // entry IDs read; one short string per transaction
	journals int
	entries  bool // GeneralLedgerEntries was read
	declared [3]bool
}

// ReadLedger streams the general-ledger lines of one SAF-T Financial file
// to w and returns what it read beside the control totals the file
// declares; Totals.Check compares them. display names the file in
// messages and locations.
//
// Each GeneralLedgerEntries/Journal/Transaction/Line becomes a ledger line
// (or several, when it is split between cost centres; see below):
//
//	EntryID     = PeriodYear + "/" + JournalID + "/" + TransactionID
//	Line        = 1, 2, 3, ... in file order within the entry
//	PostedOn    = TransactionDate;  Period = opt.Period(PostedOn)
//	Account     = AccountID
//	AmountMinor = DebitAmount/Amount - CreditAmount/Amount
//	Description = the line's Description, else the transaction's
//
// TransactionID alone does not identify a voucher. Many systems number
// vouchers per journal (voucher series) and start again every fiscal year;
// the schema declares TransactionID a key of the file, but its key
// selectors name no namespace, so validators never enforce it. Without the
// JournalID, vouchers of two journals would share lines; without the
// PeriodYear (the fiscal year, mandatory in 1.20 and 1.30), next year's
// voucher 1001 would replace this year's in the store, which keeps one row
// per source, entry and line across all its files. An entry ID met a second
// time in one file is rejected line by line, since its lines would
// overwrite the first's.
//
// Line numbers count rows within the entry: a line that is rejected keeps
// its number, and a line split between k cost centres takes k numbers. In
// files that split nothing, Line is the position of the Line element in
// its Transaction, which is what both of Skatteetaten's examples write in
// RecordID. RecordID itself is not used: it is free text of up to 18
// characters and may repeat or run across the file.
//
// PostedOn is TransactionDate, the date of the voucher, because it is the
// date that places a cost in its accounting period; the schema defines
// GLPostingDate and SystemEntryDate as the dates the voucher reached the
// database, which can fall in the next month, and a line's ValueDate as the
// date interest runs from. (In the 888888888 example a January voucher has
// GLPostingDate 2017-02-01 and Period 01.)
//
// CostCenter is the AnalysisID of the line's Analysis whose AnalysisType is
// opt.AnalysisType. When a line has several of that type, their amounts
// allocate the line (as in the 888888888 example, where one payroll line is
// split between three departments), and the line becomes one row per cost
// centre with its part of the amount:
//
//	part_i   = Debit/CreditAnalysisAmount (1.30), or AnalysisAmount with the line's sign (1.20)
//	the one entry without an amount gets  line - sum(part_i)
//	else a rest line - sum(part_i) != 0 goes to cost centre ""
//
// so the parts always add up to the line. Parts of zero are left out; a
// part with the opposite sign of the line (an allocation larger than the
// line), or two entries without an amount, make the line a reject.
//
// A line is rejected, with a location such as "gl.xml:Journal GL/
// Transaction 12/Line 3" (Line being the position of the Line element), for
// a missing JournalID, TransactionID, PeriodYear (or one that comes after
// the transaction's first line) or AccountID, a repeated entry, both
// or neither of DebitAmount and CreditAmount, an amount that is not a
// decimal or has more decimals than the currency, a missing or bad
// TransactionDate, or an allocation that does not fit. The amounts of
// rejected lines still count in Totals.
//
// The file as a whole is refused with an error when it is empty, not XML,
// truncated, not AuditFile in the SAF-T Financial namespace, has no
// GeneralLedgerEntries or no control totals there, or its
// DefaultCurrencyCode is not opt.Currency. On error the Totals read so far
// are returned and the caller must keep nothing of the batch.
//
// Misuse panics: opt.Period must be set, and opt.Currency must have a code.
func ReadLedger(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (Totals, error) {
	if opt.Period == nil {
		panic("saftsource: ReadLedger needs Options.Period")
	}
	if opt.Currency.Code == "" {
		panic("saftsource: ReadLedger needs Options.Currency")
	}
	if err := ctx.Err(); err != nil {
		return Totals{Currency: opt.Currency}, err
	}
	x, closer, err := openFile(path, display, opt.Progress)
	if err != nil {
		return Totals{Currency: opt.Currency}, err
	}
	defer closer.Close()
	return readLedger(ctx, x, opt, w)
}

// readLedger reads the ledger of an opened file.
func readLedger(ctx context.Context, x *file, opt Options, w costdrift.SourceWriter) (Totals, error) {
	opt.AnalysisType = strings.TrimSpace(opt.AnalysisType)
	r := &ledger{file: x, ctx: ctx, opt: opt, w: w, tot: Totals{Currency: opt.Currency}, seen: map[string]struct{}{},
		rules: canon.Rules{Source: opt.Source, Currency: opt.Currency, Period: opt.Period, Fixed: true}}
	err := r.root()
	if err == nil && !r.entries {
		err = fmt.Errorf("%s has no GeneralLedgerEntries: it holds no ledger lines (is it an export of master data only?)", x.display)
	}
	if err == nil {
		err = x.finish()
	}
	return r.tot, err
}

// root reads the children of AuditFile.
func (r *ledger) root() error {
	for {
		tok, err := r.token()
		if err != nil {
			return err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return nil
		case xml.StartElement:
			switch {
			case !r.ours(t.Name):
				err = r.skip()
			case t.Name.Local == "Header":
				err = r.header()
			case t.Name.Local == "GeneralLedgerEntries":
				if r.entries {
					return fmt.Errorf("%s has more than one GeneralLedgerEntries; SAF-T allows one", r.display)
				}
				r.entries = true
				err = r.generalLedgerEntries()
			default: // MasterFiles, SourceDocuments: not ledger postings
				err = r.skip()
			}
			if err != nil {
				return err
			}
		}
	}
}

// header reads what the ledger needs of Header: the currency and version.
func (r *ledger) header() error {
	for {
		tok, err := r.token()
		if err != nil {
			return err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return nil
		case xml.StartElement:
			switch {
			case r.ours(t.Name) && t.Name.Local == "DefaultCurrencyCode" && r.currency == "":
				r.currency, err = r.text(&t)
			case r.ours(t.Name) && t.Name.Local == "AuditFileVersion" && r.tot.Version == "":
				r.tot.Version, err = r.text(&t)
			default:
				err = r.skip()
			}
			if err != nil {
				return err
			}
		}
	}
}

// generalLedgerEntries reads the control totals and the journals.
func (r *ledger) generalLedgerEntries() error {
	switch {
	case r.currency == "":
		return fmt.Errorf("%s: Header/DefaultCurrencyCode is missing (or comes after GeneralLedgerEntries); it says what currency the amounts are in", r.display)
	case !strings.EqualFold(r.currency, r.opt.Currency.Code):
		return fmt.Errorf("%s: amounts are in %s (Header/DefaultCurrencyCode) but the store's currency is %s (key currency)", r.display, shorten(r.currency), r.opt.Currency.Code)
	}
	names := [3]string{"NumberOfEntries", "TotalDebit", "TotalCredit"}
	for {
		tok, err := r.token()
		if err != nil {
			return err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			for i, ok := range r.declared {
				if !ok {
					return fmt.Errorf("%s: GeneralLedgerEntries has no %s; SAF-T requires NumberOfEntries, TotalDebit and TotalCredit", r.display, names[i])
				}
			}
			return nil
		case xml.StartElement:
			if !r.ours(t.Name) {
				if err := r.skip(); err != nil {
					return err
				}
				continue
			}
			switch t.Name.Local {
			case "NumberOfEntries", "TotalDebit", "TotalCredit":
				if err := r.controlTotal(&t); err != nil {
					return err
				}
			case "Journal":
				r.journals++
				if err := r.journal(&journal{pos: r.journals}); err != nil {
					return err
				}
			default:
				if err := r.skip(); err != nil {
					return err
				}
			}
		}
	}
}

// controlTotal reads NumberOfEntries, TotalDebit or TotalCredit. A value
// that cannot be read leaves nothing to check the file against, so it is
// an error for the file.
func (r *ledger) controlTotal(start *xml.StartElement) error {
	name := start.Name.Local
	s, err := r.text(start)
	if err != nil {
		return err
	}
	i := map[string]int{"NumberOfEntries": 0, "TotalDebit": 1, "TotalCredit": 2}[name]
	if r.declared[i] {
		return fmt.Errorf("%s: GeneralLedgerEntries has %s twice", r.display, name)
	}
	r.declared[i] = true
	if i == 0 {
		r.tot.DeclaredEntries, err = parseCount(s)
	} else {
		var v int64
		v, err = parseAmount(r.opt.Currency, s)
		if i == 1 {
			r.tot.DeclaredDebitMinor = v
		} else {
			r.tot.DeclaredCreditMinor = v
		}
	}
	if err != nil {
		return fmt.Errorf("%s: GeneralLedgerEntries/%s: %v", r.display, name, err)
	}
	return nil
}

// journal reads one Journal: its JournalID and transactions.
func (r *ledger) journal(j *journal) error {
	idRead := false
	transactions := 0
	for {
		tok, err := r.token()
		if err != nil {
			return err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return nil
		case xml.StartElement:
			switch {
			case !r.ours(t.Name):
				err = r.skip()
			case t.Name.Local == "JournalID" && !idRead:
				idRead = true
				j.id, err = r.text(&t)
			case t.Name.Local == "Transaction":
				transactions++
				r.tot.Entries++
				err = r.transaction(j, &transaction{pos: transactions})
			default:
				err = r.skip()
			}
			if err != nil {
				return err
			}
		}
	}
}

// transaction reads one Transaction: the fields its lines need, then the
// lines one by one.
func (r *ledger) transaction(j *journal, tx *transaction) error {
	for {
		before := r.d.InputOffset()
		tok, err := r.token()
		if err != nil {
			return err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return nil
		case xml.StartElement:
			if !r.ours(t.Name) {
				if err := r.skip(); err != nil {
					return err
				}
				continue
			}
			// Only the first of each field counts, and only before the
			// first line: what the lines were given cannot change.
			switch {
			case tx.lines > 0 && t.Name.Local != "Line":
				err = r.skip()
			case t.Name.Local == "TransactionID" && !tx.idRead:
				tx.idRead = true
				tx.id, err = r.text(&t)
			case t.Name.Local == "PeriodYear" && !tx.yearRead:
				tx.yearRead = true
				var text string
				if text, err = r.text(&t); err == nil {
					tx.year, tx.yearWhy = periodYear(text)
				}
			case t.Name.Local == "TransactionDate" && !tx.dateRead:
				tx.dateRead = true
				tx.date, err = r.text(&t)
			case t.Name.Local == "Description" && !tx.descRead:
				tx.descRead = true
				tx.description, err = r.text(&t)
			case t.Name.Local == "Line":
				if tx.lines == 0 {
					r.identify(j, tx)
				}
				err = r.line(j, tx, &t, before)
			default:
				err = r.skip()
			}
			if err != nil {
				return err
			}
		}
	}
}

// identify gives a transaction its entry ID when its first line arrives,
// and notes whether the file had that ID before.
func (r *ledger) identify(j *journal, tx *transaction) {
	if j.id == "" || tx.id == "" || tx.year == "" {
		return
	}
	tx.entryID = tx.year + "/" + j.id + "/" + tx.id
	if _, dup := r.seen[tx.entryID]; dup {
		tx.duplicate = true
	} else {
		r.seen[tx.entryID] = struct{}{}
	}
}

// periodYear reads PeriodYear, an integer from 1970 to 2100 in the schema,
// as a plain number ("02017" is 2017), or says why it cannot.
func periodYear(text string) (string, string) {
	n, err := parseCount(text)
	if err != nil || n < 1970 || n > 2100 {
		return "", fmt.Sprintf("bad PeriodYear %q: want a year from 1970 to 2100", shorten(text))
	}
	return fmt.Sprint(n), ""
}

// line reads one Line and writes its rows, or a reject.
func (r *ledger) line(j *journal, tx *transaction, start *xml.StartElement, from int64) error {
	var l lineXML
	if err := r.decode(&l, start); err != nil {
		return err
	}
	r.tot.Lines++
	tx.lines++
	if r.tot.Lines%1024 == 0 {
		if err := r.ctx.Err(); err != nil {
			return err
		}
	}
	where := r.location(j, tx)

	// The control sums come first: they count every amount the file
	// holds, whatever becomes of the line.
	debit, debitWhy, err := r.side(l.Debit, "DebitAmount", where, &r.tot.DebitMinor)
	if err != nil {
		return err
	}
	credit, creditWhy, err := r.side(l.Credit, "CreditAmount", where, &r.tot.CreditMinor)
	if err != nil {
		return err
	}

	tx.numbered++
	first := tx.numbered
	parts, reason := r.convert(j, tx, &l, debit, credit, debitWhy, creditWhy)
	if reason != "" {
		r.tot.Rows++
		return r.w.Reject(costdrift.Reject{Source: r.opt.Source, Location: where, Reason: reason,
			Raw: r.raw(from, r.d.InputOffset())})
	}
	date, _ := parseDate(tx.date) // checked by convert
	base := costdrift.LedgerLine{
		Source:      r.opt.Source,
		EntryID:     tx.entryID,
		Account:     strings.TrimSpace(l.AccountID),
		Description: strings.TrimSpace(l.Description),
	}
	r.rules.Posting(&base, date)
	if base.Description == "" {
		base.Description = tx.description
	}
	for i, p := range parts {
		row := base
		row.Line = first + i
		row.CostCenter = p.costCenter
		row.AmountMinor = p.amount
		r.tot.Rows++
		if err := r.w.LedgerLine(row); err != nil {
			return err
		}
	}
	tx.numbered = first + len(parts) - 1
	return nil
}

// side reads a line's DebitAmount or CreditAmount elements: their sum, or
// why they cannot be used. Each Amount read is added to *sum for the
// control totals; one that cannot be read is counted as unreadable.
func (r *ledger) side(elems []amountXML, name, where string, sum *int64) (int64, string, error) {
	var total int64
	why := ""
	for _, e := range elems {
		if len(e.Amount) != 1 && why == "" {
			why = fmt.Sprintf("%s has %d Amount elements; it has one", name, len(e.Amount))
		}
		for _, text := range e.Amount {
			v, err := parseAmount(r.opt.Currency, text)
			if err != nil {
				r.tot.UnreadableAmounts++
				if r.tot.FirstUnreadable == "" {
					r.tot.FirstUnreadable = where
				}
				if why == "" {
					why = "bad " + name + ": " + err.Error()
				}
				continue
			}
			var ok bool
			if *sum, ok = add(*sum, v); !ok {
				return 0, "", fmt.Errorf("%s: the line amounts add up to more than costdrift can hold", r.display)
			}
			if total, ok = add(total, v); !ok && why == "" {
				why = name + " is out of range"
			}
		}
	}
	if len(elems) > 1 && why == "" {
		why = fmt.Sprintf("has %d %s elements; a line has one", len(elems), name)
	}
	return total, why, nil
}

// convert checks a line and splits its amount between cost centres, or
// says in one line why it cannot be stored.
func (r *ledger) convert(j *journal, tx *transaction, l *lineXML, debit, credit int64, debitWhy, creditWhy string) ([]part, string) {
	switch {
	case j.id == "":
		return nil, "its Journal has no JournalID (or it comes after the transactions)"
	case tx.id == "":
		return nil, "its Transaction has no TransactionID (or it comes after the lines)"
	case tx.yearWhy != "":
		return nil, tx.yearWhy
	case tx.year == "":
		return nil, "its Transaction has no PeriodYear (or it comes after the lines)"
	case tx.duplicate:
		return nil, fmt.Sprintf("entry %s appears a second time in the file; its lines would overwrite the first one's", shorten(tx.entryID))
	case strings.TrimSpace(l.AccountID) == "":
		return nil, "missing AccountID"
	case len(l.Debit) > 0 && len(l.Credit) > 0:
		return nil, "has both DebitAmount and CreditAmount; a line has one"
	case len(l.Debit) == 0 && len(l.Credit) == 0:
		return nil, "has neither DebitAmount nor CreditAmount"
	case debitWhy != "":
		return nil, debitWhy
	case creditWhy != "":
		return nil, creditWhy
	}
	if !tx.dateRead {
		return nil, "its Transaction has no TransactionDate (or it comes after the lines)"
	}
	if _, err := parseDate(tx.date); err != nil {
		return nil, "bad TransactionDate: " + err.Error()
	}
	amount, isDebit := debit, true
	if len(l.Credit) > 0 {
		amount, isDebit = -credit, false // credit <= money.MaxMinor in size: no overflow
	}
	return r.allocate(l.Analysis, amount, isDebit)
}

// part is a share of a line's amount in one cost centre.
type part struct {
	costCenter string
	amount     int64
}

// allocate splits a line's signed amount between the cost centres of its
// Analysis entries of the configured type, as ReadLedger describes.
func (r *ledger) allocate(entries []analysisXML, amount int64, isDebit bool) ([]part, string) {
	typ := r.opt.AnalysisType
	if typ == "" {
		return []part{{"", amount}}, ""
	}
	var parts []part
	without, open := 0, -1 // entries without an amount; the index of the last
	var sum int64
	for _, e := range entries {
		if strings.TrimSpace(e.Type) != typ {
			continue
		}
		id := strings.TrimSpace(e.ID)
		v, has, why := r.analysisAmount(e, isDebit)
		if why != "" {
			return nil, fmt.Sprintf("Analysis %s %s: %s", shorten(typ), shorten(id), why)
		}
		if !has {
			without++
			open = len(parts)
		}
		var ok bool
		if sum, ok = add(sum, v); !ok {
			return nil, fmt.Sprintf("Analysis amounts of type %s are out of range", shorten(typ))
		}
		parts = append(parts, part{id, v})
	}
	if len(parts) == 0 {
		return []part{{"", amount}}, ""
	}
	if without > 1 {
		return nil, fmt.Sprintf("%d Analysis entries of type %s have no amount, so the line cannot be split between them", without, shorten(typ))
	}
	cur := r.opt.Currency.Exponent
	for _, p := range parts {
		if p.amount != 0 && sign(p.amount) != sign(amount) {
			return nil, fmt.Sprintf("Analysis %s %s is %s, against the line's %s", shorten(typ), shorten(p.costCenter),
				formatMinor(p.amount, cur), formatMinor(amount, cur))
		}
	}
	// The parts have the line's sign and amount is at most money.MaxMinor
	// in size (money.Currency.Parse), so amount - sum cannot overflow.
	rest := amount - sum
	if rest != 0 && sign(rest) != sign(amount) {
		return nil, fmt.Sprintf("Analysis amounts of type %s add up to %s, more than the line's %s",
			shorten(typ), formatMinor(sum, cur), formatMinor(amount, cur))
	}
	if without == 1 {
		parts[open].amount = rest
	} else if rest != 0 {
		parts = append(parts, part{"", rest})
	}
	return merge(parts), ""
}

// analysisAmount returns an Analysis entry's signed amount, whether it has
// one, or why it cannot be read.
func (r *ledger) analysisAmount(e analysisXML, isDebit bool) (int64, bool, string) {
	var elems []amountXML
	dir := int64(1)
	switch n := len(e.Amount) + len(e.Debit) + len(e.Credit); {
	case n == 0:
		return 0, false, ""
	case n > 1:
		return 0, false, "has more than one amount"
	case len(e.Amount) == 1: // 1.20: unsigned, on the line's side
		elems = e.Amount
		if !isDebit {
			dir = -1
		}
	case len(e.Debit) == 1:
		elems = e.Debit
	default:
		elems, dir = e.Credit, -1
	}
	if len(elems[0].Amount) != 1 {
		return 0, false, "its amount has no single Amount"
	}
	v, err := parseAmount(r.opt.Currency, elems[0].Amount[0])
	if err != nil {
		return 0, false, "bad amount: " + err.Error()
	}
	return dir * v, true, ""
}

// merge joins the parts of one cost centre and drops parts of zero,
// keeping the order in which cost centres first appear. A line of zero
// keeps one part so that it is still stored.
func merge(parts []part) []part {
	if len(parts) == 1 {
		return parts
	}
	index := map[string]int{}
	var out []part
	for _, p := range parts {
		if i, ok := index[p.costCenter]; ok {
			out[i].amount += p.amount // same sign as the line, bounded by it
			continue
		}
		index[p.costCenter] = len(out)
		out = append(out, p)
	}
	kept := out[:0]
	for _, p := range out {
		if p.amount != 0 {
			kept = append(kept, p)
		}
	}
	if len(kept) == 0 {
		return out[:1]
	}
	return kept
}

// location names a line: file:Journal <JournalID>/Transaction
// <TransactionID>/Line <position>, with #<position> for a missing ID.
func (r *ledger) location(j *journal, tx *transaction) string {
	jid := "#" + fmt.Sprint(j.pos)
	if j.id != "" {
		jid = shorten(j.id)
	}
	tid := "#" + fmt.Sprint(tx.pos)
	if tx.id != "" {
		tid = shorten(tx.id)
	}
	return fmt.Sprintf("%s:Journal %s/Transaction %s/Line %d", r.display, jid, tid, tx.lines)
}

func sign(v int64) int {
	switch {
	case v > 0:
		return 1
	case v < 0:
		return -1
	}
	return 0
}
