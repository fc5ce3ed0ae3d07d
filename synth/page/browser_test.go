package page_test

import (
	"bufio"
	"bytes"
	"context"
	"encoding/base64"
	"encoding/binary"
	"errors"
	"fmt"
	"image/png"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/input"
	cdplog "github.com/chromedp/cdproto/log"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
	goaudio "github.com/go-audio/wav"
	mewflac "github.com/mewkiz/flac"

	"sinter/patch"
	"sinter/synth/manifest"
	"sinter/synth/page"
	"sinter/synth/sampleset"
)

// The review page is tested in Chromium from the distribution, driven
// over the DevTools protocol by chromedp: keys pressed as a person would,
// and what the page played read back through its test hook, window.sinterPage.

// chromium finds the browser; without one the tests skip, unless
// SINTER_BROWSER=required (make test sets it, after installing one).
func chromium(t *testing.T) string {
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	if os.Getenv("SINTER_BROWSER") == "required" {
		t.Fatal("no chromium on PATH, and SINTER_BROWSER=required: make tools installs it (apt-get install chromium)")
	}
	t.Skip("no chromium on PATH: the browser tests need Debian's chromium (make test installs it)")
	return ""
}

// setSource is a small looped set: three roots, two layers, two round
// robins, at a low rate to keep the renders the tests move quick.
func setSource(extra string) string {
	return `name: review
sample_rate: 22050
keys: [57, 60, 64]
velocities: [60, 120]
round_robin: 2
hold: 1.0
tail: 0.3
loop: {length: 0.08, crossfade: 0.02}
` + extra + `
partials:
  - harmonics: 6
    amplitude: "0.3/n"
    envelope: {attack: 0.02, decay: 0.05, sustain: 0.8, release: 0.25}
`
}

// buildSet renders src with its page into a new folder.
func buildSet(t *testing.T, src string) string {
	t.Helper()
	p, err := patch.Parse("review.yaml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	plan.OutputDir = filepath.Join(t.TempDir(), "set")
	_, err = sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 2, Version: "test",
		Extras: func(dir string, write sampleset.WriteFunc) error { return page.Write(dir, 2, write) }})
	if err != nil {
		t.Fatal(err)
	}
	return plan.OutputDir
}

// sfzRegion is a <region> of sinter's mapping, read here without the
// mapping package: sinter writes one header a line, opcodes as name=value
// separated by spaces (the SFZ format's syntax, sfzformat.com), the
// group's opcodes on the <group> line before the regions.
type sfzRegion struct {
	sample                             string
	root, lokey, hikey, lovel, hivel   int
	loopStart, loopEnd, seqLen, seqPos int
	release                            float64
}

func readSFZ(t *testing.T, path string) []sfzRegion {
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var regions []sfzRegion
	group := map[string]string{}
	for _, line := range strings.Split(string(data), "\n") {
		fields := strings.Fields(line)
		if len(fields) == 0 || strings.HasPrefix(fields[0], "//") {
			continue
		}
		op := map[string]string{}
		for _, f := range fields[1:] {
			name, value, _ := strings.Cut(f, "=")
			op[name] = value
		}
		switch fields[0] {
		case "<group>":
			group = op
		case "<region>":
			num := func(name string) int {
				n, err := strconv.Atoi(op[name])
				if err != nil {
					t.Fatalf("%s: %s=%q", path, name, op[name])
				}
				return n
			}
			release, _ := strconv.ParseFloat(group["ampeg_release"], 64)
			regions = append(regions, sfzRegion{sample: op["sample"], root: num("pitch_keycenter"), lokey: num("lokey"), hikey: num("hikey"),
				lovel: num("lovel"), hivel: num("hivel"), loopStart: num("loop_start"), loopEnd: num("loop_end"),
				seqLen: num("seq_length"), seqPos: num("seq_position"), release: release})
		}
	}
	return regions
}

// sampler picks regions as an SFZ player does: key and velocity in range,
// and each region counting the notes it answers, playing when the count,
// wrapped at seq_length, is its seq_position (sfzformat.com, seq_length,
// seq_position).
type sampler struct {
	regions []sfzRegion
	counts  []int
}

