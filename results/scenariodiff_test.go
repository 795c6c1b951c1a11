package results

import (
	"encoding/json"
	"reflect"
	"strings"
	"testing"
)

// scenarioJSON is a small normalised scenario; the replacer edits it.
const scenarioJSON = `{"name":"bench","about":"x","seed":1,"replicates":10,
"model":{"n":40,"intercept":0.3},"noise":{"dist":"normal","scale":0.15},
"estimators":[{"label":"ls","method":"ls","stop":{}},
 {"label":"huber","method":"irls","psi":"huber","tuning":[1.345],"scale":"mad","start":"ls","stop":{"change":1e-8,"max_iter":100}},
 {"label":"s","method":"s-estimate","stop":{}}],
"reference":"ls"}`

func TestScenarioChanges(t *testing.T) {
	for _, c := range []struct {
		name, from, to string
		want           []SettingChange
	}{
		{"identical", "", "", nil},
		{"seed, replicates and about", `"seed":1,"replicates":10`, `"seed":2,"replicates":99`, nil},
		{"cap", `"max_iter":100`, `"max_iter":20`, []SettingChange{{"estimators.huber.stop.max_iter", SettingSolver, "100", "20"}}},
		{"tolerance", `"change":1e-8`, `"change":1e-4`, []SettingChange{{"estimators.huber.stop.change", SettingSolver, "1e-8", "1e-4"}}},
		{"new stop rule", `"max_iter":100}`, `"max_iter":100,"equations":1e-6}`, []SettingChange{{"estimators.huber.stop.equations", SettingSolver, "unset", "1e-6"}}},
		{"start", `"start":"ls"`, `"start":"lad"`, []SettingChange{{"estimators.huber.start", SettingSolver, `"ls"`, `"lad"`}}},
		{"irls to newton", `"method":"irls"`, `"method":"newton"`, []SettingChange{{"estimators.huber.method", SettingSolver, `"irls"`, `"newton"`}}},
		{"irls to lts", `"method":"irls"`, `"method":"lts"`, []SettingChange{{"estimators.huber.method", SettingEstimator, `"irls"`, `"lts"`}}},
		{"resampling effort", `"method":"s-estimate"`, `"method":"s-estimate","resampling":{"subsets":50}`,
			[]SettingChange{{"estimators.s.resampling.subsets", SettingSolver, "unset", "50"}}},
		{"S-scale constant", `"method":"s-estimate"`, `"method":"s-estimate","resampling":{"s_tuning":1.2}`,
			[]SettingChange{{"estimators.s.resampling.s_tuning", SettingEstimator, "unset", "1.2"}}},
		{"tuning", `[1.345]`, `[1.5]`, []SettingChange{{"estimators.huber.tuning[0]", SettingEstimator, "1.345", "1.5"}}},
		{"scale rule", `"scale":"mad"`, `"scale":"start"`, []SettingChange{{"estimators.huber.scale", SettingEstimator, `"mad"`, `"start"`}}},
		{"noise", `"scale":0.15`, `"scale":0.3`, []SettingChange{{"noise.scale", SettingData, "0.15", "0.3"}}},
		{"reference", `"reference":"ls"`, `"reference":"huber"`, []SettingChange{{"reference", SettingAnalysis, `"ls"`, `"huber"`}}},
		{"labels", `"label":"s"`, `"label":"s2"`, []SettingChange{{"estimators", SettingAnalysis, "[ls huber s]", "[ls huber s2]"}}},
		{"name", `"name":"bench"`, `"name":"bench-cut"`, []SettingChange{{"name", SettingName, `"bench"`, `"bench-cut"`}}},
	} {
		t.Run(c.name, func(t *testing.T) {
			to := scenarioJSON
			if c.from != "" {
				if !strings.Contains(to, c.from) {
					t.Fatalf("%q not in the scenario", c.from)
				}
				to = strings.Replace(to, c.from, c.to, 1)
			}
			got := scenarioChanges(json.RawMessage(scenarioJSON), json.RawMessage(to))
			if !reflect.DeepEqual(got, c.want) {
				t.Errorf("got %+v\nwant %+v", got, c.want)
			}
		})
	}
}
