package config

// testKinds are the kinds of source the config tests validate against: those
// the application layer's registry declares (internal/pipeline, whose tests
// check that they are the same).
var testKinds = Kinds{
	"csv":  {"ledger", "activity", "accounts"},
	"xlsx": {"ledger", "activity", "accounts"},
	"sql":  {"ledger", "activity", "accounts"},
	"saft": {"ledger", "accounts"},
}
