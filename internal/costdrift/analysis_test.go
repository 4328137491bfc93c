package costdrift

import (
	"encoding/json"
	"testing"
)

// TestAnalysisSettingsJSON: the typed settings marshal to the bytes the
// untyped map they replace gave, so that runs stored before keep their
// input hashes. The values are the demo's (its config file and the
// bootstrap seed of `costdrift analyze`); the expected text is what an
// analysis of the demo stored in analysis_runs.settings before the type.
func TestAnalysisSettingsJSON(t *testing.T) {
	const seed uint64 = 0x636f737464726966
	const stored = `{"accounts":["5000-6999"],"alpha":0.05,"bootstrap_replicates":999,"break_alpha":0.01,"currency":"EUR",` +
		`"grain":"account_cost_center","lags":[0,1],"min_periods":12,"seed":7165072475908368742,"window":36}`
	for _, tc := range []struct {
		name     string
		accounts []string
		want     string
	}{
		{"demo", []string{"5000-6999"}, stored},
		{"every account", nil, `{"accounts":null,` + stored[len(`{"accounts":["5000-6999"],`):]},
		{"text to escape", []string{"<61*>", `"6&"`}, `{"accounts":["\u003c61*\u003e","\"6\u0026\""],` + stored[len(`{"accounts":["5000-6999"],`):]},
	} {
		t.Run(tc.name, func(t *testing.T) {
			typed, err := json.Marshal(AnalysisSettings{Grain: GrainAccountCostCenter, Accounts: tc.accounts, Window: 36,
				MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, Currency: "EUR", BreakAlpha: 0.01,
				BootstrapReplicates: 999, Seed: seed})
			if err != nil {
				t.Fatal(err)
			}
			untyped, err := json.Marshal(map[string]any{"grain": "account_cost_center", "accounts": tc.accounts, "window": 36,
				"min_periods": 12, "lags": []int{0, 1}, "alpha": 0.05, "currency": "EUR",
				"break_alpha": 0.01, "bootstrap_replicates": 999, "seed": seed})
			if err != nil {
				t.Fatal(err)
			}
			if string(typed) != string(untyped) || string(typed) != tc.want {
				t.Errorf("settings JSON\n typed   %s\n map     %s\n want    %s", typed, untyped, tc.want)
			}
			var back AnalysisSettings
			if err := json.Unmarshal(typed, &back); err != nil {
				t.Fatal(err)
			}
			if again, _ := json.Marshal(back); string(again) != string(typed) {
				t.Errorf("read back and written again: %s", again)
			}
		})
	}
}
