package report

import (
	"bytes"
	_ "embed"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"html/template"
	"image/png"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"go.yaml.in/yaml/v3"

	"github.com/rhomark/rhomark/results"
)

//go:embed report.html.tmpl
var pageTemplate string

// Input is what a report is made of.
type Input struct {
	// Results are the run's results.
	Results *results.Results
	// Figures are the rendered figures (see Figures), shown grouped by
	// Figure.Question; Omitted says which figures were left out and why.
	Figures []Figure
	Omitted []Omission
	// Source is the scenario file's own text, when it is at hand (a run
	// has it; `rhomark report` finds it when the file named in the results
	// still holds the same scenario). Without it the report shows the
	// normalised scenario, converted to YAML.
	Source []byte
}

// Write writes one self-contained HTML page for in: CSS inline, each figure
// inline as a base64 PNG (with its SVG as a data-URI link), and no
// reference to anything outside the page. It leads with the results: the
// verdict of every cell, then a results table per cell, then the figures
// grouped by the question they answer, the convergence table, the scenario
// (collapsed) and the provenance. The page is also well-formed XML.
func Write(w io.Writer, in Input) error {
	if in.Results == nil {
		return fmt.Errorf("report: no results")
	}
	t, err := template.New("page").Parse(pageTemplate)
	if err != nil {
		return fmt.Errorf("report: template: %w", err)
	}
	pg, err := newPage(in)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := t.Execute(&buf, pg); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

// page is what the template renders.
type page struct {
	Name, Lede, Caution, Tool string
	Incomplete                bool
	Reference                 string
	TieMCSE                   int
	Criterion                 string
	TheoryGap                 string
	Results                   *results.Results
	Tuning                    []results.TuningSummary
	TuningNotes               []string
	Cells                     []cellView
	Groups                    []figureGroup
	Convergence               []convergenceRow
	SolverAudit               *solverAuditView
	About                     string
	Sweeps                    []sweepView
	SourceTitle, SourceNote   string
	Source                    string
	Provenance                []keyValue
}

// cellView is one cell's verdict and results table.
type cellView struct {
	Index             int
	Heading           string
	Settings          string
	SettingsList      []string // each setting on its own, kept on one line
	Partial           string
	HeavyNote         string
	Choice            string
	ChoiceIsReference bool
	Score             string
	Tied              []scoreView
	Next              *scoreView
	Excluded          []exclusionView
	Rows              []resultRow
}

type scoreView struct{ Label, Score string }

type exclusionView struct{ Label, Reason string }

// resultRow is one estimator × coefficient row of a cell's table.
type resultRow struct {
	First                             bool // the estimator's first row: carries its label and failures
	Span                              int
	Label, Desc                       string
	Choice, Tied, Reference, Excluded bool
	Coefficient                       string
	Measures                          []measureView // bias, SE, RMSE, MSE ratio, var. eff., coverage
	Failures                          string
	FailureFlag                       bool
}

// measureView is one table entry: the text, a mark class ("worse",
// "better") with its explanation, and the asymptotic value beside it.
type measureView struct{ Text, Class, Title, Theory string }

type figureGroup struct {
	ID, Question string
	Figures      []figureView
	Omitted      []string
}

type figureView struct {
	Name, Title, Caption string
	Src, SVG             template.URL
	File                 string
	Width, Height        int
}

type convergenceRow struct {
	First                         bool
	Cell, CellTitle, Label        string
	Converged                     string
	ConvergedFlag                 bool
	Mean, Median, Max, Safeguards string
	Failures                      string
	FailureFlag                   bool
}

type sweepView struct{ Path, Values string }

type keyValue struct{ Key, Value string }

func newPage(in Input) (*page, error) {
	r := in.Results
	name := r.Scenario.Name
	if name == "" {
		name = "(unnamed scenario)"
	}
	pg := &page{
		Name: name, Lede: lede(r), Caution: results.CautionSentence, Tool: results.ToolName(r),
		Incomplete: !r.Complete, Reference: r.Reference, TieMCSE: results.TieMCSE, Results: r,
		About: strings.TrimSpace(outlineOf(r).About),
	}
	pg.Tuning, pg.TuningNotes = results.TuningSummaries(r)
	pg.Criterion = fmt.Sprintf("Per cell, the estimator to choose by RMSE, which counts bias and spread together (never by variance efficiency alone). "+
		"The score is the RMSE on an estimator's worst coefficient as a multiple of %s's on the same datasets (×0.5: half the error), ± MCSE; "+
		"others are shown as multiples of the choice's score. Tied: within %d combined MCSE of the choice. "+
		"Not recommended: more than %s of fits failed, or heavy-tailed estimates.",
		r.Reference, results.TieMCSE, results.Percent(results.MaxFailureRate))
	if g, ok := results.LargestTheoryGap(r); ok {
		pg.TheoryGap = strconv.FormatFloat(math.Abs(g.Gap), 'f', 1, 64) + " MCSE (" + g.Where() + ")"
	}
	for _, c := range r.Cells {
		pg.Cells = append(pg.Cells, newCellView(r, c))
	}
	groups, err := groupFigures(r, in.Figures, in.Omitted)
	if err != nil {
		return nil, err
	}
	pg.Groups = groups
	pg.Convergence = convergenceRows(r)
	pg.SolverAudit = solverAudit(r)
	for _, s := range results.Sweeps(r) {
		pg.Sweeps = append(pg.Sweeps, sweepView{s.Path, strings.Join(s.Values, ", ")})
	}
	pg.SourceTitle, pg.SourceNote, pg.Source = scenarioText(r, in.Source)
	pg.Provenance = provenance(r)
	return pg, nil
}

// scenarioOutline holds the few fields of the normalised scenario that the
// report quotes; it tolerates their absence.
type scenarioOutline struct {
	About string `json:"about"`
	Model struct {
		N int `json:"n"`
	} `json:"model"`
}

func outlineOf(r *results.Results) scenarioOutline {
	var o scenarioOutline
	if len(r.Scenario.Normalised) > 0 {
		_ = json.Unmarshal(r.Scenario.Normalised, &o) // best effort: the report works without it
	}
	return o
}

// estimatorLabels lists the estimators of r in scenario order.
func estimatorLabels(r *results.Results) []string {
	var out []string
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if !slices.Contains(out, e.Label) {
				out = append(out, e.Label)
			}
		}
	}
	return out
}

