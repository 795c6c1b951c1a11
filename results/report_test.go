package results

import (
	"bytes"
	"encoding/base64"
	"encoding/xml"
	"errors"
	"image/png"
	"io"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
)

// fixtureFigures renders each fixture's figures once for all report tests.
var fixtureFigures = struct {
	sync.Mutex
	figs map[string][]Figure
}{figs: map[string][]Figure{}}

func figuresOf(t *testing.T, name string) (*Results, []Figure) {
	t.Helper()
	r := readFixture(t, name)
	fixtureFigures.Lock()
	defer fixtureFigures.Unlock()
	figs, ok := fixtureFigures.figs[name]
	if !ok {
		var err error
		figs, err = Figures(r)
		if err != nil {
			t.Fatal(err)
		}
		fixtureFigures.figs[name] = figs
	}
	return r, figs
}

// page is what the strict XML walk of a report finds.
type page struct {
	elements map[string]int      // element name → count
	ids      []string            // every id attribute
	imgs     []map[string]string // attributes of each <img>
	links    []string            // every src and href
	title    string
	figures  int // <figure> elements with a <figcaption> inside
	text     string
}

// parsePage walks the report as strict XML (the report promises to be
// well-formed) and collects its structure.
func parsePage(t *testing.T, doc []byte) page {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(doc))
	dec.Strict = true
	p := page{elements: map[string]int{}}
	var stack []string
	var text strings.Builder
	inFigure, captioned := false, false
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("report is not well-formed: %v", err)
		}
		switch tk := tok.(type) {
		case xml.StartElement:
			name := tk.Name.Local
			stack = append(stack, name)
			p.elements[name]++
			attrs := map[string]string{}
			for _, a := range tk.Attr {
				attrs[a.Name.Local] = a.Value
				switch a.Name.Local {
				case "id":
					p.ids = append(p.ids, a.Value)
				case "src", "href":
					p.links = append(p.links, a.Value)
				}
			}
			switch name {
			case "img":
				p.imgs = append(p.imgs, attrs)
			case "figure":
				inFigure, captioned = true, false
			case "figcaption":
				captioned = captioned || inFigure
			}
		case xml.EndElement:
			if tk.Name.Local == "figure" {
				if captioned {
					p.figures++
				}
				inFigure = false
			}
			stack = stack[:len(stack)-1]
		case xml.CharData:
			if len(stack) > 0 && stack[len(stack)-1] == "title" {
				p.title += string(tk)
			}
			if len(stack) > 0 && stack[len(stack)-1] != "script" && stack[len(stack)-1] != "style" {
				text.Write(tk)
			}
		}
	}
	p.text = text.String()
	return p
}