func (s *sampler) play(key, vel int) []sfzRegion {
	if s.counts == nil {
		s.counts = make([]int, len(s.regions))
	}
	var out []sfzRegion
	for i, r := range s.regions {
		if key < r.lokey || key > r.hikey || vel < r.lovel || vel > r.hivel {
			continue
		}
		s.counts[i]++
		if (s.counts[i]-1)%r.seqLen+1 == r.seqPos {
			out = append(out, r)
		}
	}
	return out
}

// watch records what leaves the page: every request it makes and every
// error the console shows.
type watch struct {
	mu       sync.Mutex
	requests []string
	errors   []string
}

func (w *watch) listen(ev any) {
	w.mu.Lock()
	defer w.mu.Unlock()
	switch e := ev.(type) {
	case *network.EventRequestWillBeSent:
		w.requests = append(w.requests, e.Request.URL)
	case *runtime.EventConsoleAPICalled:
		if e.Type == runtime.ConsoleAPICalledTypeError || e.Type == runtime.ConsoleAPICalledTypeWarning {
			var args []string
			for _, a := range e.Args {
				args = append(args, string(a.Value)+a.Description)
			}
			w.errors = append(w.errors, fmt.Sprintf("console.%s: %s", e.Type, strings.Join(args, " ")))
		}
	case *runtime.EventExceptionThrown:
		w.errors = append(w.errors, "exception: "+e.ExceptionDetails.Text+" "+e.ExceptionDetails.Exception.Description)
	case *cdplog.EventEntryAdded:
		if e.Entry.Level == cdplog.EntryLevelError {
			w.errors = append(w.errors, "log: "+e.Entry.Text+" "+e.Entry.URL)
		}
	}
}

// served is a set's folder behind the page's handler, recording each
// request and its status.
type served struct {
	dir string
	srv *httptest.Server
	mu  sync.Mutex
	log []string
}

func serveSet(t *testing.T, dir string) *served {
	s := &served{dir: dir}
	h := page.Handler(dir)
	s.srv = httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		rec := &statusWriter{ResponseWriter: w, status: 200}
		h.ServeHTTP(rec, r)
		s.mu.Lock()
		s.log = append(s.log, fmt.Sprintf("%s %d", r.URL.Path, rec.status))
		s.mu.Unlock()
	}))
	t.Cleanup(s.srv.Close)
	return s
}

type statusWriter struct {
	http.ResponseWriter
	status int
}

func (w *statusWriter) WriteHeader(code int) { w.status = code; w.ResponseWriter.WriteHeader(code) }

// eval runs a script in the page and decodes its result.
func eval[T any](t *testing.T, ctx context.Context, script string) T {
	t.Helper()
	v, err := chromedp.Run(ctx, chromedp.Evaluate[T](script, chromedp.EvalAwaitPromise))
	if err != nil {
		t.Fatalf("%s: %v", script, err)
	}
	return v
}

