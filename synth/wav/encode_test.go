package wav_test

import (
	"bytes"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"strings"
	"sync"
	"testing"

	gowav "github.com/go-audio/wav"

	"sinter/synth/kernel"
	"sinter/synth/wav"
)

// testSamples returns n deterministic samples: first exact quantisation
// steps and clipping values, then uniform values in [−1, 1).
func testSamples(n int) []float64 {
	special := []float64{0, 0.5, -0.5, 1, -1, 0.25, -0.75, 1.5, -1.5}
	rng := rand.New(rand.NewPCG(1, 2))
	s := make([]float64, n)
	for i := range s {
		if i < len(special) {
			s[i] = special[i]
		} else {
			s[i] = 2*rng.Float64() - 1
		}
	}
	return s
}

// quantized is the integer code the package doc promises for x:
// round-half-to-even(x · 2^(bits−1)), clamped to the bits-wide two's
// complement range, NaN as 0.
func quantized(x float64, bits int) int {
	scale := math.Ldexp(1, bits-1)
	if math.IsNaN(x) {
		return 0
	}
	return int(max(-scale, min(scale-1, math.RoundToEven(x*scale))))
}

func encode(t testing.TB, samples []float64, opts wav.Options) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := wav.Encode(&buf, samples, opts); err != nil {
		t.Fatalf("Encode: %v", err)
	}
	return buf.Bytes()
}

func sampler(loops ...wav.Loop) *wav.Sampler {
	return &wav.Sampler{UnityNote: 57, PitchFraction: 0x80000000, Loops: loops}
}

var instrument = &wav.Instrument{UnshiftedNote: 57, FineTune: -12, Gain: -6, LowNote: 55, HighNote: 59, LowVelocity: 1, HighVelocity: 64}

// TestRoundTripGoAudio writes files with every set of kernels the
// processor runs and reads them back with go-audio/wav.
func TestRoundTripGoAudio(t *testing.T) {
	for _, isa := range kernel.Supported() {
		for _, bits := range []int{16, 24, 32} {
			for _, channels := range []int{1, 2} {
				for _, frames := range []int{1000, 1001} {
					t.Run(fmt.Sprintf("%s/%dbit/%dch/%dframes", isa, bits, channels, frames), func(t *testing.T) {
						roundTripGoAudio(t, isa, bits, channels, frames)
					})
				}
			}
		}
	}
}

// roundTripGoAudio encodes one file with isa and checks what go-audio/wav
// reads back: the format, every sample and the sampler metadata.
func roundTripGoAudio(t *testing.T, isa kernel.ISA, bits, channels, frames int) {
	samples := testSamples(frames * channels)
	loops := []wav.Loop{{Start: 100, End: 899}, {Start: 0, End: uint32(frames - 1)}}
	opts := wav.Options{SampleRate: 48000, BitDepth: bits, Channels: channels, Sampler: sampler(loops...), Instrument: instrument}
	previous := kernel.Use(isa)
	data := encode(t, samples, opts)
	kernel.Use(previous)

	// go-audio/wav's decoder as independent reader.
	d := gowav.NewDecoder(bytes.NewReader(data))
	buf, err := d.FullPCMBuffer()
	if err != nil {
		t.Fatalf("go-audio FullPCMBuffer: %v", err)
	}
	if int(d.SampleRate) != 48000 || int(d.NumChans) != channels || int(d.BitDepth) != bits {
		t.Fatalf("go-audio read %d Hz, %d channels, %d bits", d.SampleRate, d.NumChans, d.BitDepth)
	}
	// go-audio counts an odd data chunk's pad byte as an
	// extra sample (libraries sheet §1), so compare only
	// the samples that were encoded.
	if len(buf.Data) < len(samples) {
		t.Fatalf("go-audio read %d samples, want at least %d", len(buf.Data), len(samples))
	}
	for i, x := range samples {
		got := buf.Data[i]
		if bits == 32 {
			// go-audio returns float32 samples as raw bit patterns.
			if f := math.Float32frombits(uint32(got)); f != float32(x) {
				t.Fatalf("sample %d = %v, want %v", i, f, float32(x))
			}
		} else if want := quantized(x, bits); got != want {
			t.Fatalf("sample %d (%v) = %d, want %d", i, x, got, want)
		}
	}

	md := gowav.NewDecoder(bytes.NewReader(data))
	md.ReadMetadata()
	if err := md.Err(); err != nil {
		t.Fatalf("go-audio ReadMetadata: %v", err)
	}
	if md.Metadata == nil || md.Metadata.SamplerInfo == nil {
		t.Fatal("go-audio found no smpl chunk")
	}
	si := md.Metadata.SamplerInfo
	// Sample period from the standards sheet: 48 kHz -> 20833 ns.
	if si.MIDIUnityNote != 57 || si.MIDIPitchFraction != 0x80000000 || si.SamplePeriod != 20833 {
		t.Errorf("smpl unity %d, fraction %#x, period %d; want 57, 0x80000000, 20833",
			si.MIDIUnityNote, si.MIDIPitchFraction, si.SamplePeriod)
	}
	if len(si.Loops) != len(loops) {
		t.Fatalf("go-audio read %d loops, want %d", len(si.Loops), len(loops))
	}
	for i, l := range si.Loops {
		if l.Start != loops[i].Start || l.End != loops[i].End || l.Type != 0 || l.PlayCount != 0 {
			t.Errorf("loop %d = %+v, want forward endless %d..%d", i, *l, loops[i].Start, loops[i].End)
		}
	}
}

