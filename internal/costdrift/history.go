package costdrift

// BehaviourSpan is one stretch of an object's behaviour history: the
// behaviour, the periods it held (From to To; To empty while it holds)
// and the analysis runs that found it first and last.
type BehaviourSpan struct {
	Behaviour  Behaviour
	From, To   string // periods
	FirstRunID int64
	LastRunID  int64
	FoundAt    string // RFC 3339, UTC: when an analysis first found it
	ClosedAt   string // RFC 3339, UTC: when an analysis replaced it; "" while current
}
