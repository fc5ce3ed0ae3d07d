package main

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sinter/synth/wav"
)

// writeWAV writes frames (interleaved over channels) as a 16-bit WAV in a
// temporary folder and returns its path: by sinter's encoder for one or
// two channels, by hand (the RIFF layout of the standards sheet §1) for
// more, which the encoder does not write.
func writeWAV(t *testing.T, name string, channels int, samples []float64) string {
	t.Helper()
	if channels <= 2 {
		var buf bytes.Buffer
		if err := wav.Encode(&buf, samples, wav.Options{SampleRate: 44100, BitDepth: 16, Channels: channels}); err != nil {
			t.Fatal(err)
		}
		return writeFile(t, t.TempDir(), name, buf.String())
	}
	le := binary.LittleEndian
	data := make([]byte, 0, 2*len(samples))
	for _, v := range samples {
		data = le.AppendUint16(data, uint16(int16(math.Round(v*32767))))
	}
	b := append([]byte("RIFF"), le.AppendUint32(nil, uint32(36+len(data)))...)
	b = append(b, "WAVEfmt "...)
	b = le.AppendUint32(b, 16)
	b = le.AppendUint16(le.AppendUint16(b, 1), uint16(channels))
	b = le.AppendUint32(le.AppendUint32(b, 44100), uint32(44100*2*channels))
	b = le.AppendUint16(le.AppendUint16(b, uint16(2*channels)), 16)
	b = le.AppendUint32(append(b, "data"...), uint32(len(data)))
	return writeFile(t, t.TempDir(), name, string(append(b, data...)))
}

// pluck is a second of a plucked tone at 220 Hz, eight harmonics falling
// as 1/n, each a 3 ms attack into an exponential decay (T60 1.5/√n s).
func pluck(seconds float64, gain float64) []float64 {
	x := make([]float64, int(seconds*44100))
	for n := 1; n <= 8; n++ {
		nn := float64(n)
		tau := 1.5 / math.Sqrt(nn) / math.Log(1000)
		for i := range x {
			t := float64(i) / 44100
			env := math.Min(1, t/0.003) * math.Exp(-t/tau)
			x[i] += gain * 0.4 / nn * env * math.Sin(2*math.Pi*220*nn*t)
		}
	}
	return x
}

// TestAnalyzeWritesAPatch analyses a plucked tone, checks the report,
// that the patch written passes sinter check, and that --json, -o and
// --plot do what they say.
func TestAnalyzeWritesAPatch(t *testing.T) {
	rec := writeWAV(t, "Plucked Glass 01.wav", 1, pluck(1.2, 1))
	code, stdout, stderr := runCLI("analyze", rec)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, want := range []string{"16-bit PCM mono, 44100 Hz", "pitch: A3 +0.00 cents (220.000 Hz)", "law: harmonic series of 220.0000 Hz",
		"resynthesis at A3: spectral distance", "wrote " + strings.TrimSuffix(rec, ".wav") + ".yaml (1 group)"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("the report lacks %q:\n%s", want, stdout)
		}
	}
	patchFile := strings.TrimSuffix(rec, ".wav") + ".yaml"
	src, err := os.ReadFile(patchFile)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(src, []byte(analyzeHeader+" from Plucked Glass 01.wav (mono), sha256 ")) || !bytes.Contains(src, []byte("name: plucked-glass-01\n")) {
		t.Errorf("patch:\n%s", src)
	}
	if code, _, stderr := runCLI("check", patchFile); code != exitOK {
		t.Errorf("sinter check refuses the patch written: %s\n%s", stderr, src)
	}
	// Again, over its own patch, as JSON, with a picture.
	pic := filepath.Join(t.TempDir(), "glass.png")
	code, stdout, stderr = runCLI("analyze", rec, "--json", "--plot", pic, "--key", "A3")
	if code != exitOK {
		t.Fatalf("second run: exit %d: %s", code, stderr)
	}
	var doc struct {
		OK     bool          `json:"ok"`
		Result analyzeReport `json:"result"`
	}
	if err := json.Unmarshal([]byte(stdout), &doc); err != nil || !doc.OK {
		t.Fatalf("not a JSON report (%v):\n%s", err, stdout)
	}
	r := doc.Result
	if r.Key != "A3" || !r.ReferenceGiven || r.Law.Kind != "harmonic series" || len(r.Partials) != 8 || r.Partials[0].SustainDB != nil || r.Resynthesis.EnergyDB < 20 {
		t.Errorf("report %+v", r)
	}
	if f, err := os.Open(pic); err != nil {
		t.Error(err)
	} else if _, err := png.DecodeConfig(f); err != nil {
		t.Errorf("the picture is no PNG: %v", err)
	}
	// Refused: a file analyze did not write, and both --key and --f0.
	foreign := writeFile(t, t.TempDir(), "mine.yaml", "name: mine\npartials: [{ratio: 1}]\n")
	if code, _, stderr := runCLI("analyze", rec, "-o", foreign); code != exitUsage || !strings.Contains(stderr, "was not written by sinter analyze") {
		t.Errorf("over a designer's patch: exit %d, %q", code, stderr)
	}
	if code, _, stderr := runCLI("analyze", rec, "--key", "A3", "--f0", "220"); code != exitUsage || !strings.Contains(stderr, "give --key or --f0, not both") {
		t.Errorf("--key and --f0: exit %d, %q", code, stderr)
	}
}