func TestSamplePeriod(t *testing.T) {
	for _, tc := range []struct {
		rate int
		want uint32
	}{
		{44100, 22675}, // RIFF94 smpl example on the standards sheet: 44.1 kHz -> 22675
		{48000, 20833}, // standards sheet check value (computed): 48 kHz -> 20833
		{96000, 10416}, // standards sheet check value (computed): 96 kHz -> 10416, truncated
	} {
		data := encode(t, make([]float64, 4), wav.Options{SampleRate: tc.rate, BitDepth: 16, Channels: 1, Sampler: sampler()})
		info, err := wav.Inspect(data)
		if err != nil {
			t.Fatal(err)
		}
		if info.SamplePeriod != tc.want {
			t.Errorf("%d Hz: sample period %d, want %d", tc.rate, info.SamplePeriod, tc.want)
		}
	}
}

// TestHeaderBytes compares the bytes before the samples with the layouts in
// the standards sheet §1.2 (Kabal, Audio File Format Specifications – WAVE).
func TestHeaderBytes(t *testing.T) {
	const rate = 48000 // 0x0000BB80
	for _, tc := range []struct {
		name     string
		opts     wav.Options
		frames   int
		want     string // hex of the bytes from offset 12 up to and including the data size
		riffSize uint32
	}{
		{
			// Canonical PCM: fmt cksize 16, 44-byte header.
			name: "16-bit stereo", opts: wav.Options{SampleRate: rate, BitDepth: 16, Channels: 2}, frames: 3,
			want: "666d7420 10000000 0100 0200 80bb0000 00ee0200 0400 1000" +
				"64617461 0c000000",
			riffSize: 4 + 24 + 8 + 12,
		},
		{
			// EXTENSIBLE: cksize 40, cbSize 22, valid bits 24, mask 0x4 (mono),
			// KSDATAFORMAT_SUBTYPE_PCM GUID bytes.
			name: "24-bit mono", opts: wav.Options{SampleRate: rate, BitDepth: 24, Channels: 1}, frames: 3,
			want: "666d7420 28000000 feff 0100 80bb0000 80320200 0300 1800 1600 1800 04000000" +
				"01000000 00001000 800000aa 00389b71" +
				"64617461 09000000",
			riffSize: 4 + 48 + 8 + 9 + 1,
		},
		{
			// Stereo EXTENSIBLE mask 0x3 (front left | front right).
			name: "24-bit stereo", opts: wav.Options{SampleRate: rate, BitDepth: 24, Channels: 2}, frames: 1,
			want: "666d7420 28000000 feff 0200 80bb0000 00650400 0600 1800 1600 1800 03000000" +
				"01000000 00001000 800000aa 00389b71" +
				"64617461 06000000",
			riffSize: 4 + 48 + 8 + 6,
		},
		{
			// IEEE float: fmt cksize 18 with cbSize 0, then fact holding the
			// frame count (samples per channel).
			name: "float stereo", opts: wav.Options{SampleRate: rate, BitDepth: 32, Channels: 2}, frames: 5,
			want: "666d7420 12000000 0300 0200 80bb0000 00dc0500 0800 2000 0000" +
				"66616374 04000000 05000000" +
				"64617461 28000000",
			riffSize: 4 + 26 + 12 + 8 + 40,
		},
	} {
		t.Run(tc.name, func(t *testing.T) {
			data := encode(t, make([]float64, tc.frames*tc.opts.Channels), tc.opts)
			want := mustHex(t, tc.want)
			if string(data[0:4]) != "RIFF" || string(data[8:12]) != "WAVE" {
				t.Fatalf("file starts % x", data[:12])
			}
			if got := binary.LittleEndian.Uint32(data[4:]); got != tc.riffSize {
				t.Errorf("RIFF size %d, want %d", got, tc.riffSize)
			}
			if got := data[12 : 12+len(want)]; !bytes.Equal(got, want) {
				t.Errorf("header\n got % x\nwant % x", got, want)
			}
		})
	}
}