func TestWriteReportFromFixtures(t *testing.T) {
	cases := []struct {
		fixture string
		// mentions are texts the page must show, taken from the fixture's
		// own definition (see readFixture), not from the report.
		mentions []string
	}{
		{"bench-faults", []string{"contamination.spikes.fraction", "contamination.mislabelled.fraction", "bisquare"}},
		{"bench-breakdown", []string{"contamination.mislabelled.at", "iteration-limit", "bisquare-s"}},
		{"bench-tuning", []string{"estimators.huber.tuning", "0.75, 1.345, 2.5"}},
	}
	for _, c := range cases {
		t.Run(c.fixture, func(t *testing.T) {
			r, figs := figuresOf(t, c.fixture)
			var buf bytes.Buffer
			if err := WriteReport(&buf, r, figs); err != nil {
				t.Fatal(err)
			}
			doc := buf.Bytes()
			p := parsePage(t, doc)
			for _, el := range []string{"html", "head", "body", "title", "style", "script"} {
				if p.elements[el] != 1 {
					t.Errorf("%d <%s> elements, want 1", p.elements[el], el)
				}
			}
			if !strings.Contains(p.title, r.Scenario.Name) {
				t.Errorf("title %q does not name the scenario", p.title)
			}
			for _, id := range []string{"job", "scenario", "best", "figures", "convergence", "provenance"} {
				if !slices.Contains(p.ids, id) {
					t.Errorf("section id %q missing", id)
				}
			}
			// One figure image per figure, each a PNG data URI that decodes.
			if len(p.imgs) != len(figs) || p.figures != len(figs) {
				t.Errorf("%d <img>, %d captioned <figure>, want %d each", len(p.imgs), p.figures, len(figs))
			}
			for i, img := range p.imgs {
				if img["class"] != "figure" {
					t.Errorf("img %d class %q, want figure", i, img["class"])
				}
				const prefix = "data:image/png;base64,"
				src := img["src"]
				if !strings.HasPrefix(src, prefix) {
					t.Errorf("img %d src does not start with %s", i, prefix)
					continue
				}
				raw, err := base64.StdEncoding.DecodeString(src[len(prefix):])
				if err != nil {
					t.Errorf("img %d: base64: %v", i, err)
					continue
				}
				pic, err := png.Decode(bytes.NewReader(raw))
				if err != nil {
					t.Errorf("img %d: PNG: %v", i, err)
					continue
				}
				if s := pic.Bounds().Size(); s.X != figurePixelsX || s.Y != figurePixelsY {
					t.Errorf("img %d is %v", i, s)
				}
			}
			// Nothing outside the page: links are data URIs or in-page anchors.
			svgLinks := 0
			for _, l := range p.links {
				switch {
				case strings.HasPrefix(l, "#"), strings.HasPrefix(l, "data:image/png;base64,"):
				case strings.HasPrefix(l, "data:image/svg+xml;base64,"):
					svgLinks++
				default:
					t.Errorf("link %.60q points outside the page", l)
				}
			}
			if svgLinks != len(figs) {
				t.Errorf("%d SVG links, want one per figure (%d)", svgLinks, len(figs))
			}
			if bytes.Contains(doc, []byte("http://")) || bytes.Contains(doc, []byte("https://")) {
				t.Error("report contains an http(s) URL")
			}
			if !strings.Contains(p.text, "Simulation results hold for the simulated model only; check an estimator on your own data before relying on it for decisions.") {
				t.Error("caution sentence missing")
			}
			if !bytes.Contains(doc, []byte(figuresLoadedScript)) || !bytes.Contains(doc, []byte("data-figures-loaded")) {
				t.Error("figure-load script missing")
			}
			for _, m := range append(c.mentions, r.Scenario.Hash, "seed") {
				if !strings.Contains(p.text, m) {
					t.Errorf("page does not mention %q", m)
				}
			}
		})
	}
}

// TestWriteReportEscapes feeds text with markup characters through every
// place the report quotes results text; the page must stay well-formed and
// show the text, not obey it.
func TestWriteReportEscapes(t *testing.T) {
	r := handResults(false)
	r.Scenario.Name = `bench <b>&"x"`
	r.Scenario.Normalised = []byte(`{"about": "spikes <script>alert(1)</script> & drift", "model": {"n": 20}}`)
	r.Cells[0].Estimators[1].Label = `hub<er>&`
	r.Cells[0].Settings[0].Value = `0 </td>`
	r.Provenance.Build = map[string]string{"vcs.revision": `<i>abc</i>`}
	var buf bytes.Buffer
	if err := WriteReport(&buf, r, nil); err != nil {
		t.Fatal(err)
	}
	p := parsePage(t, buf.Bytes())
	for _, want := range []string{`bench <b>&"x"`, "spikes <script>alert(1)</script> & drift", `hub<er>&`, `0 </td>`, `<i>abc</i>`} {
		if !strings.Contains(p.text, want) {
			t.Errorf("page text lacks %q", want)
		}
	}
	if p.elements["b"] != 0 || p.elements["i"] != 0 || p.elements["script"] != 1 {
		t.Errorf("markup from results text became elements: %v", p.elements)
	}
	if !slices.Contains(p.ids, "figures") || p.elements["img"] != 0 {
		t.Error("without figures the section should be there and hold no image")
	}
}