// lede says in one sentence what was simulated.
func lede(r *results.Results) string {
	var b strings.Builder
	cells := fmt.Sprintf("%d cell", len(r.Cells))
	if len(r.Cells) != 1 {
		cells += "s"
	}
	b.WriteString(cells)
	if sw := results.Sweeps(r); len(sw) > 0 {
		paths := make([]string, len(sw))
		for i, s := range sw {
			paths[i] = s.Path
		}
		fmt.Fprintf(&b, " (sweeping %s)", strings.Join(paths, ", "))
	}
	fmt.Fprintf(&b, " × %d replicate datasets", r.Replicates)
	if n := outlineOf(r).Model.N; n > 0 {
		fmt.Fprintf(&b, " of %d observations", n)
	}
	labels := estimatorLabels(r)
	fmt.Fprintf(&b, "; each dataset fitted by all %d estimators (%s), so comparisons within a cell are paired", len(labels), strings.Join(labels, ", "))
	if r.Reference != "" {
		fmt.Fprintf(&b, "; reference %s", r.Reference)
	}
	b.WriteString(".")
	return b.String()
}

// ---------------------------------------------------------------------------
// Verdict and results tables.

func newCellView(r *results.Results, c results.Cell) cellView {
	v := results.VerdictOf(r, c)
	cv := cellView{Index: c.Index, Heading: results.Capitalise(results.CellNumber(r, c)), Settings: shortSettings(c.Settings),
		HeavyNote: results.HeavyTailNote(r, c)}
	for _, st := range c.Settings {
		cv.SettingsList = append(cv.SettingsList, shortSetting(st))
	}
	if c.Replicates != int64(r.Replicates) {
		cv.Partial = fmt.Sprintf("%d of %d replicates finished.", c.Replicates, r.Replicates)
	}
	if v.Choice != "" && len(v.Ranking) > 0 {
		best := v.Ranking[0]
		cv.Choice = best.Estimator
		cv.ChoiceIsReference = best.Estimator == r.Reference && strings.HasSuffix(v.Criterion, " "+r.Reference)
		if cv.ChoiceIsReference {
			cv.Score = "×1 (the reference)"
		} else {
			cv.Score = "×" + results.PlusMinus(best.Score, false)
			if best.Worst != "" {
				cv.Score += " (worst: " + best.Worst + ")"
			}
		}
		for _, k := range v.Ranking[1:] {
			s := scoreView{Label: k.Estimator, Score: relativeScore(best, k)}
			if k.Tied {
				cv.Tied = append(cv.Tied, s)
			} else if cv.Next == nil {
				cv.Next = &s
			}
		}
	}
	for _, x := range v.NotRecommended {
		cv.Excluded = append(cv.Excluded, exclusionView{x.Estimator, x.Detail})
	}
	cv.Rows = resultRows(r, c, v)
	return cv
}

