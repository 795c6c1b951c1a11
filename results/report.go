package results

import (
	"bytes"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"html"
	"image/png"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
)

// cautionSentence is said in every report and summary.
const cautionSentence = "Simulation results hold for the simulated model only; check an estimator on your own data before relying on it for decisions."

// figuresLoadedScript lets a headless browser confirm that every figure
// decoded: it sets data-figures-loaded="ok/total" on <body>. It is wrapped
// in a commented CDATA section so that the page is also well-formed XML.
const figuresLoadedScript = `window.addEventListener('load', function () {
  var imgs = document.querySelectorAll('img.figure');
  var ok = 0;
  imgs.forEach(function (i) { if (i.complete && i.naturalWidth > 0) ok++; });
  document.body.setAttribute('data-figures-loaded', ok + '/' + imgs.length);
});`

// Report section ids, in page order.
const (
	sectionJob         = "job"
	sectionScenario    = "scenario"
	sectionBest        = "best"
	sectionFigures     = "figures"
	sectionConvergence = "convergence"
	sectionProvenance  = "provenance"
)

// reportCSS is the page's only style sheet. It has no external references.
const reportCSS = `
:root { --ink: #1b1f24; --muted: #5b6370; --rule: #d5d9de; --tint: #f3f5f7; --mark: #0072b2; --warn: #9a3d00; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #fff; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Liberation Sans", Arial, sans-serif; }
header, main { max-width: 64rem; margin: 0 auto; padding: 0 1.25rem; }
header { padding-top: 1.5rem; border-bottom: 3px solid var(--mark); padding-bottom: 1rem; }
.kicker { margin: 0; color: var(--muted); font-size: 0.85rem; letter-spacing: 0.06em; text-transform: uppercase; }
h1 { margin: 0.2rem 0 0.6rem; font-size: 1.9rem; }
h2 { margin-top: 2.2rem; padding-bottom: 0.2rem; border-bottom: 1px solid var(--rule); font-size: 1.35rem; }
h3 { margin: 1.4rem 0 0.3rem; font-size: 1.05rem; }
.caution { border-left: 4px solid var(--warn); background: #fff6ef; padding: 0.5rem 0.8rem; }
.incomplete { border-left: 4px solid var(--warn); background: #fff6ef; padding: 0.5rem 0.8rem; font-weight: 600; }
nav ul { list-style: none; padding: 0; margin: 0.6rem 0 0; display: flex; flex-wrap: wrap; gap: 0.4rem 1.2rem; }
nav a { color: var(--mark); text-decoration: none; }
table { border-collapse: collapse; margin: 0.4rem 0 1rem; font-size: 0.9rem; }
th, td { border-bottom: 1px solid var(--rule); padding: 0.25rem 0.7rem 0.25rem 0; text-align: left; vertical-align: top; }
th { color: var(--muted); font-weight: 600; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
.settings { color: var(--muted); margin: 0; font-size: 0.9rem; }
.tie { display: inline-block; padding: 0 0.4rem; border-radius: 0.6rem; background: var(--tint); color: var(--muted); font-size: 0.8rem; }
.flag { color: var(--warn); font-weight: 600; }
pre { background: var(--tint); padding: 0.8rem; overflow-x: auto; font-size: 0.8rem; line-height: 1.35; }
code { font-size: 0.9em; }
figure { margin: 1.2rem 0 2rem; }
figure img { display: block; max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { margin-top: 0.4rem; color: var(--muted); font-size: 0.9rem; }
figcaption strong { color: var(--ink); }
dl { display: grid; grid-template-columns: max-content 1fr; gap: 0.15rem 1.2rem; font-size: 0.9rem; }
dt { color: var(--muted); }
dd { margin: 0; }
footer { max-width: 64rem; margin: 2rem auto; padding: 0 1.25rem; color: var(--muted); font-size: 0.8rem; }
`

