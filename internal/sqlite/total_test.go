package sqlite

import (
	"math"
	"math/big"
	"math/rand/v2"
	"testing"
)

func TestJoinParts(t *testing.T) {
	// Each case is billions and rest as sumParts returns them, with the
	// total worked out by hand: billions·10^9 + rest.
	tests := []struct {
		name           string
		billions, rest int64
		want           int64
		ok             bool
	}{
		{"zero", 0, 0, 0, true},
		{"small credit", 0, -1001, -1001, true},
		{"rest beyond a billion", 2, 3_500_000_000, 5_500_000_000, true},
		{"parts of opposite signs", 5, -1, 4_999_999_999, true},
		{"largest int64", 9_223_372_036, 854_775_807, math.MaxInt64, true},
		{"smallest int64", -9_223_372_036, -854_775_808, math.MinInt64, true},
		{"one beyond the largest", 9_223_372_036, 854_775_808, 0, false},
		{"one beyond the smallest", -9_223_372_036, -854_775_809, 0, false},
		// 9,223,372,037·10^9 alone is beyond int64, but the rest brings the
		// total back: 9,223,372,036,000,000,001.
		{"billions beyond, total within", 9_223_372_037, -999_999_999, 9_223_372_036_000_000_001, true},
		// Ten lines of 999,999,999,999,999,999.
		{"ten huge lines", 9_999_999_999, 9_999_999_990, 0, false},
	}
	for _, tc := range tests {
		got, ok := joinParts(tc.billions, tc.rest)
		if got != tc.want || ok != tc.ok {
			t.Errorf("%s: joinParts(%d, %d) = %d, %v; want %d, %v", tc.name, tc.billions, tc.rest, got, ok, tc.want, tc.ok)
		}
	}
}

// joinParts agrees with arbitrary-precision arithmetic (math/big) on random
// lines around the int64 limits, split as SQLite splits them.
func TestJoinPartsAgainstBig(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	limit := new(big.Int).SetInt64(math.MaxInt64)
	floor := new(big.Int).SetInt64(math.MinInt64)
	for range 100_000 {
		var billions, rest int64
		exact := new(big.Int)
		for range 1 + r.IntN(4) {
			x := int64(r.Uint64())
			if r.IntN(2) == 0 {
				x >>= r.IntN(63)
			}
			billions += x / billion
			rest += x % billion
			exact.Add(exact, big.NewInt(x))
		}
		got, ok := joinParts(billions, rest)
		fits := exact.Cmp(limit) <= 0 && exact.Cmp(floor) >= 0
		if ok != fits || ok && got != exact.Int64() {
			t.Fatalf("joinParts(%d, %d) = %d, %v; the exact total is %s", billions, rest, got, ok, exact)
		}
	}
}