// waitFor waits until script is true in the page.
func waitFor(t *testing.T, ctx context.Context, script string) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for !eval[bool](t, ctx, script) {
		if time.Now().After(deadline) {
			t.Fatalf("waited 20 s for %s", script)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// played is what the hook says a note played.
type played struct {
	Key, Velocity         int
	Sample                string
	Root                  int
	PlaybackRate          float64
	Loop                  bool
	LoopStart, LoopEnd    float64 // seconds, as the source node holds them
	BufferRate            float64
	Gain, Master, Release float64
}

// waitPlayed waits until the page has played n notes.
func waitPlayed(t *testing.T, ctx context.Context, n int) []played {
	t.Helper()
	deadline := time.Now().Add(15 * time.Second)
	for {
		got := eval[[]played](t, ctx, `window.sinterPage.played()`)
		if len(got) >= n {
			return got
		}
		if time.Now().After(deadline) {
			t.Fatalf("the page played %d notes, want %d; status: %s", len(got), n, eval[string](t, ctx, `document.getElementById("status").textContent`))
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// letters are the typed keys of an octave from C and the octave keys
// (common practice, as the page's hint lists them).
const letters = "awsedftgyhujk"

func typeKey(t *testing.T, ctx context.Context, letter string, kind input.DispatchKeyEventType) {
	t.Helper()
	p := input.DispatchKeyEventParams{Type: kind, Key: letter, Code: "Key" + strings.ToUpper(letter), WindowsVirtualKeyCode: int64(strings.ToUpper(letter)[0])}
	if kind == input.DispatchKeyEventTypeKeyDown {
		p.Text = letter
	}
	if _, err := chromedp.Call(ctx, input.DispatchKeyEvent, p); err != nil {
		t.Fatal(err)
	}
}

func mouse(t *testing.T, ctx context.Context, x, y float64, kind input.DispatchMouseEventType) {
	t.Helper()
	p := input.DispatchMouseEventParams{Type: kind, X: x, Y: y, Button: input.MouseButtonLeft, Buttons: 1, ClickCount: 1}
	if kind == input.DispatchMouseEventTypeMouseReleased {
		p.Buttons = 0
	}
	if _, err := chromedp.Call(ctx, input.DispatchMouseEvent, p); err != nil {
		t.Fatal(err)
	}
}

func TestPageInBrowser(t *testing.T) {
	exe := chromium(t)
	wavSet := buildSet(t, setSource("bit_depth: 24\nchannels: 1"))
	flacSet := buildSet(t, setSource("bit_depth: 16\nchannels: 2\noutput: {format: flac}"))
	wavSrv, flacSrv := serveSet(t, wavSet), serveSet(t, flacSet)

	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(exe),
		chromedp.Headless,
		chromedp.NoFirstRun,
		chromedp.NoSandbox, // as root, Chromium's sandbox will not start
		chromedp.DisableGPU,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1280, 1400),
		// No connection of Chromium's own: this machine reaches nothing,
		// and the page must not either.
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("autoplay-policy", "no-user-gesture-required"),
		chromedp.Flag("mute-audio", true),
	}
	// One deadline for the browser and everything it does.
	deadline, cancelDeadline := context.WithTimeout(context.Background(), 4*time.Minute)
	defer cancelDeadline()
	alloc, cancelAlloc := chromedp.NewExecAllocator(deadline, opts...)
	defer cancelAlloc()
	ctx, cancel := chromedp.NewContext(alloc)
	defer cancel()
	w := &watch{}
	if err := chromedp.Listen(ctx, w.listen); err != nil {
		t.Fatalf("cannot start %s: %v", exe, err)
	}
	if _, err := chromedp.Call(ctx, network.Enable, network.EnableParams{}); err != nil {
		t.Fatal(err)
	}
	for _, enable := range []func() error{
		func() error { _, err := chromedp.Call(ctx, runtime.Enable, struct{}{}); return err },
		func() error { _, err := chromedp.Call(ctx, cdplog.Enable, struct{}{}); return err },
	} {
		if err := enable(); err != nil {
			t.Fatal(err)
		}
	}
	open := func(url string) {
		t.Helper()
		if err := chromedp.Do(ctx, chromedp.Navigate(url)); err != nil {
			t.Fatalf("open %s: %v", url, err)
		}
		waitFor(t, ctx, `document.readyState === "complete" && document.querySelectorAll(".key").length > 0`)
	}

	t.Run("keys play the regions the mapping chooses", func(t *testing.T) {
		open(wavSrv.srv.URL + "/")
		m, err := manifest.Read(filepath.Join(wavSet, manifest.FileName))
		if err != nil {
			t.Fatal(err)
		}
		loops := map[string]*manifest.Loop{}
		for _, f := range m.Files {
			loops[f.Path] = f.Loop
		}
		model := &sampler{regions: readSFZ(t, filepath.Join(wavSet, "review.sfz"))}
		// The page types the octave of C4 at first (the middle of 57..64
		// lies in it); z shifts it down to C3.
		presses := []struct {
			how      string // a letter, "z"/"x" to shift, or "click"
			key, vel int
		}{
			{"k", 72, 100},                                 // no region: nothing plays
			{"a", 60, 100}, {"a", 60, 100}, {"a", 60, 100}, // round robins in turn
			{"s", 62, 40}, {"f", 65, 127}, {"e", 63, 127},
			{"z", 0, 0},
			{"h", 57, 30}, {"u", 58, 127}, {"j", 59, 61}, {"k", 60, 60},
			{"x", 0, 0},
			{"click", 61, 120}, {"click", 64, 1}, {"click", 64, 1},
		}
		n := 0
		var want []sfzRegion
		var wantKeys, wantVels []int
		for _, p := range presses {
			if p.how == "z" || p.how == "x" {
				typeKey(t, ctx, p.how, input.DispatchKeyEventTypeKeyDown)
				typeKey(t, ctx, p.how, input.DispatchKeyEventTypeKeyUp)
				continue
			}
			eval[chromedp.Void](t, ctx, fmt.Sprintf(`(() => { const v = document.getElementById("velocity"); v.value = %d; v.dispatchEvent(new Event("input")); })()`, p.vel))
			regions := model.play(p.key, p.vel)
			for _, r := range regions {
				want, wantKeys, wantVels = append(want, r), append(wantKeys, p.key), append(wantVels, p.vel)
			}
			if p.how == "click" {
				sel := fmt.Sprintf(`.key[data-key="%d"]`, p.key)
				if err := chromedp.Do(ctx, chromedp.ScrollIntoView(sel)); err != nil {
					t.Fatal(err)
				}
				xy := eval[[]float64](t, ctx, `(() => { const r = document.querySelector('`+sel+`').getBoundingClientRect(); return [r.x + r.width/2, r.y + r.height - 12]; })()`)
				mouse(t, ctx, xy[0], xy[1], input.DispatchMouseEventTypeMousePressed)
				n += len(regions)
				waitPlayed(t, ctx, n)
				mouse(t, ctx, xy[0], xy[1], input.DispatchMouseEventTypeMouseReleased)
				continue
			}
			if !strings.Contains(letters, p.how) {
				t.Fatalf("%q is not a typed key", p.how)
			}
			typeKey(t, ctx, p.how, input.DispatchKeyEventTypeKeyDown)
			n += len(regions)
			waitPlayed(t, ctx, n)
			typeKey(t, ctx, p.how, input.DispatchKeyEventTypeKeyUp)
		}
		time.Sleep(200 * time.Millisecond) // a note the page should not have played would show by now
		got := waitPlayed(t, ctx, n)
		if len(got) != len(want) {
			t.Fatalf("the page played %d notes, the mapping chooses %d", len(got), len(want))
		}
		for i, g := range got {
			r := want[i]
			rate := 22050.0
			// Web Audio keeps playbackRate as a float32 AudioParam and
			// loopStart and loopEnd as doubles in seconds (Web Audio API,
			// AudioBufferSourceNode).
			wantRate := math.Pow(2, float64(wantKeys[i]-r.root)/12)
			switch {
			case g.Key != wantKeys[i] || g.Velocity != wantVels[i]:
				t.Errorf("note %d: the page played key %d at %d, the test pressed %d at %d", i, g.Key, g.Velocity, wantKeys[i], wantVels[i])
			case g.Sample != r.sample || g.Root != r.root:
				t.Errorf("note %d (key %d, velocity %d): the page played %s from root %d, the mapping chooses %s from %d", i, g.Key, g.Velocity, g.Sample, g.Root, r.sample, r.root)
			case math.Abs(g.PlaybackRate-wantRate) > 1e-6*wantRate:
				t.Errorf("note %d: playback rate %.9f, want 2^((%d − %d)/12) = %.9f", i, g.PlaybackRate, g.Key, r.root, wantRate)
			case !g.Loop || math.Abs(g.LoopStart-float64(r.loopStart)/rate) > 1e-9 || math.Abs(g.LoopEnd-float64(r.loopEnd+1)/rate) > 1e-9:
				t.Errorf("note %d: loop %v from %.9f s to %.9f s, want frames %d to %d inclusive: %.9f to %.9f s", i, g.Loop, g.LoopStart, g.LoopEnd,
					r.loopStart, r.loopEnd, float64(r.loopStart)/rate, float64(r.loopEnd+1)/rate)
			case loops[r.sample] == nil || loops[r.sample].Start != r.loopStart || loops[r.sample].End != r.loopEnd:
				t.Errorf("note %d: the mapping loops %s over %d..%d, the manifest says %+v", i, r.sample, r.loopStart, r.loopEnd, loops[r.sample])
			case g.BufferRate != rate:
				t.Errorf("note %d: the sample was decoded at %g Hz, not the set's %g", i, g.BufferRate, rate)
			case g.Gain != 1 || math.Abs(g.Master-math.Pow(10, -20.0/20)) > 1e-7:
				t.Errorf("note %d: region gain %g (the mapping sets no volume: 1) and master %g (the page starts at −20 dB: 0.1)", i, g.Gain, g.Master)
			case math.Abs(g.Release-r.release) > 1e-9:
				t.Errorf("note %d: release over %g s, the mapping's ampeg_release is %g", i, g.Release, r.release)
			}
		}
	})

	for _, set := range []struct {
		name string
		srv  *served
	}{{"wav", wavSrv}, {"flac", flacSrv}} {
		t.Run("a held key reproduces the file through its loop/"+set.name, func(t *testing.T) {
			open(set.srv.srv.URL + "/")
			model := &sampler{regions: readSFZ(t, filepath.Join(set.srv.dir, "review.sfz"))}
			for _, press := range []struct{ key, vel int }{{60, 100}, {64, 20}, {60, 100}} {
				r := model.play(press.key, press.vel)[0]
				file := samplesOf(t, filepath.Join(set.srv.dir, r.sample))
				length := r.loopEnd - r.loopStart + 1
				frames := r.loopEnd + 1 + 3*length + 500
				out := render(t, ctx, press.key, press.vel, float64(frames)/22050, 1e9)
				if out.sample != r.sample {
					t.Fatalf("key %d at %d: rendered %s, the mapping chooses %s", press.key, press.vel, out.sample, r.sample)
				}
				for c := range file.channels {
					want := looped(file.channel(c), r.loopStart, r.loopEnd, frames)
					if i, diff := file.firstDiff(out.channels[c], want); i >= 0 {
						t.Errorf("%s channel %d: frame %d (loop %d..%d) is %.9f, the file through its loop %.9f (%.3g off)", r.sample, c, i, r.loopStart, r.loopEnd, out.channels[c][i], want[i], diff)
					}
					// The check sees a loop end taken as exclusive: one
					// frame short of the loop the manifest records.
					short := looped(file.channel(c), r.loopStart, r.loopEnd-1, frames)
					if i, _ := file.firstDiff(out.channels[c], short); i < 0 {
						t.Errorf("%s: the rendering also matches a loop one frame short; the check cannot tell them apart", r.sample)
					}
				}
			}
		})
	}

	t.Run("a key held for 30 s does not click at the loop", func(t *testing.T) {
		open(wavSrv.srv.URL + "/")
		model := &sampler{regions: readSFZ(t, filepath.Join(wavSet, "review.sfz"))}
		for _, key := range []int{60, 61, 58} {
			r := model.play(key, 100)[0]
			file := samplesOf(t, filepath.Join(wavSet, r.sample))
			x := file.channel(0)
			rate := math.Pow(2, float64(key-r.root)/12)
			out := render(t, ctx, key, 100, 30, 1e9)
			if out.sample != r.sample {
				t.Fatalf("key %d: rendered %s, the mapping chooses %s", key, out.sample, r.sample)
			}
			if key == r.root {
				// Unpitched, 30 s are the file through its loop, sample
				// for sample.
				if i, d := file.firstDiff(out.channels[0], looped(x, r.loopStart, r.loopEnd, len(out.channels[0]))); i >= 0 {
					t.Errorf("key %d: frame %d of 30 s is %.9f off the file through its loop", key, i, d)
				}
			}
			// A click is a step between neighbouring output samples larger
			// than the file has inside its loop or across its seam: linear
			// interpolation at rate r steps at most r times the file's
			// largest step (common practice). The file's own seam is
			// judged by its seam ratio, on the page and in the manifest.
			bound := func(y []float64) float64 {
				return rate*max(maxStep(y[r.loopStart:r.loopEnd+1]), math.Abs(y[r.loopEnd]-y[r.loopStart]))*1.001 + 1e-6
			}
			from := int(float64(r.loopStart)/rate) + 1
			if got := maxStep(out.channels[0][from:]); got > bound(x) {
				t.Errorf("key %d (%s at rate %.4f): a step of %.6f in 30 s, past %.6f, the file's largest in and across its loop times the rate", key, r.sample, rate, got, bound(x))
			}
			// The check sees a seam 3 frames short of the loop.
			if key == r.root {
				bad := looped(x, r.loopStart, r.loopEnd-3, 30*22050)
				if maxStep(bad[from:]) <= bound(x) {
					t.Errorf("%s: a loop 3 frames short steps no further than %.6f; the check cannot see that click", r.sample, bound(x))
				}
			}
		}
	})

	t.Run("screenshot", func(t *testing.T) {
		open(wavSrv.srv.URL + "/")
		shot, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
		if err != nil {
			t.Fatal(err)
		}
		if dir := os.Getenv("SINTER_SCREENSHOT_DIR"); dir != "" {
			os.WriteFile(filepath.Join(dir, "review-page.png"), shot, 0o644)
		}
		img, err := png.Decode(bytes.NewReader(shot))
		if err != nil {
			t.Fatal(err)
		}
		b := img.Bounds()
		colours := map[uint32]int{}
		for y := b.Min.Y; y < b.Max.Y; y += 3 {
			for x := b.Min.X; x < b.Max.X; x += 3 {
				r, g, bl, _ := img.At(x, y).RGBA()
				colours[r>>12<<8|g>>12<<4|bl>>12]++
			}
		}
		most := 0
		for _, n := range colours {
			most = max(most, n)
		}
		total := ((b.Dx() + 2) / 3) * ((b.Dy() + 2) / 3)
		if len(colours) < 12 || float64(most) > 0.95*float64(total) {
			t.Errorf("the screenshot is blank: %d colours, the commonest on %d of %d points", len(colours), most, total)
		}
		// The caution is on the page, and the page starts quiet.
		caution := eval[string](t, ctx, `document.querySelector(".caution").innerText`)
		if !strings.Contains(caution, "harm hearing and speakers") || !strings.Contains(caution, "−20 dB") {
			t.Errorf("the caution reads %q", caution)
		}
		if v := eval[string](t, ctx, `document.getElementById("volume").value`); v != "-20" {
			t.Errorf("the volume control starts at %s dB, want -20", v)
		}
	})

	t.Run("opened as a file", func(t *testing.T) {
		open("file://" + filepath.Join(wavSet, page.FileName))
		notice := eval[string](t, ctx, `(() => { const n = document.getElementById("file-notice"); return n.hidden ? "" : n.innerText; })()`)
		if !strings.Contains(notice, "sinter serve "+wavSet) {
			t.Errorf("the page opened as a file says %q, not how to serve it", notice)
		}
		m, err := manifest.Read(filepath.Join(wavSet, manifest.FileName))
		if err != nil {
			t.Fatal(err)
		}
		rows := eval[int](t, ctx, `document.querySelectorAll("#files tbody tr").length`)
		pictures := eval[int](t, ctx, `Promise.all([...document.querySelectorAll("#files img")].map(i => { i.loading = "eager"; return i.decode().then(() => i.naturalWidth > 0 ? 1 : 0, () => 0); })).then(v => v.reduce((a, b) => a + b, 0))`)
		if rows != len(m.Files) || pictures != len(m.Files) {
			t.Errorf("the page shows %d rows and %d pictures for %d files", rows, pictures, len(m.Files))
		}
		// A key pressed says what it would play instead of failing.
		typeKey(t, ctx, "a", input.DispatchKeyEventTypeKeyDown)
		typeKey(t, ctx, "a", input.DispatchKeyEventTypeKeyUp)
		if status := eval[string](t, ctx, `document.getElementById("status").textContent`); !strings.Contains(status, "sinter serve") {
			t.Errorf("a key pressed on the page opened as a file says %q", status)
		}
	})

	// Nothing left the folder, and the console stayed clean.
	w.mu.Lock()
	defer w.mu.Unlock()
	for _, u := range w.requests {
		inside := strings.HasPrefix(u, wavSrv.srv.URL+"/") || strings.HasPrefix(u, flacSrv.srv.URL+"/") ||
			strings.HasPrefix(u, "file://"+wavSet+"/") || u == "data:,"
		if !inside {
			t.Errorf("the page asked for %s, outside its folder", u)
		}
	}
	for _, s := range []*served{wavSrv, flacSrv} {
		s.mu.Lock()
		for _, l := range s.log {
			if !strings.HasSuffix(l, " 200") {
				t.Errorf("%s answered %s", s.srv.URL, l)
			}
		}
		s.mu.Unlock()
	}
	if len(w.requests) == 0 {
		t.Error("no request seen: the network events are not being recorded")
	}
	for _, e := range w.errors {
		t.Errorf("console: %s", e)
	}
}

// rendering is what sinterPage.render returns, decoded.
type rendering struct {
	sample   string
	channels [][]float32
}

func render(t *testing.T, ctx context.Context, key, vel int, seconds, release float64) rendering {
	t.Helper()
	type voice struct{ Sample string }
	res := eval[struct {
		Voices   []voice
		Channels []string
	}](t, ctx, fmt.Sprintf(`window.sinterPage.render(%d, %d, %g, %g)`, key, vel, seconds, release))
	if len(res.Voices) != 1 {
		t.Fatalf("key %d at %d rendered %d voices, want 1", key, vel, len(res.Voices))
	}
	out := rendering{sample: res.Voices[0].Sample}
	for _, c := range res.Channels {
		raw, err := base64.StdEncoding.DecodeString(c)
		if err != nil {
			t.Fatal(err)
		}
		ch := make([]float32, len(raw)/4)
		for i := range ch {
			ch[i] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*i:]))
		}
		out.channels = append(out.channels, ch)
	}
	return out
}

