// Package saftsource reads general-ledger lines and the chart of accounts
// from SAF-T Financial XML files in the Norwegian schema (namespace
// urn:StandardAuditFile-Taxation-Financial:NO), in both the 1.30 layout and
// the older 1.20 one.
//
// It owns the mapping of the file onto costdrift's rows:
//
//	GeneralLedgerEntries/Journal/Transaction/Line  -> costdrift.LedgerLine
//	    EntryID     = PeriodYear + "/" + JournalID + "/" + TransactionID
//	    PostedOn    = Transaction/TransactionDate
//	    AmountMinor = DebitAmount/Amount - CreditAmount/Amount   (default currency)
//	    CostCenter  = AnalysisID of the line's Analysis of the configured AnalysisType
//	                  (a line split between several becomes one row per cost centre)
//	MasterFiles/GeneralLedgerAccounts/Account      -> costdrift.Account
//	    Group       = GroupingCode, else StandardAccountID
//
// (ReadLedger and ReadAccounts give the reasons), and it reads the file's
// control totals (NumberOfEntries, TotalDebit, TotalCredit), which it
// returns beside what it read so that the caller can refuse an incomplete
// file (Totals.Check).
//
// The XML and its elements are read here; the posting date and its period
// are set by canon.Rules.Posting and amounts parsed by money.Currency.Parse,
// as for every source kind, so the same line stores the same row.
//
// Files are streamed with encoding/xml's token decoder; only one Line or
// one Account element is decoded at a time, so memory does not grow with
// the number of lines (only the entry IDs read are remembered, to catch a
// voucher repeated in the file). Elements are matched by namespace URI and
// local name along their path, never by prefix; inside one Line or Account,
// by local name. A line that cannot be used becomes a costdrift.Reject
// with a location such as "gl.xml:Journal GL/Transaction 12/Line 3" and a
// one-line reason; a file that is not usable as a whole (empty, not XML,
// truncated, another root element or namespace, another currency) is an
// error for the caller, which then keeps nothing of the batch.
//
// The package must not open the store or write anywhere but through the
// costdrift.SourceWriter it is given, and it must not read SourceDocuments:
// its invoice and payment lines also carry accounts and amounts but are not
// general-ledger postings.
package saftsource
