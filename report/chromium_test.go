package report

import (
	"context"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"starvet/galaxy/potential"
)

const chromiumPath = "/usr/bin/chromium"

func chromium(t *testing.T) string {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		if os.Getenv("STARVET_REQUIRE_CHROMIUM") == "1" {
			t.Fatalf("STARVET_REQUIRE_CHROMIUM=1 but %s: %v", chromiumPath, err)
		}
		t.Skipf("%s not installed (apt-get install chromium)", chromiumPath)
	}
	return chromiumPath
}

func runChromium(t *testing.T, bin string, extra ...string) []byte {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	args := append([]string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir=" + filepath.Join(t.TempDir(), "profile"), "--virtual-time-budget=10000"}, extra...)
	cmd := exec.CommandContext(ctx, bin, args...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("chromium %v: %v\n%s", extra, err, stderr.String())
	}
	return out
}

// TestChromiumRendersPage opens the page in headless Chromium, reads back
// the DOM (every plot loaded, candidate rows present) and checks the
// screenshot is the requested size and not blank inside the plots.
func TestChromiumRendersPage(t *testing.T) {
	bin := chromium(t)
	dir, _ := writeFixture(t, fixture(potential.DefaultModel), 2, Options{})
	url := "file://" + filepath.Join(dir, "index.html")

	dom := string(runChromium(t, bin, "--dump-dom", "--window-size=1280,2400", "--hide-scrollbars", url))
	imgRe := regexp.MustCompile(`<img [^>]*data-plot="([^"]+)"[^>]*>`)
	imgs := imgRe.FindAllStringSubmatch(dom, -1)
	if len(imgs) != 4 {
		t.Fatalf("rendered DOM has %d plot images, want 4", len(imgs))
	}
	rectRe := regexp.MustCompile(`data-rect="(\d+),(\d+),(\d+),(\d+)"`)
	type rect struct{ x, y, w, h int }
	var rects []rect
	for _, m := range imgs {
		if !strings.Contains(m[0], `data-loaded="yes"`) {
			t.Errorf("plot %s did not load: %s", m[1], m[0])
		}
		r := rectRe.FindStringSubmatch(m[0])
		if r == nil {
			t.Errorf("plot %s has no place on the page: %s", m[1], m[0])
			continue
		}
		var v [4]int
		for i := range v {
			v[i], _ = strconv.Atoi(r[i+1])
		}
		rects = append(rects, rect{v[0], v[1], v[2], v[3]})
	}
	if n := strings.Count(dom, `<tr class="candidate">`); n != 5 {
		t.Errorf("rendered DOM has %d candidate rows, want 5", n)
	}

	shot := filepath.Join(t.TempDir(), "shot.png")
	runChromium(t, bin, "--screenshot="+shot, "--window-size=1280,2400", "--hide-scrollbars", url)
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 1280 || b.Dy() != 2400 {
		t.Fatalf("screenshot is %dx%d, want 1280x2400", b.Dx(), b.Dy())
	}
	colours := map[uint32]bool{}
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y += 2 {
		for x := b.Min.X; x < b.Max.X; x += 2 {
			r, g, bl, _ := img.At(x, y).RGBA()
			colours[(r>>8)<<16|(g>>8)<<8|bl>>8] = true
		}
	}
	if len(colours) < 100 {
		t.Errorf("screenshot has %d distinct colours, want a rendered page (>= 100)", len(colours))
	}
	// Inside every plot that lies within the screenshot, ink must cover a
	// fair part of the area (axes, text, markers) and the vermillion of the
	// unbound markers must show in the speed plot.
	checked := 0
	for i, r := range rects {
		if r.y+r.h > b.Dy() || r.w == 0 || r.h == 0 {
			continue
		}
		checked++
		ink, verm := 0, 0
		for y := r.y; y < r.y+r.h; y++ {
			for x := r.x; x < r.x+r.w; x++ {
				c, g, bl, _ := img.At(x, y).RGBA()
				c, g, bl = c>>8, g>>8, bl>>8
				if c < 235 || g < 235 || bl < 235 {
					ink++
				}
				if near(c, 0xD5) && near(g, 0x5E) && near(bl, 0x00) {
					verm++
				}
			}
		}
		frac := float64(ink) / float64(r.w*r.h)
		t.Logf("plot %s at %v: %.3f inked, %d vermillion pixels", imgs[i][1], r, frac, verm)
		if frac < 0.01 {
			t.Errorf("plot %s: %.4f of its area inked, looks blank", imgs[i][1], frac)
		}
		if imgs[i][1] == "speed.svg" && verm < 10 {
			t.Errorf("speed plot: %d vermillion pixels, want the unbound markers", verm)
		}
	}
	if checked == 0 {
		t.Error("no plot lies within the screenshot")
	}
}

func near(a, b uint32) bool { return a+12 >= b && a <= b+12 }