// WriteReport writes one self-contained HTML page for r: CSS inline, each
// figure of figs inline as a base64 PNG (with its SVG as a data-URI link),
// and no reference to anything outside the page. Its sections are the job
// (what was simulated, with a caution), the scenario and its sweeps, what
// did best in each cell, the figures, the convergence table and the
// provenance. The page is also well-formed XML.
func WriteReport(w io.Writer, r *Results, figs []Figure) error {
	if r == nil {
		return fmt.Errorf("report: no results")
	}
	b := &strings.Builder{}
	esc := html.EscapeString
	name := r.Scenario.Name
	if name == "" {
		name = "(unnamed scenario)"
	}
	b.WriteString("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n")
	b.WriteString("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n")
	fmt.Fprintf(b, "<title>%s · rhomark report</title>\n", esc(name))
	b.WriteString("<style>" + reportCSS + "</style>\n</head>\n<body>\n")

	// The job.
	fmt.Fprintf(b, "<header id=\"%s\">\n<p class=\"kicker\">rhomark simulation report</p>\n<h1>%s</h1>\n", sectionJob, esc(name))
	fmt.Fprintf(b, "<p>%s</p>\n", esc(jobStatement(r)))
	fmt.Fprintf(b, "<p class=\"caution\"><strong>%s</strong></p>\n", esc(cautionSentence))
	if !r.Complete {
		b.WriteString("<p class=\"incomplete\">This run stopped early: some cells hold fewer replicates than were asked for (each cell says how many finished).</p>\n")
	}
	b.WriteString("<nav><ul>\n")
	for _, s := range []struct{ id, label string }{
		{sectionScenario, "Scenario"}, {sectionBest, "What did best"}, {sectionFigures, "Figures"},
		{sectionConvergence, "Convergence"}, {sectionProvenance, "Provenance"},
	} {
		fmt.Fprintf(b, "<li><a href=\"#%s\">%s</a></li>\n", s.id, s.label)
	}
	b.WriteString("</ul></nav>\n</header>\n<main>\n")

	writeScenarioSection(b, r)
	writeBestSection(b, r)
	if err := writeFiguresSection(b, r, figs); err != nil {
		return err
	}
	writeConvergenceSection(b, r)
	writeProvenanceSection(b, r)

	b.WriteString("</main>\n<footer>Written by ")
	b.WriteString(esc(toolName(r)))
	b.WriteString(". Every measure is shown as value ± Monte Carlo standard error, to the digits that error justifies.</footer>\n")
	b.WriteString("<script>//<![CDATA[\n" + figuresLoadedScript + "\n//]]></script>\n</body>\n</html>\n")
	_, err := io.WriteString(w, b.String())
	return err
}

// toolName is "rhomark 0.1.0" or whatever r records.
func toolName(r *Results) string {
	s := strings.TrimSpace(r.Tool.Name + " " + r.Tool.Version)
	if s == "" {
		return "rhomark"
	}
	return s
}

// scenarioOutline holds the few fields of the normalised scenario that the
// report quotes; it tolerates their absence.
type scenarioOutline struct {
	About string `json:"about"`
	Model struct {
		N int `json:"n"`
	} `json:"model"`
}

func outlineOf(r *Results) scenarioOutline {
	var o scenarioOutline
	if len(r.Scenario.Normalised) > 0 {
		_ = json.Unmarshal(r.Scenario.Normalised, &o) // best effort: the report works without it
	}
	return o
}

