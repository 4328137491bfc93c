package costdrift

// Grain says what a cost object is.
type Grain string

const (
	GrainAccount           Grain = "account"
	GrainAccountCostCenter Grain = "account_cost_center"
)

// CostObject is an account, or an account in one cost centre, whose cost
// behaviour is analysed.
type CostObject struct {
	Account    string
	CostCenter string // "" at account grain, or for lines without a cost centre
}

// String names the object as the report and the store do: "6200/WELD", or
// "6200" when there is no cost centre.
func (o CostObject) String() string {
	if o.CostCenter == "" {
		return o.Account
	}
	return o.Account + "/" + o.CostCenter
}