// relativeScore formats k's score as a multiple q of best's, "×q ± m",
// with m the MCSE of the difference of the scores over best's score, the
// quantity the verdict's tie rule uses.
func relativeScore(best, k results.Ranked) string {
	sb := float64(best.Score.Value)
	q := float64(k.Score.Value) / sb
	m := math.Hypot(zeroIfNaN(float64(k.Score.MCSE)), zeroIfNaN(float64(best.Score.MCSE))) / sb
	return "×" + results.PlusMinus(results.Measure{Value: results.Num(q), MCSE: results.Num(m)}, false)
}

func zeroIfNaN(x float64) float64 {
	if !finite(x) {
		return 0
	}
	return x
}

// notMeaningful stands in for a measure resting on a variance the
// estimates do not appear to have.
const notMeaningful = "not meaningful"

// resultRows lays out the results table of cell c: a row per estimator ×
// coefficient, with differences from the choice beyond TieMCSE combined
// MCSE marked.
func resultRows(r *results.Results, c results.Cell, v results.Verdict) []resultRow {
	c = withRMSE(c)
	var choice *results.Estimator
	for i := range c.Estimators {
		if c.Estimators[i].Label == v.Choice {
			choice = &c.Estimators[i]
		}
	}
	excluded := map[string]bool{}
	for _, x := range v.NotRecommended {
		excluded[x.Estimator] = true
	}
	var rows []resultRow
	for _, e := range c.Estimators {
		isRef := e.Label == r.Reference
		cv := e.Convergence
		failed := cv.Fits - cv.Converged
		failures := "0"
		if cv.Fits == 0 {
			failures = "—"
		} else if failed > 0 {
			failures = fmt.Sprintf("%d / %d (%s, %s–%s)", failed, cv.Fits, results.Percent(float64(cv.FailureRate.Value)),
				results.Percent(float64(cv.FailureRate.Low)), results.Percent(float64(cv.FailureRate.High)))
		}
		for j, k := range e.Coefficients {
			row := resultRow{First: j == 0, Span: len(e.Coefficients), Label: e.Label, Desc: results.EstimatorDesc(r, e),
				Choice: e.Label == v.Choice, Tied: slices.Contains(v.Tied, e.Label), Reference: isRef, Excluded: excluded[e.Label],
				Coefficient: k.Name, Failures: failures, FailureFlag: failed > 0}
			var ck *results.Coefficient
			if choice != nil && e.Label != choice.Label {
				for i := range choice.Coefficients {
					if choice.Coefficients[i].Name == k.Name {
						ck = &choice.Coefficients[i]
					}
				}
			}
			bias := measureView{Text: results.PlusMinus(k.Bias, true)}
			se := measureView{Text: results.PlusMinus(k.EmpSE, false)}
			rmse := measureView{Text: results.PlusMinus(k.RMSE, false)}
			if k.HeavyTails {
				se.Text, rmse.Text = notMeaningful, notMeaningful
			} else if ck != nil && !ck.HeavyTails {
				mark(&bias, math.Abs(float64(k.Bias.Value)), float64(k.Bias.MCSE), math.Abs(float64(ck.Bias.Value)), float64(ck.Bias.MCSE), "|bias|", v.Choice)
				mark(&se, float64(k.EmpSE.Value), float64(k.EmpSE.MCSE), float64(ck.EmpSE.Value), float64(ck.EmpSE.MCSE), "SE", v.Choice)
				mark(&rmse, float64(k.RMSE.Value), float64(k.RMSE.MCSE), float64(ck.RMSE.Value), float64(ck.RMSE.MCSE), "RMSE", v.Choice)
			}
			ratio := measureView{Text: results.PlusMinus(k.MSERatio, false)}
			eff := measureView{Text: results.PlusMinus(k.RelEff, false)}
			switch {
			case isRef:
				// The reference is not compared with itself.
				ratio = measureView{Text: "reference", Title: "MSE ratios are relative to this estimator"}
				eff = measureView{Text: "reference", Title: "variance efficiencies are relative to this estimator"}
			case k.RelEffHeavyTails || k.HeavyTails:
				ratio.Text, eff.Text = notMeaningful, notMeaningful
			default:
				if t := float64(e.TheoryEfficiency); finite(t) {
					eff.Theory = strconv.FormatFloat(t, 'f', 3, 64)
				}
			}
			cover := measureView{Text: "—", Title: "no intervals"}
			if k.Intervals > 0 {
				cover = measureView{Text: results.PlusMinus(k.Coverage, false)}
			}
			row.Measures = []measureView{bias, se, rmse, ratio, eff, cover}
			rows = append(rows, row)
		}
	}
	return rows
}

