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
// page's own script must report every figure loaded, and a screenshot must
// not be blank.
func TestReportInBrowser(t *testing.T) {
	bin := chromium()
	if bin == "" {
		if os.Getenv(requireToolsEnv) != "" {
			t.Fatalf("%s is set but no Chromium was found; install Debian's chromium package", requireToolsEnv)
		}
		t.Skipf("Chromium is not installed (.ci/run installs it and sets %s); the HTML structure is tested in package results", requireToolsEnv)
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
	shot := filepath.Join(dir, "shot.png")
	if out, err := exec.CommandContext(ctx, bin, append(base, "--window-size=1200,2400", "--screenshot="+shot, page)...).CombinedOutput(); err != nil {
		t.Fatalf("chromium --screenshot: %v\n%s", err, out)
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if frac := inkFraction(img); frac < 0.02 {
		t.Errorf("the screenshot is nearly blank: %.1f%% of pixels are not background", 100*frac)
	} else {
		t.Logf("%d/%d figures loaded; %.1f%% of the screenshot is ink", loaded, total, 100*frac)
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
