package main

import (
	"bytes"
	"context"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

// chromium finds a Chromium binary.
func chromium() string {
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	return ""
}

// TestReportInBrowser renders a run's HTML report in headless Chromium: the
// page's own script must report every figure loaded; the page as the
// browser built it must lead with the results (the verdict, then a results
// table with an RMSE column, both before the first figure, and no raw
// scenario text above them, the scenario collapsed); and screenshots of
// the whole page and of its first screen must not be blank.
func TestReportInBrowser(t *testing.T) {
	bin := chromium()
	if bin == "" {
		if os.Getenv(requireToolsEnv) != "" {
			t.Fatalf("%s is set but no Chromium was found; install Debian's chromium package", requireToolsEnv)
		}
		t.Skipf("Chromium is not installed (.ci/run installs it and sets %s); the HTML structure is tested in package report", requireToolsEnv)
	}
	dir := t.TempDir()
	if code, _, errs := rhomark(t, "run", "breakdown-curve", "--replicates", "12", "--out", dir, "--report"); code != exitOK {
		t.Fatal(errs)
	}
	page := "file://" + filepath.Join(dir, "breakdown-curve.html")
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking",
		"--disable-component-update", "--disable-sync", "--disable-quic", "--hide-scrollbars",
		"--user-data-dir=" + filepath.Join(dir, "profile")}
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	dom, err := exec.CommandContext(ctx, bin, append(base, "--virtual-time-budget=5000", "--dump-dom", page)...).Output()
	if err != nil {
		t.Fatalf("chromium --dump-dom: %v", err)
	}
	m := regexp.MustCompile(`data-figures-loaded="(\d+)/(\d+)"`).FindSubmatch(dom)
	if m == nil {
		t.Fatalf("the page's figure check did not run; DOM starts %q", firstBytes(dom, 300))
	}
	loaded, _ := strconv.Atoi(string(m[1]))
	total, _ := strconv.Atoi(string(m[2]))
	if total == 0 || loaded != total {
		t.Errorf("%d of %d figures loaded in the browser", loaded, total)
	}
	checkLeadsWithResults(t, dom)
	for _, size := range []string{"1200,2400", "1280,900"} {
		shot := filepath.Join(dir, "shot-"+strings.Replace(size, ",", "x", 1)+".png")
		if out, err := exec.CommandContext(ctx, bin, append(base, "--window-size="+size, "--screenshot="+shot, page)...).CombinedOutput(); err != nil {
			t.Fatalf("chromium --screenshot: %v\n%s", err, out)
		}
		f, err := os.Open(shot)
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		if frac := inkFraction(img); frac < 0.02 {
			t.Errorf("the %s screenshot is nearly blank: %.1f%% of pixels are not background", size, 100*frac)
		} else {
			t.Logf("%s: %d/%d figures loaded; %.1f%% of the screenshot is ink", size, loaded, total, 100*frac)
		}
	}
}

// checkLeadsWithResults checks the DOM Chromium built: the verdict section
// and a results table with an RMSE column come before the first figure,
// nothing preformatted (a raw scenario or JSON block) comes before them,
// and the scenario's text sits in a collapsed <details>.
func checkLeadsWithResults(t *testing.T, dom []byte) {
	t.Helper()
	at := func(s string) int { return bytes.Index(dom, []byte(s)) }
	verdict, results, figure := at(`id="verdict"`), at(`<table class="results">`), at(`<figure`)
	if verdict < 0 || results < 0 || figure < 0 {
		t.Fatalf("verdict at %d, results table at %d, first figure at %d: want all three", verdict, results, figure)
	}
	if !(verdict < results && results < figure) {
		t.Errorf("order: verdict at %d, results table at %d, first figure at %d; want verdict, table, figure", verdict, results, figure)
	}
	head := dom[results:]
	if end := bytes.Index(head, []byte("</table>")); end < 0 || !bytes.Contains(head[:end], []byte(">RMSE<")) {
		t.Error("the first results table has no RMSE column")
	}
	if i := at("<pre"); i >= 0 && i < figure {
		t.Errorf("a preformatted block (at %d) comes before the figures", i)
	}
	if bytes.Contains(dom[:figure], []byte(`{"name"`)) || bytes.Contains(dom[:figure], []byte(`"estimators": [`)) {
		t.Error("raw JSON appears above the figures")
	}
	details := regexp.MustCompile(`<details id="scenario-source"[^>]*>`).Find(dom)
	if details == nil || bytes.Contains(details, []byte(" open")) {
		t.Errorf("the scenario text is not in a collapsed <details> (%q)", details)
	}
}

// inkFraction returns the share of pixels that differ clearly from the
// top-left (background) pixel.
func inkFraction(img image.Image) float64 {
	b := img.Bounds()
	r0, g0, b0, _ := img.At(b.Min.X, b.Min.Y).RGBA()
	var ink, all int
	for y := b.Min.Y; y < b.Max.Y; y += 2 {
		for x := b.Min.X; x < b.Max.X; x += 2 {
			r, g, bl, _ := img.At(x, y).RGBA()
			d := absDiff(r, r0) + absDiff(g, g0) + absDiff(bl, b0)
			if d > 3*0x1000 {
				ink++
			}
			all++
		}
	}
	return float64(ink) / float64(all)
}

func absDiff(a, b uint32) uint32 {
	if a > b {
		return a - b
	}
	return b - a
}

func firstBytes(b []byte, n int) []byte {
	if len(b) > n {
		return b[:n]
	}
	return bytes.TrimSpace(b)
}