// estimatorLabels lists the estimators of r in scenario order.
func estimatorLabels(r *Results) []string {
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

// jobStatement says in one paragraph what rhomark simulated.
func jobStatement(r *Results) string {
	o := outlineOf(r)
	sw := sweepsOf(r)
	var b strings.Builder
	fmt.Fprintf(&b, "rhomark simulated the scenario %q: ", r.Scenario.Name)
	cells := fmt.Sprintf("%d cell", len(r.Cells))
	if len(r.Cells) != 1 {
		cells += "s"
	}
	switch len(sw) {
	case 0:
		b.WriteString(cells)
	case 1:
		fmt.Fprintf(&b, "%s, one per value of %s", cells, sw[0].path)
	default:
		fmt.Fprintf(&b, "%s, every combination of %d swept settings", cells, len(sw))
	}
	fmt.Fprintf(&b, ", with %d replicate datasets per cell", r.Replicates)
	if o.Model.N > 0 {
		fmt.Fprintf(&b, " of %d observations each", o.Model.N)
	}
	labels := estimatorLabels(r)
	fmt.Fprintf(&b, ". It fitted every dataset with each of %d estimators (%s), so comparisons within a cell are paired, ", len(labels), strings.Join(labels, ", "))
	b.WriteString("and reports the bias, empirical standard error, RMSE, MSE ratio and variance efficiency")
	if r.Reference != "" {
		fmt.Fprintf(&b, " relative to %s", r.Reference)
	}
	b.WriteString(", interval coverage and solver behaviour of each, every figure with its Monte Carlo standard error (MCSE).")
	return b.String()
}

func writeScenarioSection(b *strings.Builder, r *Results) {
	esc := html.EscapeString
	fmt.Fprintf(b, "<section id=\"%s\">\n<h2>The scenario</h2>\n", sectionScenario)
	if about := strings.TrimSpace(outlineOf(r).About); about != "" {
		fmt.Fprintf(b, "<p>%s</p>\n", esc(about))
	}
	b.WriteString("<h3>Sweeps</h3>\n")
	sw := sweepsOf(r)
	if len(sw) == 0 {
		b.WriteString("<p>Nothing is swept: the scenario has a single cell.</p>\n")
	} else {
		fmt.Fprintf(b, "<p>The %d cells are the combinations of these values.</p>\n", len(r.Cells))
		b.WriteString("<table>\n<thead><tr><th>swept field</th><th>values</th></tr></thead>\n<tbody>\n")
		for _, s := range sw {
			fmt.Fprintf(b, "<tr><td><code>%s</code></td><td>%s</td></tr>\n", esc(s.path), esc(strings.Join(s.values, ", ")))
		}
		b.WriteString("</tbody>\n</table>\n")
	}
	b.WriteString("<h3>Normalised scenario</h3>\n<p>The scenario as run, with every default filled in (JSON).</p>\n")
	var pretty bytes.Buffer
	if len(r.Scenario.Normalised) == 0 {
		b.WriteString("<p>(not recorded)</p>\n")
	} else {
		if err := json.Indent(&pretty, r.Scenario.Normalised, "", "  "); err != nil {
			pretty.Reset()
			pretty.Write(r.Scenario.Normalised)
		}
		fmt.Fprintf(b, "<pre>%s</pre>\n", esc(pretty.String()))
	}
	b.WriteString("</section>\n")
}

// ---------------------------------------------------------------------------
// What did best.

// heavyTailNote says which measures of cell c are not meaningful because
// the estimates behind them are heavy-tailed (Coefficient.HeavyTails,
// RelEffHeavyTails), or returns "" if none are.
func heavyTailNote(r *Results, c Cell) string {
	var se, eff []string
	for _, e := range c.Estimators {
		var a, b []string
		for _, k := range e.Coefficients {
			if k.HeavyTails {
				a = append(a, k.Name)
			}
			if k.RelEffHeavyTails && !k.HeavyTails && e.Label != r.Reference {
				b = append(b, k.Name)
			}
		}
		if len(a) > 0 {
			se = append(se, e.Label+" ("+strings.Join(a, ", ")+")")
		}
		if len(b) > 0 {
			eff = append(eff, e.Label+" ("+strings.Join(b, ", ")+")")
		}
	}
	if len(se) == 0 && len(eff) == 0 {
		return ""
	}
	var parts []string
	if len(se) > 0 {
		parts = append(parts, "the emp. SE, the RMSE, the MSE ratio, the variance efficiency and every MCSE resting on a variance of "+strings.Join(se, ", "))
	}
	if len(eff) > 0 {
		parts = append(parts, "the MSE ratio and variance efficiency against a heavy-tailed reference of "+strings.Join(eff, ", "))
	}
	return "Heavy tails: a few replicates carry most of the spread, as when the estimates have no finite variance, so " +
		strings.Join(parts, "; and ") + " are not meaningful; such estimators are not recommended."
}

// percent formats a proportion as a percentage with two significant digits.
func percent(p float64) string {
	v := p * 100
	switch {
	case !finite(v):
		return "—"
	case v == 0:
		return "0%"
	case v >= 10:
		return strconv.FormatFloat(v, 'f', 0, 64) + "%"
	}
	return strconv.FormatFloat(v, 'g', 2, 64) + "%"
}

func writeBestSection(b *strings.Builder, r *Results) {
	esc := html.EscapeString
	fmt.Fprintf(b, "<section id=\"%s\">\n<h2>What did best</h2>\n", sectionBest)
	b.WriteString("<p>For each cell, the estimator to choose and how sure that is. Estimators are ranked by RMSE, which counts bias and spread together, never by variance efficiency alone: ")
	fmt.Fprintf(b, "the score is the RMSE on an estimator's worst coefficient as a multiple of %s's on the same datasets (×0.5: half the error), ± MCSE. ", esc(r.Reference))
	fmt.Fprintf(b, "Another estimator is marked as a <span class=\"tie\">tie</span> when it is within %d combined MCSE (√(MCSE₁² + MCSE₂²)). ", TieMCSE)
	fmt.Fprintf(b, "Measures use the fits that converged, so an estimator whose fits failed more than %s of the time is not recommended.</p>\n", esc(percent(MaxFailureRate)))
	if g, ok := largestTheoryGap(r); ok {
		fmt.Fprintf(b, "<p>Against the asymptotic theory at the normal model, the largest gap is %s MCSE: %s.</p>\n", esc(strconv.FormatFloat(math.Abs(g.gap), 'f', 1, 64)), esc(g.where(r)))
	}
	for _, c := range r.Cells {
		fmt.Fprintf(b, "<h3 id=\"best-cell-%d\">%s</h3>\n", c.Index, esc(capitalise(cellNumber(r, c))))
		if len(c.Settings) > 0 {
			fmt.Fprintf(b, "<p class=\"settings\">%s</p>\n", esc(settingsText(c.Settings)))
		}
		if c.Replicates != int64(r.Replicates) {
			fmt.Fprintf(b, "<p class=\"flag\">%d of %d replicates finished.</p>\n", c.Replicates, r.Replicates)
		}
		if note := heavyTailNote(r, c); note != "" {
			fmt.Fprintf(b, "<p class=\"flag\">%s</p>\n", esc(note))
		}
		rows := verdictRows(r, c)
		if len(rows) == 0 {
			b.WriteString("<p>Nothing to compare.</p>\n")
			continue
		}
		b.WriteString("<table>\n<thead><tr><th>measure</th><th>coefficient</th><th>estimator</th><th>value</th><th>others</th></tr></thead>\n<tbody>\n")
		for _, row := range rows {
			coef := row.coefficient
			if coef == "" {
				coef = "—"
			}
			other := esc(row.others)
			if len(row.tied) > 0 {
				other = "<span class=\"tie\">tie</span> with " + codeList(row.tied)
			}
			fmt.Fprintf(b, "<tr><td>%s</td><td>%s</td><td><code>%s</code></td><td class=\"num\">%s</td><td>%s</td></tr>\n",
				esc(row.what), esc(coef), esc(row.best), esc(row.value), other)
		}
		b.WriteString("</tbody>\n</table>\n")
	}
	b.WriteString("</section>\n")
}

// codeList renders labels as escaped <code> elements separated by commas.
func codeList(labels []string) string {
	parts := make([]string, len(labels))
	for i, l := range labels {
		parts[i] = "<code>" + html.EscapeString(l) + "</code>"
	}
	return strings.Join(parts, ", ")
}

// theoryGap locates a gap between simulation and asymptotic theory.
type theoryGap struct {
	gap         float64
	cell        int
	estimator   string
	coefficient string
	relEff      Measure
	theory      float64
}

func (g theoryGap) where(r *Results) string {
	return fmt.Sprintf("cell %d, %s, %s: simulated efficiency %s against %s from theory",
		g.cell, g.estimator, g.coefficient, pm(g.relEff, false), strconv.FormatFloat(g.theory, 'f', 4, 64))
}

// largestTheoryGap finds the coefficient whose simulated efficiency lies
// farthest, in MCSE units, from the asymptotic efficiency.
func largestTheoryGap(r *Results) (theoryGap, bool) {
	var best theoryGap
	found := false
	for _, c := range r.Cells {
		for _, e := range c.Estimators {
			if e.Label == r.Reference || !finite(float64(e.TheoryEfficiency)) {
				continue
			}
			for _, k := range e.Coefficients {
				g := float64(k.TheoryGap)
				if !finite(g) {
					continue
				}
				if !found || math.Abs(g) > math.Abs(best.gap) {
					best = theoryGap{gap: g, cell: c.Index, estimator: e.Label, coefficient: k.Name, relEff: k.RelEff, theory: float64(e.TheoryEfficiency)}
					found = true
				}
			}
		}
	}
	return best, found
}

// ---------------------------------------------------------------------------
// Figures.

func writeFiguresSection(b *strings.Builder, r *Results, figs []Figure) error {
	esc := html.EscapeString
	fmt.Fprintf(b, "<section id=\"%s\">\n<h2>Figures</h2>\n", sectionFigures)
	if len(figs) == 0 {
		b.WriteString("<p>No figures: the results hold nothing to draw.</p>\n</section>\n")
		return nil
	}
	fmt.Fprintf(b, "<p>%d figures. Each estimator keeps its colour, marker and line pattern in every figure. Each caption links the figure as SVG.</p>\n", len(figs))
	for _, f := range figs {
		if len(f.PNG) == 0 {
			return fmt.Errorf("report: figure %s has no PNG rendering", f.Name)
		}
		cfg, err := png.DecodeConfig(bytes.NewReader(f.PNG))
		if err != nil {
			return fmt.Errorf("report: figure %s: PNG does not decode: %w", f.Name, err)
		}
		size := fmt.Sprintf(" width=\"%d\" height=\"%d\"", cfg.Width, cfg.Height)
		fmt.Fprintf(b, "<figure id=\"fig-%s\">\n", esc(f.Name))
		fmt.Fprintf(b, "<img class=\"figure\" src=\"data:image/png;base64,%s\" alt=\"%s\"%s/>\n",
			base64.StdEncoding.EncodeToString(f.PNG), esc(f.Title), size)
		fmt.Fprintf(b, "<figcaption><strong>%s.</strong> %s", esc(f.Title), esc(f.Caption))
		if len(f.SVG) > 0 {
			file := f.Name + ".svg"
			if base, err := SafeName(r.Scenario.Name); err == nil {
				file = base + "-" + file
			}
			fmt.Fprintf(b, " <a href=\"data:image/svg+xml;base64,%s\" download=\"%s\">SVG</a>",
				base64.StdEncoding.EncodeToString(f.SVG), esc(file))
		}
		b.WriteString("</figcaption>\n</figure>\n")
	}
	b.WriteString("</section>\n")
	return nil
}

// ---------------------------------------------------------------------------
// Convergence.

func writeConvergenceSection(b *strings.Builder, r *Results) {
	esc := html.EscapeString
	fmt.Fprintf(b, "<section id=\"%s\">\n<h2>Convergence</h2>\n", sectionConvergence)
	b.WriteString("<p>How the fits ended, per cell and estimator. Iterations are counted over all fits; safeguards are Newton step halvings, IRLS steps taken in place of Newton steps, and weighted solves that fell back from Cholesky to QR. Failed fits are listed by status with a Wilson 95% interval for the rate.</p>\n")
	b.WriteString("<table>\n<thead><tr><th>cell</th><th>estimator</th><th>converged / fits</th><th>mean iterations</th><th>median</th><th>max</th><th>safeguards</th><th>failures</th></tr></thead>\n<tbody>\n")
	for _, c := range r.Cells {
		for i, e := range c.Estimators {
			cell := ""
			if i == 0 {
				cell = fmt.Sprintf("%d", c.Index)
			}
			cv := e.Convergence
			conv := fmt.Sprintf("%d / %d", cv.Converged, cv.Fits)
			if cv.Converged < cv.Fits {
				conv = "<span class=\"flag\">" + conv + "</span>"
			}
			mean, median, maxIt := "—", "—", "—"
			if cv.MaxIterations > 0 {
				mean = esc(pm(cv.MeanIterations, false))
				median = esc(strconv.FormatFloat(float64(cv.MedianIterations), 'g', -1, 64))
				maxIt = strconv.FormatInt(cv.MaxIterations, 10)
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
			safeguards := "none"
			if len(guards) > 0 {
				safeguards = strings.Join(guards, ", ")
			}
			var fails []string
			for _, s := range cv.Statuses {
				if isFailure(s) && s.Count > 0 {
					fails = append(fails, fmt.Sprintf("%s: %d (%s, 95%% CI %s–%s)", s.Status, s.Count,
						percent(float64(s.Rate.Value)), percent(float64(s.Rate.Low)), percent(float64(s.Rate.High))))
				}
			}
			failures := "none"
			if len(fails) > 0 {
				failures = "<span class=\"flag\">" + esc(strings.Join(fails, "; ")) + "</span>"
			}
			title := ""
			if i == 0 && len(c.Settings) > 0 {
				title = fmt.Sprintf(" title=\"%s\"", esc(settingsText(c.Settings)))
			}
			fmt.Fprintf(b, "<tr><td%s>%s</td><td><code>%s</code></td><td class=\"num\">%s</td><td class=\"num\">%s</td><td class=\"num\">%s</td><td class=\"num\">%s</td><td>%s</td><td>%s</td></tr>\n",
				title, cell, esc(e.Label), conv, mean, median, maxIt, esc(safeguards), failures)
		}
	}
	b.WriteString("</tbody>\n</table>\n</section>\n")
}

// ---------------------------------------------------------------------------
// Provenance.

func writeProvenanceSection(b *strings.Builder, r *Results) {
	esc := html.EscapeString
	p := r.Provenance
	fmt.Fprintf(b, "<section id=\"%s\">\n<h2>Provenance</h2>\n<p>What is needed to reproduce this run.</p>\n<dl>\n", sectionProvenance)
	item := func(k, v string) {
		if v == "" {
			v = "—"
		}
		fmt.Fprintf(b, "<dt>%s</dt><dd>%s</dd>\n", esc(k), esc(v))
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
	b.WriteString("</dl>\n</section>\n")
}

func timeText(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format(time.RFC3339)
}