// TestAnalyzeBadRecordings: each kind of bad input gets exit 2 and a
// message naming the file and what is wrong, as text and as JSON, and
// no patch.
func TestAnalyzeBadRecordings(t *testing.T) {
	good := writeWAV(t, "good.wav", 1, pluck(0.5, 1))
	data, _ := os.ReadFile(good)
	broken := bytes.Clone(data)
	binary.LittleEndian.PutUint32(broken[40:], 1<<30) // the data chunk claims a gigabyte
	noise := make([]float64, 44100)
	r := rand.New(rand.NewPCG(1, 1))
	for i := range noise {
		noise[i] = 0.2 * r.NormFloat64()
	}
	click := make([]float64, 44100)
	for i := range 882 { // 20 ms
		click[22050+i] = math.Sin(float64(i)) * math.Exp(-float64(i)/150)
	}
	eight := make([]float64, 8*4410)
	for i := range eight {
		eight[i] = 0.5 * math.Sin(float64(i)/10)
	}
	cases := []struct {
		name, file, want string
	}{
		{"not a WAV", writeFile(t, t.TempDir(), "song.wav", "ID3\x04\x00 an mp3 file, renamed"), `not a WAV file analyze can read: wav: byte 0: file starts with "ID3\x04"`},
		{"truncated", writeFile(t, t.TempDir(), "cut.wav", string(data[:len(data)/2])), "(truncated)"},
		{"empty", writeFile(t, t.TempDir(), "empty.wav", ""), "0 bytes are too few for a RIFF header"},
		{"broken chunk", writeFile(t, t.TempDir(), "broken.wav", string(broken)), `"data" chunk claims 1073741824 bytes`},
		{"silence", writeWAV(t, "silence.wav", 1, make([]float64, 44100)), "no stable partial was found: the recording is silent"},
		{"pure noise", writeWAV(t, "noise.wav", 1, noise), "no stable partial was found"},
		{"clipped", writeWAV(t, "hot.wav", 1, pluck(0.5, 4)), "it is clipped"},
		{"a 20 ms click", writeWAV(t, "click.wav", 1, click), "no stable partial was found"},
		{"8 channels", writeWAV(t, "surround.wav", 8, eight), "it has 8 channels"},
		{"missing", filepath.Join(t.TempDir(), "gone.wav"), "cannot read"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := runCLI("analyze", c.file)
			if code != exitUsage || !strings.Contains(stderr, c.file) || !strings.Contains(stderr, c.want) {
				t.Errorf("exit %d, stderr %q; want 2 naming %s and %q", code, stderr, c.file, c.want)
			}
			if _, err := os.Stat(strings.TrimSuffix(c.file, ".wav") + ".yaml"); err == nil {
				t.Error("a patch was written")
			}
			code, stdout, _ := runCLI("analyze", c.file, "--json")
			var doc struct {
				OK     bool        `json:"ok"`
				Errors []jsonError `json:"errors"`
			}
			if err := json.Unmarshal([]byte(stdout), &doc); code != exitUsage || err != nil || doc.OK || len(doc.Errors) != 1 || !strings.Contains(doc.Errors[0].Message, c.want) {
				t.Errorf("--json: exit %d, %s", code, stdout)
			}
		})
	}
}

// TestPlotRecording draws a recording's spectrogram beside its patch's.
func TestPlotRecording(t *testing.T) {
	rec := writeWAV(t, "pluck.wav", 1, pluck(0.6, 1))
	code, stdout, stderr := runCLI("plot", rec, "--width", "900", "--height", "420")
	if code != exitOK || !strings.Contains(stdout, "8 partials, Pitch A3") {
		t.Fatalf("exit %d, %q, %q", code, stdout, stderr)
	}
	f, err := os.Open(strings.TrimSuffix(rec, ".wav") + ".png")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if cfg, err := png.DecodeConfig(f); err != nil || cfg.Width != 900 || cfg.Height != 420 {
		t.Errorf("PNG %+v, %v; want 900 × 420", cfg, err)
	}
	if code, _, stderr := runCLI("plot", rec, "--velocity", "100"); code != exitUsage || !strings.Contains(stderr, "a recording has one") {
		t.Errorf("--velocity for a recording: exit %d, %q", code, stderr)
	}
}