// decodedFile is a file's samples as floats, interleaved.
type decodedFile struct {
	data     []float64
	channels int
	bits     int
}

func (f decodedFile) channel(c int) []float64 {
	out := make([]float64, len(f.data)/f.channels)
	for i := range out {
		out[i] = f.data[i*f.channels+c]
	}
	return out
}

// samplesOf decodes a file independently of the page: WAV with
// go-audio/wav, FLAC with mewkiz/flac, integers over 2^(bits−1) as Web
// Audio's decoders scale them.
func samplesOf(t *testing.T, path string) decodedFile {
	t.Helper()
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if strings.HasSuffix(path, ".wav") {
		dec := goaudio.NewDecoder(bytes.NewReader(raw))
		buf, err := dec.FullPCMBuffer()
		if err != nil {
			t.Fatal(err)
		}
		scale := math.Ldexp(1, -(int(dec.BitDepth) - 1))
		frames := int(dec.PCMLen()) / (int(dec.BitDepth) / 8) / int(dec.NumChans)
		out := decodedFile{channels: int(dec.NumChans), bits: int(dec.BitDepth)}
		// go-audio/wav reads a data chunk's pad byte as one more sample
		// (shared/reference/libraries.md); PCMLen leaves it out.
		for _, v := range buf.Data[:frames*out.channels] {
			out.data = append(out.data, float64(v)*scale)
		}
		return out
	}
	stream, err := mewflac.New(bufio.NewReader(bytes.NewReader(raw)))
	if err != nil {
		t.Fatal(err)
	}
	scale := math.Ldexp(1, -(int(stream.Info.BitsPerSample) - 1))
	out := decodedFile{channels: int(stream.Info.NChannels), bits: int(stream.Info.BitsPerSample)}
	for {
		f, err := stream.ParseNext()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil {
			t.Fatal(err)
		}
		for i := range f.Subframes[0].NSamples {
			for _, sub := range f.Subframes {
				out.data = append(out.data, float64(sub.Samples[i])*scale)
			}
		}
	}
}