func mustHex(t *testing.T, s string) []byte {
	t.Helper()
	b, err := hex.DecodeString(strings.ReplaceAll(s, " ", ""))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func TestSizeMatchesEncode(t *testing.T) {
	for _, bits := range []int{16, 24, 32} {
		for _, channels := range []int{1, 2} {
			for _, frames := range []int{0, 1, 2, 8191, 8192, 20001} {
				metas := []struct {
					name string
					s    *wav.Sampler
					in   *wav.Instrument
				}{
					{"bare", nil, nil},
					{"smpl", sampler(), nil},
					{"smpl+loops", sampler(wav.Loop{}, wav.Loop{}, wav.Loop{}), nil},
					{"inst", nil, instrument},
					{"smpl+inst", sampler(wav.Loop{}), instrument},
				}
				for _, m := range metas {
					if frames == 0 && m.s != nil && len(m.s.Loops) > 0 {
						continue // a loop needs a frame to play
					}
					opts := wav.Options{SampleRate: 44100, BitDepth: bits, Channels: channels, Sampler: m.s, Instrument: m.in}
					data := encode(t, testSamples(frames*channels), opts)
					if got := wav.Size(frames, opts); got != int64(len(data)) {
						t.Errorf("%d-bit %dch %d frames %s: Size %d, Encode wrote %d", bits, channels, frames, m.name, got, len(data))
					}
					// RIFF chunk rule (standards sheet §1.1): the RIFF size
					// counts everything after its own header, pad bytes included.
					if got := binary.LittleEndian.Uint32(data[4:]); int(got) != len(data)-8 {
						t.Errorf("%d-bit %dch %d frames %s: RIFF size %d, file length − 8 = %d", bits, channels, frames, m.name, got, len(data)-8)
					}
				}
			}
		}
	}
}

// TestPadBytes checks the RIFF rule (standards sheet §1.1, [RIFF91]) that an
// odd-sized chunk is followed by a zero pad byte not counted in its size.
func TestPadBytes(t *testing.T) {
	const frames = 3 // 24-bit mono: 9 data bytes, odd
	samples := []float64{-1, -1, -1}
	data := encode(t, samples, wav.Options{SampleRate: 48000, BitDepth: 24, Channels: 1, Sampler: sampler(), Instrument: instrument})

	const dataAt = 12 + 48 // after RIFF header and the 40-byte fmt chunk
	if string(data[dataAt:dataAt+4]) != "data" || binary.LittleEndian.Uint32(data[dataAt+4:]) != 3*frames {
		t.Fatalf("data chunk header % x", data[dataAt:dataAt+8])
	}
	padAt := dataAt + 8 + 3*frames
	if data[padAt-1] != 0x80 || data[padAt] != 0 {
		t.Errorf("bytes around data pad: % x, want 80 then a 00 pad byte", data[padAt-1:padAt+1])
	}
	if string(data[padAt+1:padAt+5]) != "smpl" {
		t.Errorf("smpl chunk does not follow the data pad byte: % x", data[padAt+1:padAt+5])
	}
	// inst is 7 bytes (standards sheet §2.2), so a pad byte ends the file.
	instAt := len(data) - 16
	if string(data[instAt:instAt+4]) != "inst" || binary.LittleEndian.Uint32(data[instAt+4:]) != 7 || data[len(data)-1] != 0 {
		t.Errorf("file tail % x, want an inst chunk of size 7 and a 00 pad byte", data[instAt:])
	}
	want := []byte{57, 0xF4, 0xFA, 55, 59, 1, 64} // fine tune −12, gain −6 as two's complement
	if got := data[instAt+8 : instAt+15]; !bytes.Equal(got, want) {
		t.Errorf("inst body % x, want % x", got, want)
	}
}

// TestQuantization reads codes back with go-audio/wav's decoder as an
// independent reader, for every set of kernels the processor runs.
func TestQuantization(t *testing.T) {
	const lsb16 = 1.0 / 32768
	for _, tc := range []struct {
		name string
		bits int
		x    float64
		want int
	}{
		{"exact 0.5", 16, 0.5, 16384}, // 0.5 · 2^15, exact
		{"exact -0.5", 16, -0.5, -16384},
		{"exact 0.5 24-bit", 24, 0.5, 4194304},
		{"full scale +1 clips to max", 16, 1, 32767},
		{"-1 is the min code", 16, -1, -32768},
		{"+1.5 clips to max", 16, 1.5, 32767},
		{"-1.5 clips to min", 16, -1.5, -32768},
		{"+1.5 clips to max 24-bit", 24, 1.5, 8388607},
		{"-1.5 clips to min 24-bit", 24, -1.5, -8388608},
		{"+Inf clips", 24, math.Inf(1), 8388607},
		{"-Inf clips", 24, math.Inf(-1), -8388608},
		{"NaN is silence", 16, math.NaN(), 0},
		{"NaN is silence 24-bit", 24, math.NaN(), 0},
		{"half LSB ties to even 0", 16, 0.5 * lsb16, 0},
		{"1.5 LSB ties to even 2", 16, 1.5 * lsb16, 2},
		{"2.5 LSB ties to even 2", 16, 2.5 * lsb16, 2},
		{"-1.5 LSB ties to even -2", 16, -1.5 * lsb16, -2},
		{"just above half LSB rounds up", 16, 0.5000001 * lsb16, 1},
		{"smallest negative 24-bit", 24, -1.0 / 8388608, -1},
		{"just below full scale 24-bit", 24, 1 - 1.0/8388608, 8388607},
		{"huge positive clips", 24, 1e300, 8388607},
		{"huge negative clips", 16, -1e300, -32768},
		{"largest float64 clips", 16, math.MaxFloat64, 32767},
		{"near 2^51 LSBs clips", 16, 0x1p51 / 32768, 32767},
	} {
		t.Run(tc.name, func(t *testing.T) {
			// A block of 37 of the value runs it through every vector
			// lane and the plain tail of every set of kernels.
			samples := make([]float64, 37)
			for i := range samples {
				samples[i] = tc.x
			}
			for _, isa := range kernel.Supported() {
				previous := kernel.Use(isa)
				data := encode(t, samples, wav.Options{SampleRate: 8000, BitDepth: tc.bits, Channels: 1})
				kernel.Use(previous)
				for i, got := range decodeCodes(t, data, len(samples)) {
					if got != tc.want {
						t.Fatalf("%s: %v encodes as %d in sample %d, want %d", isa, tc.x, got, i, tc.want)
					}
				}
			}
		})
	}
}

// TestFloatNotClamped: IEEE float files carry values beyond full scale
// unchanged (float32(x)), NaN included.
func TestFloatNotClamped(t *testing.T) {
	in := []float64{1.5, -2.25, 0.1, math.NaN()}
	data := encode(t, in, wav.Options{SampleRate: 8000, BitDepth: 32, Channels: 1})
	// go-audio/wav's decoder as independent reader; it returns raw bit patterns.
	buf, err := gowav.NewDecoder(bytes.NewReader(data)).FullPCMBuffer()
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range in {
		got := math.Float32frombits(uint32(buf.Data[i]))
		if got != float32(x) && !(math.IsNaN(x) && got != got) {
			t.Errorf("sample %d = %v, want %v", i, got, float32(x))
		}
	}
}

func TestEncodeRejectsInvalidOptions(t *testing.T) {
	valid := wav.Options{SampleRate: 48000, BitDepth: 24, Channels: 2}
	with := func(f func(*wav.Options)) wav.Options {
		o := valid
		f(&o)
		return o
	}
	for _, tc := range []struct {
		name    string
		opts    wav.Options
		samples int
	}{
		{"bit depth 20", with(func(o *wav.Options) { o.BitDepth = 20 }), 4},
		{"bit depth 8", with(func(o *wav.Options) { o.BitDepth = 8 }), 4},
		{"no channels", with(func(o *wav.Options) { o.Channels = 0 }), 4},
		{"3 channels", with(func(o *wav.Options) { o.Channels = 3 }), 6},
		{"zero rate", with(func(o *wav.Options) { o.SampleRate = 0 }), 4},
		{"negative rate", with(func(o *wav.Options) { o.SampleRate = -44100 }), 4},
		{"byte rate overflows 32 bits", with(func(o *wav.Options) { o.SampleRate = math.MaxInt32 }), 4},
		{"partial frame", valid, 5},
		{"unity note 128", with(func(o *wav.Options) { o.Sampler = &wav.Sampler{UnityNote: 128} }), 4},
		{"loop end past data", with(func(o *wav.Options) { o.Sampler = sampler(wav.Loop{Start: 0, End: 2}) }), 4},
		{"loop start after end", with(func(o *wav.Options) { o.Sampler = sampler(wav.Loop{Start: 1, End: 0}) }), 4},
		{"inst velocity 200", with(func(o *wav.Options) { o.Instrument = &wav.Instrument{HighVelocity: 200} }), 4},
		{"inst fine tune 51", with(func(o *wav.Options) { o.Instrument = &wav.Instrument{FineTune: 51} }), 4},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			err := wav.Encode(&buf, make([]float64, tc.samples), tc.opts)
			var oe wav.OptionsError
			if !errors.As(err, &oe) {
				t.Fatalf("Encode error %v, want an OptionsError", err)
			}
			if buf.Len() != 0 {
				t.Errorf("Encode wrote %d bytes on invalid options", buf.Len())
			}
			if tc.opts.Channels > 0 && tc.samples%tc.opts.Channels == 0 {
				if n := wav.Size(tc.samples/tc.opts.Channels, tc.opts); n != 0 {
					t.Errorf("Size = %d for options Encode rejects, want 0", n)
				}
			}
		})
	}
	if err := wav.Encode(io.Discard, nil, with(func(o *wav.Options) { o.BitDepth = 20 })); err == nil ||
		err.Error() != "wav: bit depth 20 not supported (16, 24 or 32)" {
		t.Errorf("bit depth 20 error %q", err)
	}
}