// withRMSE returns c with the RMSE formed from the MSE where a file from
// before the RMSE was reported lacks it, as results.VerdictOf does; the
// paired MSE ratio cannot be recovered, so it becomes null.
func withRMSE(c results.Cell) results.Cell {
	ests := make([]results.Estimator, len(c.Estimators))
	for i, e := range c.Estimators {
		e.Coefficients = slices.Clone(e.Coefficients)
		for j := range e.Coefficients {
			k := &e.Coefficients[j]
			if k.RMSE.Value == 0 && k.RMSE.MCSE == 0 && k.MSE.Value != 0 {
				rmse := math.Sqrt(float64(k.MSE.Value))
				k.RMSE = results.Measure{Value: results.Num(rmse), MCSE: k.MSE.MCSE / results.Num(2*rmse)}
				k.MSERatio = results.Measure{Value: results.Num(math.NaN()), MCSE: results.Num(math.NaN())}
			}
		}
		ests[i] = e
	}
	c.Estimators = ests
	return c
}

// mark flags x (MCSE mx) as larger or smaller than the choice's y (MCSE
// my) when they differ by more than TieMCSE·√(mx² + my²). Treating the two
// as independent ignores the pairing within a cell, which usually makes
// them positively correlated, so it marks fewer differences than a paired
// comparison would.
func mark(m *measureView, x, mx, y, my float64, what, choice string) {
	if !finite(x, y) {
		return
	}
	d := x - y
	lim := float64(results.TieMCSE) * math.Hypot(zeroIfNaN(mx), zeroIfNaN(my))
	switch {
	case d > lim:
		m.Class, m.Title = "worse", fmt.Sprintf("%s larger than %s's by more than %d combined MCSE", what, choice, results.TieMCSE)
		m.Text = "▲ " + m.Text
	case -d > lim:
		m.Class, m.Title = "better", fmt.Sprintf("%s smaller than %s's by more than %d combined MCSE", what, choice, results.TieMCSE)
		m.Text = "▼ " + m.Text
	}
}

