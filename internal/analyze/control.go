package analyze

import "sort"

// ControlBreaks weighs the breaks of one analysis across the whole
// portfolio and withdraws those that do not stand, so that the share of
// false breaks among the breaks found is controlled at q however many
// objects are tested: the Benjamini–Hochberg step-up procedure (Benjamini
// and Hochberg 1995, "Controlling the false discovery rate: a practical and
// powerful approach to multiple testing", JRSS B 57(1), 289–300). With m
// objects tested and the break p-values in increasing order p₍₁₎ <= … ,
//
//	j* = max{ j : p₍ⱼ₎ <= j·q/m },   the breaks of p₍₁₎ … p₍ⱼ*₎ stand.
//
// It holds under independence and under the positive dependence of tests
// that share drivers and a business cycle (Benjamini and Yekutieli 2001,
// "The control of the false discovery rate in multiple testing under
// dependency", Annals of Statistics 29(4), 1165–1188, whose variant for any
// dependence divides q by Σ 1/i and is not needed here).
//
// An object whose break is withdrawn gets its analysis without the break
// (Result.Unbroken). m counts every object the break test ran on
// (Result.BreakTested); those without a break found have p-values above
// Settings.BreakAlpha that were not computed exactly, and the procedure is
// monotone in the p-values, so counting them as not rejected withdraws no
// break that the full procedure would keep. It must run over all the
// results of one analysis together, after every object is analysed and
// before the behaviours are stored and the alerts raised; results are
// changed in place. It returns how many breaks were withdrawn. q <= 0
// withdraws nothing.
func ControlBreaks(results []Result, q float64) int {
	tested := 0
	for _, r := range results {
		if r.Err == nil && r.BreakTested {
			tested++
		}
	}
	return ControlBreaksAmong(results, tested, q)
}

// ControlBreaksAmong is ControlBreaks for an analysis whose results are not
// all at hand at once (analysed and stored in batches): results need hold
// only the objects with a break (the others are never withdrawn), and
// tested counts every object of the whole analysis the break test ran on
// (Result.BreakTested), in every batch. A caller that streams batches keeps
// the results with a break back from the store until the last batch is
// analysed, then calls this once over them and stores them.
func ControlBreaksAmong(results []Result, tested int, q float64) int {
	if q <= 0 || tested == 0 {
		return 0
	}
	m := tested
	var broken []int
	for i, r := range results {
		if r.Err == nil && r.BreakTested && r.Behaviour.Break != nil && r.Unbroken != nil {
			broken = append(broken, i)
		}
	}
	sort.SliceStable(broken, func(a, b int) bool {
		return results[broken[a]].Behaviour.Break.P < results[broken[b]].Behaviour.Break.P
	})
	stand := 0
	for j, i := range broken {
		if results[i].Behaviour.Break.P <= float64(j+1)*q/float64(m) {
			stand = j + 1
		}
	}
	for _, i := range broken[stand:] {
		results[i] = *results[i].Unbroken
	}
	return len(broken) - stand
}