// TestSizeLimit: RIFF sizes are 32-bit (standards sheet §1.1), so a file
// longer than 2³² − 1 + 8 bytes cannot be written.
func TestSizeLimit(t *testing.T) {
	opts := wav.Options{SampleRate: 48000, BitDepth: 16, Channels: 1}
	const header = 44                            // canonical PCM header (standards sheet §1.1)
	largest := (math.MaxUint32 + 8 - header) / 2 // frames of 2 bytes
	if got, want := wav.Size(largest, opts), int64(header+2*largest); got != want {
		t.Errorf("Size(%d) = %d, want %d", largest, got, want)
	}
	for _, frames := range []int{largest + 1, math.MaxInt / 2, math.MaxInt} {
		if got := wav.Size(frames, opts); got != 0 {
			t.Errorf("Size(%d) = %d beyond the RIFF limit, want 0", frames, got)
		}
	}
}

type failingWriter struct{ after int }

func (w *failingWriter) Write(p []byte) (int, error) {
	if w.after <= 0 {
		return 0, errors.New("disk full")
	}
	w.after--
	return len(p), nil
}

func TestEncodeReportsWriteErrors(t *testing.T) {
	samples := testSamples(3 * 8192 * 2)
	opts := wav.Options{SampleRate: 48000, BitDepth: 24, Channels: 2, Sampler: sampler()}
	for after := range 6 {
		err := wav.Encode(&failingWriter{after: after}, samples, opts)
		if after < 5 && (err == nil || err.Error() != "disk full") {
			t.Errorf("writer failing after %d writes: Encode returned %v", after, err)
		}
		if after == 5 && err != nil {
			t.Errorf("header, 3 sample blocks and trailer need 5 writes, yet Encode failed: %v", err)
		}
	}
}

