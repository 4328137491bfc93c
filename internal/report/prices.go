package report

import (
	"fmt"
	"strings"

	"github.com/costdrift/costdrift/internal/present"
)

// PriceLevels sets an object's costs as posted beside the costs its
// formula was fitted on, restated at the prices of Base by the index
// Series (README, Prices and inflation):
//
//	restated = posted × index(Base) / index(period)
type PriceLevels struct {
	Series  string       `json:"series"`
	Base    string       `json:"base"`
	Periods []PricedCost `json:"periods"`
}

// PricedCost is one period's cost as posted, the index then, and the cost
// restated.
type PricedCost struct {
	Period   string   `json:"period"`
	Posted   float64  `json:"posted"`
	Index    *float64 `json:"index"`    // null when the index has no usable value then
	Restated *float64 `json:"restated"` // null without an index value
}

// explainPrices writes the costs as posted beside the restated ones;
// nothing for costs fitted as posted.
func explainPrices(s *strings.Builder, e Explanation) {
	p := e.Prices
	if p == nil {
		return
	}
	fmt.Fprintf(s, "\nPrices: the formula is at prices of %s; each period's cost was restated by the price index %s\n"+
		"before the fit: restated = posted × index %s / index of the period\n", TerminalText(p.Base), TerminalText(p.Series), TerminalText(p.Base))
	t := table{header: []string{"PERIOD", "POSTED", "INDEX", "RESTATED"}, right: "lrrr"}
	for _, c := range p.Periods {
		index, restated := "-", "-"
		if c.Index != nil {
			index = present.Activity(*c.Index)
		}
		if c.Restated != nil {
			restated = present.Amount(*c.Restated)
		}
		t.add(TerminalText(c.Period), present.Amount(c.Posted), index, restated)
	}
	t.write(s, "  ")
}