func TestWriteReportIncomplete(t *testing.T) {
	r := handResults(false)
	r.Complete = false
	r.Cells[2].Replicates = 40
	var html, md bytes.Buffer
	if err := WriteReport(&html, r, nil); err != nil {
		t.Fatal(err)
	}
	if err := WriteMarkdownSummary(&md, r); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(html.String(), "stopped early") || !strings.Contains(html.String(), "40 of 100 replicates") {
		t.Error("report does not say the run stopped early and how far cell 3 got")
	}
	if !strings.Contains(md.String(), "incomplete") || !strings.Contains(md.String(), "40 of 100 replicates") {
		t.Error("summary does not say the run stopped early and how far cell 3 got")
	}
}

// TestBestSectionUsesVerdict: the report and the summary show the verdict,
// here of the hand-built results (written without RMSE, as older files
// were, so it is formed from the MSE): in cell 1 huber's bias is a quarter
// of least squares' with the same spread, so huber has the smaller RMSE and
// |bias| and is the choice; least squares is never shown ranked against
// itself.
func TestBestSectionUsesVerdict(t *testing.T) {
	r := handResults(false)
	for i := range r.Cells {
		for j := range r.Cells[i].Estimators {
			for k := range r.Cells[i].Estimators[j].Coefficients {
				c := &r.Cells[i].Estimators[j].Coefficients[k]
				b, s := float64(c.Bias.Value), float64(c.EmpSE.Value)
				c.MSE = Measure{Value: Num(b*b + s*s), MCSE: Num(0.01 * (b*b + s*s))}
			}
		}
	}
	rows := verdictRows(r, r.Cells[1])
	type key struct{ what, coef string }
	got := map[key]verdictRow{}
	for _, row := range rows {
		got[key{row.what, row.coefficient}] = row
	}
	if row := got[key{"smallest |bias|", "intercept"}]; row.best != "huber" || len(row.tied) != 0 {
		t.Errorf("intercept bias: %+v, want huber clearly ahead", row)
	}
	if row := got[key{"smallest RMSE", "intercept"}]; row.best != "huber" {
		t.Errorf("intercept RMSE: %+v, want huber", row)
	}
	if len(rows) == 0 || rows[0].best != "huber" || !strings.HasPrefix(rows[0].what, "choice") {
		t.Errorf("first row %+v, want the choice, huber", rows)
	}
	var html, md strings.Builder
	if err := WriteReport(&html, r, nil); err != nil {
		t.Fatal(err)
	}
	if err := WriteMarkdownSummary(&md, r); err != nil {
		t.Fatal(err)
	}
	for what, out := range map[string]string{"report": html.String(), "summary": md.String()} {
		if !strings.Contains(out, "smallest RMSE") || !strings.Contains(out, "choice") {
			t.Errorf("%s does not show the verdict", what)
		}
		if strings.Contains(out, "ls</code></td><td class=\"num\">1 ± 0") || strings.Contains(out, "`ls` 1 ± 0") {
			t.Errorf("%s ranks ls against itself", what)
		}
	}
}