// TestEncodeConcurrent: Encode shares no mutable state, so concurrent calls
// produce the same bytes as a serial one (run with -race to check for data races too).
func TestEncodeConcurrent(t *testing.T) {
	samples := testSamples(50001 * 2)
	want := map[int][]byte{}
	for _, bits := range []int{16, 24, 32} {
		want[bits] = encode(t, samples, wav.Options{SampleRate: 44100, BitDepth: bits, Channels: 2})
	}
	var wg sync.WaitGroup
	for i := range 12 {
		bits := []int{16, 24, 32}[i%3]
		wg.Go(func() {
			var buf bytes.Buffer
			if err := wav.Encode(&buf, samples, wav.Options{SampleRate: 44100, BitDepth: bits, Channels: 2}); err != nil {
				t.Error(err)
			} else if !bytes.Equal(buf.Bytes(), want[bits]) {
				t.Errorf("concurrent %d-bit encode differs from the serial one", bits)
			}
		})
	}
	wg.Wait()
}

// benchmarkEncode encodes 10 s of 48 kHz stereo with every set of kernels
// the processor runs, for three signals: a sine at half of full scale, the
// same sine at −100 dBFS (a tail fading out) and exact zeros (silence),
// and reports the time per sample.
func benchmarkEncode(b *testing.B, bits int, dither bool) {
	const rate, seconds = 48000, 10
	for _, isa := range kernel.Supported() {
		for _, signal := range []struct {
			name string
			peak float64
		}{{"sine", 0.5}, {"-100dBFS", 1e-5}, {"zeros", 0}} {
			b.Run(isa.String()+"/"+signal.name, func(b *testing.B) {
				samples := make([]float64, 2*rate*seconds)
				for i := range samples {
					samples[i] = signal.peak * math.Sin(2*math.Pi*440*float64(i/2)/rate)
				}
				opts := wav.Options{SampleRate: rate, BitDepth: bits, Channels: 2, Sampler: sampler(wav.Loop{Start: 0, End: rate - 1}),
					Dither: dither, DitherSeed: 1}
				previous := kernel.Use(isa)
				defer kernel.Use(previous)
				b.SetBytes(wav.Size(len(samples)/2, opts))
				for b.Loop() {
					if err := wav.Encode(io.Discard, samples, opts); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(samples)), "ns/sample")
			})
		}
	}
}

func BenchmarkEncode16(b *testing.B)       { benchmarkEncode(b, 16, false) }
func BenchmarkEncode16Dither(b *testing.B) { benchmarkEncode(b, 16, true) }
func BenchmarkEncode24(b *testing.B)       { benchmarkEncode(b, 24, false) }

// BenchmarkEncode24Dither is BenchmarkEncode24 with TPDF dither, to keep the
// dithered path within about twice the plain one.
func BenchmarkEncode24Dither(b *testing.B) { benchmarkEncode(b, 24, true) }
func BenchmarkEncodeFloat(b *testing.B)    { benchmarkEncode(b, 32, false) }