// looped is what a player holding the note plays of x: the file up to
// loop end, then the loop start to end (inclusive) over and over.
func looped(x []float64, start, end, frames int) []float64 {
	out := make([]float64, frames)
	for i := range out {
		j := i
		if i > end {
			j = start + (i-end-1)%(end-start+1)
		}
		out[i] = x[j]
	}
	return out
}

// firstDiff returns the first frame where got does not hold the integer
// sample of want, and how far off it is; −1 if none. Decoders turn an
// integer k of b bits into k / 2^(b−1), or into k / (2^(b−1) − 1) for
// positive k (Chromium decodes FLAC that way): within a fraction of a
// step of either is the same sample (common practice).
func (f decodedFile) firstDiff(got []float32, want []float64) (int, float64) {
	full := math.Ldexp(1, f.bits-1)
	for i := range want {
		if i >= len(got) {
			return i, math.Inf(1)
		}
		code := math.Round(want[i] * full)
		y := float64(got[i])
		if math.Round(y*full) != code && math.Round(y*(full-1)) != code {
			return i, math.Abs(y - want[i])
		}
	}
	return -1, 0
}

func maxStep[T float32 | float64](x []T) float64 {
	m := 0.0
	for i := 1; i < len(x); i++ {
		m = max(m, math.Abs(float64(x[i]-x[i-1])))
	}
	return m
}