// ---------------------------------------------------------------------------
// Figures.

// questions are the figure groups, in page order.
var questions = []struct{ id, text string }{
	{QuestionBias, "Is it biased, and when does it break down?"},
	{QuestionAccuracy, "How accurate, and which tuning constant?"},
	{QuestionCoverage, "Do the intervals cover?"},
	{QuestionConvergence, "Do the fits converge, and how fast?"},
	{QuestionFunctions, "What do the estimators do to a residual?"},
}

func groupFigures(r *results.Results, figs []Figure, omitted []Omission) ([]figureGroup, error) {
	prefix := ""
	if base, err := results.SafeName(r.Scenario.Name); err == nil {
		prefix = base + "-"
	}
	var out []figureGroup
	for _, q := range questions {
		g := figureGroup{ID: q.id, Question: q.text}
		for _, f := range figs {
			if f.Question != q.id {
				continue
			}
			if len(f.PNG) == 0 {
				return nil, fmt.Errorf("report: figure %s has no PNG rendering", f.Name)
			}
			cfg, err := png.DecodeConfig(bytes.NewReader(f.PNG))
			if err != nil {
				return nil, fmt.Errorf("report: figure %s: PNG does not decode: %w", f.Name, err)
			}
			fv := figureView{Name: f.Name, Title: f.Title, Caption: f.Caption, Width: cfg.Width, Height: cfg.Height,
				Src:  template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(f.PNG)),
				File: prefix + f.Name + ".svg"}
			if len(f.SVG) > 0 {
				fv.SVG = template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(f.SVG))
			}
			g.Figures = append(g.Figures, fv)
		}
		for _, o := range omitted {
			if o.Question == q.id {
				g.Omitted = append(g.Omitted, o.Reason)
			}
		}
		if len(g.Figures) > 0 || len(g.Omitted) > 0 {
			out = append(out, g)
		}
	}
	return out, nil
}

// ---------------------------------------------------------------------------
// Convergence.

func convergenceRows(r *results.Results) []convergenceRow {
	var rows []convergenceRow
	for _, c := range r.Cells {
		for i, e := range c.Estimators {
			cv := e.Convergence
			row := convergenceRow{First: i == 0, Label: e.Label, Converged: fmt.Sprintf("%d / %d", cv.Converged, cv.Fits),
				ConvergedFlag: cv.Converged < cv.Fits, Mean: "—", Median: "—", Max: "—", Safeguards: "none", Failures: "none"}
			if i == 0 {
				row.Cell = strconv.Itoa(c.Index)
				row.CellTitle = results.SettingsText(c.Settings)
			}
			if cv.MaxIterations > 0 {
				row.Mean = results.PlusMinus(cv.MeanIterations, false)
				row.Median = results.FormatIterations(cv.MedianIterations)
				row.Max = strconv.FormatInt(cv.MaxIterations, 10)
			}
			var guards []string
			if cv.Halvings > 0 {
				guards = append(guards, fmt.Sprintf("%d halvings", cv.Halvings))
			}
			if cv.Fallbacks > 0 {
				guards = append(guards, fmt.Sprintf("%d IRLS fallbacks", cv.Fallbacks))
			}
			if cv.QRSolves > 0 {
				guards = append(guards, fmt.Sprintf("%d QR solves", cv.QRSolves))
			}
			if len(guards) > 0 {
				row.Safeguards = strings.Join(guards, ", ")
			}
			var fails []string
			for _, s := range cv.Statuses {
				if !s.Converged && s.Count > 0 {
					fails = append(fails, fmt.Sprintf("%s: %d (%s, 95%% CI %s–%s)", s.Status, s.Count,
						results.Percent(float64(s.Rate.Value)), results.Percent(float64(s.Rate.Low)), results.Percent(float64(s.Rate.High))))
				}
			}
			if len(fails) > 0 {
				row.Failures, row.FailureFlag = strings.Join(fails, "; "), true
			}
			rows = append(rows, row)
		}
	}
	return rows
}

