package report

import (
	"bytes"
	"encoding/base64"
	"encoding/xml"
	"errors"
	"image/png"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/rhomark/rhomark/results"
)

// fixtureFigures renders each fixture's figures once for all report tests.
var fixtureFigures = struct {
	sync.Mutex
	figs map[string][]Figure
}{figs: map[string][]Figure{}}

func figuresOf(t *testing.T, name string) (*results.Results, []Figure) {
	t.Helper()
	r := readFixture(t, name)
	fixtureFigures.Lock()
	defer fixtureFigures.Unlock()
	figs, ok := fixtureFigures.figs[name]
	if !ok {
		var err error
		figs, _, err = Figures(r)
		if err != nil {
			t.Fatal(err)
		}
		fixtureFigures.figs[name] = figs
	}
	return r, figs
}

// parsedPage is what the strict XML walk of a report finds.
type parsedPage struct {
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
func parsePage(t *testing.T, doc []byte) parsedPage {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(doc))
	dec.Strict = true
	p := parsedPage{elements: map[string]int{}}
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

// writePage renders r with figs (and no scenario source) and parses it.
func writePage(t *testing.T, in Input) (parsedPage, []byte) {
	t.Helper()
	var buf bytes.Buffer
	if err := Write(&buf, in); err != nil {
		t.Fatal(err)
	}
	return parsePage(t, buf.Bytes()), buf.Bytes()
}

// sectionOrder is the order the report promises: results first.
var sectionOrder = []string{"job", "verdict", "results", "figures", "convergence", "scenario", "provenance"}

func TestWriteReportFromFixtures(t *testing.T) {
	cases := []struct {
		fixture string
		// mentions are texts the page must show, taken from the fixture's
		// own definition (see readFixture), not from the report.
		mentions []string
	}{
		{"bench-faults", []string{"contamination.spikes.fraction", "contamination.mislabelled.fraction", "bisquare"}},
		{"bench-breakdown", []string{"contamination.mislabelled.at", "iteration-limit", "bisquare-s"}},
		{"bench-tuning", []string{"estimators.huber.tuning", "0.75, 1.345, 2.5", "Which tuning constant"}},
	}
	for _, c := range cases {
		t.Run(c.fixture, func(t *testing.T) {
			r, figs := figuresOf(t, c.fixture)
			_, omitted, _ := Figures(r)
			p, doc := writePage(t, Input{Results: r, Figures: figs, Omitted: omitted})
			for _, el := range []string{"html", "head", "body", "title", "style", "script", "details"} {
				if p.elements[el] != 1 {
					t.Errorf("%d <%s> elements, want 1", p.elements[el], el)
				}
			}
			if !strings.Contains(p.title, r.Scenario.Name) {
				t.Errorf("title %q does not name the scenario", p.title)
			}
			// Sections in order: the verdict and the results tables
			// before any figure, the scenario after them.
			last := -1
			for _, id := range sectionOrder {
				i := slices.Index(p.ids, id)
				if i < 0 {
					t.Errorf("section id %q missing", id)
					continue
				}
				if i < last {
					t.Errorf("section %q out of order (ids %v)", id, p.ids)
				}
				last = i
			}
			// A tuning sweep leads with its recommendation, before the
			// verdict; other runs have none.
			rec, verdict := slices.Index(p.ids, "recommendation"), slices.Index(p.ids, "verdict")
			if sums, _ := results.TuningSummaries(r); len(sums) > 0 {
				if rec < 0 || rec > verdict || !bytes.Contains(doc, []byte(`<table class="tuning">`)) || !bytes.Contains(doc, []byte(sums[0].Lines[0])) {
					t.Errorf("the tuning recommendation is missing or after the verdict (ids %v)", p.ids)
				}
			} else if rec >= 0 {
				t.Errorf("a recommendation section without a tuning sweep")
			}
			// One results table per cell, with an RMSE column.
			if got := strings.Count(string(doc), "<table class=\"results\">"); got != len(r.Cells) {
				t.Errorf("%d results tables, want one per cell (%d)", got, len(r.Cells))
			}
			// The scenario is collapsed, and nothing preformatted (the
			// scenario text) comes before the figures.
			if i, j := bytes.Index(doc, []byte("<pre>")), bytes.Index(doc, []byte(`id="figures"`)); i >= 0 && i < j {
				t.Error("a <pre> block comes before the figures")
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
				if s := pic.Bounds().Size(); s.X != figurePixelsX || s.Y < figurePixelsY {
					t.Errorf("img %d is %v", i, s)
				}
				if img["width"] != strconv.Itoa(pic.Bounds().Dx()) || img["height"] != strconv.Itoa(pic.Bounds().Dy()) {
					t.Errorf("img %d: width and height %s×%s, image %v", i, img["width"], img["height"], pic.Bounds().Size())
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
			if !strings.Contains(p.text, results.CautionSentence) {
				t.Error("caution sentence missing")
			}
			if !bytes.Contains(doc, []byte("data-figures-loaded")) {
				t.Error("figure-load script missing")
			}
			for _, o := range omitted {
				if !strings.Contains(p.text, o.Reason) {
					t.Errorf("the note that %s is left out is missing", o.Name)
				}
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
	p, _ := writePage(t, Input{Results: r, Source: []byte("name: x # <b>not bold</b>\n")})
	for _, want := range []string{`bench <b>&"x"`, "spikes <script>alert(1)</script> & drift", `hub<er>&`, `0 </td>`, `<i>abc</i>`, "<b>not bold</b>"} {
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
	_, doc := writePage(t, Input{Results: r})
	if !bytes.Contains(doc, []byte("stopped early")) || !bytes.Contains(doc, []byte("40 of 100 replicates")) {
		t.Error("report does not say the run stopped early and how far cell 3 got")
	}
}

// withMeasures fills in the RMSE and MSE ratio of the hand-built results
// from their bias and spread (RMSE² = bias² + SE²), with invented MCSEs of
// 1% of the RMSE; least squares is the reference.
func withMeasures(r *results.Results) {
	for i := range r.Cells {
		var ref []float64
		for j := range r.Cells[i].Estimators {
			e := &r.Cells[i].Estimators[j]
			for k := range e.Coefficients {
				c := &e.Coefficients[k]
				b, s := float64(c.Bias.Value), float64(c.EmpSE.Value)
				mse := b*b + s*s
				rmse := math.Sqrt(mse)
				c.MSE = results.Measure{Value: results.Num(mse), MCSE: results.Num(0.02 * mse)}
				c.RMSE = results.Measure{Value: results.Num(rmse), MCSE: results.Num(0.01 * rmse)}
				if j == 0 {
					ref = append(ref, mse)
					c.MSERatio = results.Measure{Value: 1, MCSE: results.Num(math.NaN())}
				} else {
					c.MSERatio = results.Measure{Value: results.Num(ref[k] / mse), MCSE: results.Num(0.02 * ref[k] / mse)}
				}
			}
		}
	}
}

// TestResultsTable: in cell 2 of the hand-built results huber's bias is a
// quarter of least squares' with the same spread, so huber is the choice
// and least squares' bias and RMSE are marked as larger by more than 2
// MCSE; least squares, the reference, is never shown against itself.
func TestResultsTable(t *testing.T) {
	r := handResults(false)
	withMeasures(r)
	v := results.VerdictOf(r, r.Cells[2])
	if v.Choice != "huber" {
		t.Fatalf("choice %q, want huber", v.Choice)
	}
	rows := resultRows(r, r.Cells[2], v)
	if len(rows) != 4 {
		t.Fatalf("%d rows, want 2 estimators × 2 coefficients", len(rows))
	}
	ls := rows[0]
	if !ls.Reference || ls.Measures[3].Text != "reference" || ls.Measures[4].Text != "reference" {
		t.Errorf("reference row %+v: want MSE ratio and efficiency shown as the reference", ls)
	}
	if ls.Measures[0].Class != "worse" || ls.Measures[2].Class != "worse" || !strings.HasPrefix(ls.Measures[2].Text, "▲") {
		t.Errorf("ls intercept bias %+v and RMSE %+v: want marked larger than the choice's", ls.Measures[0], ls.Measures[2])
	}
	if ls.Measures[1].Class != "" {
		t.Errorf("ls SE %+v marked, but it equals huber's", ls.Measures[1])
	}
	for _, row := range rows[2:] {
		if !row.Choice {
			t.Errorf("huber row %+v not marked as the choice", row)
		}
		for _, m := range row.Measures {
			if m.Class != "" {
				t.Errorf("the choice's own row is marked: %+v", m)
			}
		}
	}
	_, doc := writePage(t, Input{Results: r})
	for _, bad := range []string{"ls 1 ± 0", "ls</code> ×1 ± 0", "×1 ± 0"} {
		if bytes.Contains(doc, []byte(bad)) {
			t.Errorf("the page ranks ls against itself (%q)", bad)
		}
	}
	if !bytes.Contains(doc, []byte(`<tr id="verdict-cell-2">`)) {
		t.Error("no verdict row for cell 2")
	}
}

// TestScenarioText: the scenario file's own text is shown as written,
// collapsed; without it, the normalised scenario is shown as YAML with its
// own keys.
func TestScenarioText(t *testing.T) {
	r := handResults(false)
	r.Scenario.File = "bench.yaml"
	r.Scenario.Normalised = []byte(`{"name":"bench-hand","model":{"n":20,"terms":["volume"]},"estimators":[{"label":"ls","method":"ls"}]}`)
	src := "# the bench's own comment\nname: bench-hand\nmodel: {n: 20}\n"
	_, doc := writePage(t, Input{Results: r, Source: []byte(src)})
	if !bytes.Contains(doc, []byte("# the bench&#39;s own comment")) || !bytes.Contains(doc, []byte("Scenario file bench.yaml")) {
		t.Errorf("the scenario file's text is not shown as written")
	}
	title, _, text := scenarioText(r, nil)
	if !strings.Contains(title, "YAML") {
		t.Errorf("title %q", title)
	}
	for _, want := range []string{"name: bench-hand\n", "model:\n  n: 20\n", "  terms:\n    - volume\n", "estimators:\n  - label: ls\n    method: ls\n"} {
		if !strings.Contains(text, want) {
			t.Errorf("normalised YAML lacks %q:\n%s", want, text)
		}
	}
	if strings.Index(text, "name:") > strings.Index(text, "model:") {
		t.Error("the YAML does not keep the scenario's key order")
	}
}

// TestReportOfEmptyResults: a results value with no cells (a run stopped
// before any replicate) still gives a well-formed page.
func TestReportOfEmptyResults(t *testing.T) {
	r := &results.Results{Schema: results.SchemaVersion, Scenario: results.ScenarioInfo{Name: "bench-empty"}, Replicates: 10}
	p, _ := writePage(t, Input{Results: r})
	for _, id := range sectionOrder {
		if !slices.Contains(p.ids, id) {
			t.Errorf("section id %q missing", id)
		}
	}
	var buf bytes.Buffer
	if err := Write(&buf, Input{}); err == nil {
		t.Error("Write without results gave no error")
	}
}