func TestWriteMarkdownSummary(t *testing.T) {
	cases := []struct {
		fixture  string
		headings []string
		mentions []string
	}{
		{"bench-faults", []string{"# rhomark summary: bench-faults", "## What did best", "## Convergence problems"},
			[]string{"None: every fit ended with a usable solution."}},
		{"bench-breakdown", []string{"# rhomark summary: bench-breakdown", "## What did best", "## Convergence problems", "## Simulation against theory"},
			[]string{"iteration-limit", "Largest |theory gap|"}},
		{"bench-tuning", []string{"# rhomark summary: bench-tuning", "## Tuning study: `huber`, `estimators.huber.tuning`", "## What did best", "## Convergence problems", "## Simulation against theory"},
			[]string{"None: every fit ended with a usable solution.", "Largest |theory gap|"}},
	}
	for _, c := range cases {
		t.Run(c.fixture, func(t *testing.T) {
			r := readFixture(t, c.fixture)
			var buf bytes.Buffer
			if err := WriteMarkdownSummary(&buf, r); err != nil {
				t.Fatal(err)
			}
			md := buf.String()
			var heads []string
			for _, line := range strings.Split(md, "\n") {
				if strings.HasPrefix(line, "#") {
					heads = append(heads, line)
				}
			}
			if !slices.Equal(heads, c.headings) {
				t.Errorf("headings %q, want %q", heads, c.headings)
			}
			for _, m := range append(c.mentions, cautionSentence, "seed "+strconv.FormatUint(r.Seed, 10), "16 replicates per cell", "complete") {
				if !strings.Contains(md, m) {
					t.Errorf("summary lacks %q", m)
				}
			}
			if n := strings.Count(md, "**Cell "); n != min(len(r.Cells), markdownMaxCells) {
				t.Errorf("%d cell blocks, want %d", n, min(len(r.Cells), markdownMaxCells))
			}
		})
	}
}

func TestMarkdownEscaping(t *testing.T) {
	cases := []struct{ in, want string }{
		{"a_b*c", `a\_b\*c`},
		{"x|y", `x\|y`},
		{"two\nlines", "two lines"},
	}
	for _, c := range cases {
		if got := mdText(c.in); got != c.want {
			t.Errorf("mdText(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	codes := []struct{ in, want string }{
		{"huber", "`huber`"},
		{"a`b", "`` a`b ``"},
	}
	for _, c := range codes {
		if got := mdCode(c.in); got != c.want {
			t.Errorf("mdCode(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

// TestReportOfEmptyResults: a results value with no cells (a run stopped
// before any replicate) still gives a well-formed page and a summary.
func TestReportOfEmptyResults(t *testing.T) {
	r := &Results{Schema: SchemaVersion, Scenario: ScenarioInfo{Name: "bench-empty"}, Replicates: 10}
	var html, md bytes.Buffer
	if err := WriteReport(&html, r, nil); err != nil {
		t.Fatal(err)
	}
	p := parsePage(t, html.Bytes())
	for _, id := range []string{"job", "scenario", "best", "figures", "convergence", "provenance"} {
		if !slices.Contains(p.ids, id) {
			t.Errorf("section id %q missing", id)
		}
	}
	if err := WriteMarkdownSummary(&md, r); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(md.String(), "# rhomark summary: bench-empty\n") || !strings.Contains(md.String(), "incomplete") {
		t.Errorf("summary of empty results:\n%s", md.String())
	}
	if err := WriteReport(&html, nil, nil); err == nil {
		t.Error("WriteReport(nil) gave no error")
	}
	if err := WriteMarkdownSummary(&md, nil); err == nil {
		t.Error("WriteMarkdownSummary(nil) gave no error")
	}
}

// TestTheoryGapCellNumber: the largest theory gap is located by the cell's
// own number, the one --cell takes.
func TestTheoryGapCellNumber(t *testing.T) {
	coef := func(gap float64) Coefficient { return Coefficient{Name: "x", TheoryGap: Num(gap)} }
	r := &Results{Reference: "ls", Cells: []Cell{
		{Index: 0, Estimators: []Estimator{{Label: "huber", TheoryEfficiency: 0.95, Coefficients: []Coefficient{coef(-3.9)}}}},
		{Index: 1, Estimators: []Estimator{{Label: "huber", TheoryEfficiency: 0.95, Coefficients: []Coefficient{coef(1.2)}}}},
	}}
	g, ok := largestTheoryGap(r)
	if !ok || !strings.HasPrefix(g.where(r), "cell 0, huber, x") {
		t.Errorf("largest gap at %q, want cell 0", g.where(r))
	}
}