// ---------------------------------------------------------------------------
// Scenario.

// scenarioText returns the scenario as the report shows it: the file's own
// text when source holds it, otherwise the normalised scenario as YAML.
func scenarioText(r *results.Results, source []byte) (title, note, text string) {
	file := r.Scenario.File
	if file == "" {
		file = "the scenario file"
	}
	if len(bytes.TrimSpace(source)) > 0 {
		return "Scenario file " + file + " (YAML, as written)",
			"The scenario file as it was run, with its own keys and comments. Seed and replicates may have been overridden on the command line: see the provenance.",
			string(source)
	}
	if len(r.Scenario.Normalised) == 0 {
		return "Scenario (not recorded)", "The results do not record the scenario.", ""
	}
	y, err := jsonToYAML(r.Scenario.Normalised)
	if err != nil {
		var pretty bytes.Buffer
		if json.Indent(&pretty, r.Scenario.Normalised, "", "  ") != nil {
			pretty.Reset()
			pretty.Write(r.Scenario.Normalised)
		}
		return "Normalised scenario (JSON)", "The scenario as run, with every default filled in; " + file + " was not at hand.", pretty.String()
	}
	return "Normalised scenario (YAML)", "The scenario as run, with every default filled in (the original file, " + file + ", was not at hand, so its comments and the keys it left to their defaults are not shown).", y
}

// jsonToYAML re-encodes a JSON document as block-style YAML, keeping the
// order of its keys.
func jsonToYAML(doc []byte) (string, error) {
	var n yaml.Node
	if err := yaml.Unmarshal(doc, &n); err != nil {
		return "", err
	}
	var unflow func(*yaml.Node)
	unflow = func(n *yaml.Node) {
		n.Style &^= yaml.FlowStyle
		if n.Kind == yaml.ScalarNode {
			n.Style &^= yaml.DoubleQuotedStyle
		}
		for _, c := range n.Content {
			unflow(c)
		}
	}
	unflow(&n)
	var b bytes.Buffer
	enc := yaml.NewEncoder(&b)
	enc.SetIndent(2)
	if err := enc.Encode(&n); err != nil {
		return "", err
	}
	return b.String(), enc.Close()
}

// ---------------------------------------------------------------------------
// Provenance.

func provenance(r *results.Results) []keyValue {
	p := r.Provenance
	var out []keyValue
	item := func(k, v string) {
		if v == "" {
			v = "—"
		}
		out = append(out, keyValue{k, v})
	}
	item("tool", r.Tool.Name)
	item("version", r.Tool.Version)
	var build []string
	for k, v := range p.Build {
		build = append(build, k+"="+v)
	}
	slices.Sort(build)
	item("build", strings.Join(build, " · "))
	item("Go", p.GoVersion)
	item("OS / architecture", strings.Trim(p.OS+"/"+p.Arch, "/"))
	item("workers", strconv.Itoa(p.Workers))
	item("started", timeText(p.Started))
	finished := timeText(p.Finished)
	if !p.Started.IsZero() && !p.Finished.IsZero() {
		finished += " (" + p.Finished.Sub(p.Started).Round(time.Millisecond).String() + ")"
	}
	item("finished", finished)
	item("scenario", r.Scenario.Name)
	item("scenario file", r.Scenario.File)
	item("scenario hash (SHA-256)", r.Scenario.Hash)
	item("seed", strconv.FormatUint(r.Seed, 10))
	item("replicates per cell", strconv.Itoa(r.Replicates))
	item("cells", strconv.Itoa(len(r.Cells)))
	complete := "yes"
	if !r.Complete {
		complete = "no: stopped early"
	}
	item("complete", complete)
	item("reference estimator", r.Reference)
	if r.ReplicateFile != "" {
		item("replicate file", r.ReplicateFile)
	}
	item("results schema", strconv.Itoa(r.Schema))
	return out
}

func timeText(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format(time.RFC3339)
}
