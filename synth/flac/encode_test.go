package flac_test

import (
	"bytes"
	"crypto/md5"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	goaudio "github.com/go-audio/wav"
	mewflac "github.com/mewkiz/flac"
	"github.com/mewkiz/flac/meta"

	"sinter/synth/flac"
	"sinter/synth/wav"
)

// signal makes frames of a test signal, interleaved.
type signal struct {
	name     string
	channels int
	frames   int
	at       func(i, c int) float64
}

func (s signal) samples() []float64 {
	out := make([]float64, s.frames*s.channels)
	for i := range s.frames {
		for c := range s.channels {
			out[i*s.channels+c] = s.at(i, c)
		}
	}
	return out
}

// harmonics is a note of 40 harmonics of 1/n at f0 Hz (rate 48 kHz),
// with a slow fade, the kind of signal sinter writes; the right channel
// is slightly delayed.
func harmonics(f0 float64) func(i, c int) float64 {
	return func(i, c int) float64 {
		t := float64(i-3*c) / 48000
		sum := 0.0
		for n := 1.0; n <= 40 && n*f0 < 20000; n++ {
			sum += math.Sin(2*math.Pi*n*f0*t+n) / n
		}
		return 0.4 * sum * math.Exp(-t)
	}
}

func signals() []signal {
	noise := rand.New(rand.NewPCG(1, 2))
	return []signal{
		{"harmonic note stereo", 2, 3*flac.BlockSize + 1000, harmonics(220)},
		{"harmonic note mono high", 1, 2 * flac.BlockSize, harmonics(1760)},
		{"silence", 2, flac.BlockSize + 17, func(int, int) float64 { return 0 }},
		{"white noise full scale", 2, flac.BlockSize + 300, func(int, int) float64 { return 2*noise.Float64() - 1 }},
		{"clipped square past full scale", 1, 5000, func(i, _ int) float64 { return 1.5 * math.Copysign(1, math.Sin(float64(i)/9)) }},
		{"left only", 2, 6000, func(i, c int) float64 { return float64(1-c) * math.Sin(float64(i)/7) }},
		{"identical channels", 2, 6000, func(i, _ int) float64 { return 0.9 * math.Sin(float64(i)/30) }},
		{"one frame", 2, 1, func(int, int) float64 { return 0.5 }},
		{"short", 1, 15, func(i, _ int) float64 { return float64(i) / 20 }},
		{"a block and one", 1, flac.BlockSize + 1, func(i, _ int) float64 { return math.Sin(float64(i) / 3) }},
	}
}

// decodeWAV returns the first n integer samples of a WAV file, read by
// go-audio/wav's decoder. It reads the pad byte after an odd-sized data
// chunk as one more sample (shared/reference/libraries.md, "Pad byte
// counted as audio"), which n leaves out.
func decodeWAV(t *testing.T, data []byte, n int) []int {
	t.Helper()
	dec := goaudio.NewDecoder(bytes.NewReader(data))
	buf, err := dec.FullPCMBuffer()
	if err != nil {
		t.Fatal(err)
	}
	if len(buf.Data) < n {
		t.Fatalf("go-audio/wav read %d samples, want %d", len(buf.Data), n)
	}
	return buf.Data[:n]
}

// decoded is a FLAC stream as mewkiz/flac, an independent decoder, reads it.
type decoded struct {
	info    *meta.StreamInfo
	samples []int // interleaved
	riff    []byte
	md5     [16]byte // of the decoded samples, as RFC 9639, section 8.2, defines it
}

func decodeFLAC(data []byte) (*decoded, error) {
	stream, err := mewflac.Parse(bytes.NewReader(data))
	if err != nil {
		return nil, err
	}
	d := &decoded{info: stream.Info}
	for _, b := range stream.Blocks {
		if app, ok := b.Body.(*meta.Application); ok && app.ID == 0x72696666 { // "riff"
			d.riff = append(d.riff, app.Data...)
		}
	}
	sum := md5.New()
	width := int(stream.Info.BitsPerSample+7) / 8
	for {
		f, err := stream.ParseNext()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, err
		}
		for i := range f.Subframes[0].NSamples {
			for _, sub := range f.Subframes {
				v := sub.Samples[i]
				d.samples = append(d.samples, int(v))
				var le [4]byte
				binary.LittleEndian.PutUint32(le[:], uint32(v))
				sum.Write(le[:width])
			}
		}
	}
	sum.Sum(d.md5[:0])
	return d, nil
}

// TestLosslessAgainstWAV: every signal, at 16 and 24 bits, with and
// without dither, decodes (by mewkiz/flac) to exactly the integer samples
// the WAV file of the same options holds (read by go-audio/wav), and the
// STREAMINFO fields and MD5 are those RFC 9639, section 8.2, defines.
func TestLosslessAgainstWAV(t *testing.T) {
	for _, s := range signals() {
		for _, bits := range []int{16, 24} {
			for _, dither := range []bool{false, true} {
				samples := s.samples()
				name := s.name + map[int]string{16: "/16", 24: "/24"}[bits] + map[bool]string{false: "", true: "/dither"}[dither]
				t.Run(name, func(t *testing.T) {
					opts := flac.Options{SampleRate: 48000, BitDepth: bits, Channels: s.channels, Dither: dither, DitherSeed: 99}
					var w, f bytes.Buffer
					if err := wav.Encode(&w, samples, wav.Options{SampleRate: 48000, BitDepth: bits, Channels: s.channels, Dither: dither, DitherSeed: 99}); err != nil {
						t.Fatal(err)
					}
					if err := flac.Encode(&f, samples, opts); err != nil {
						t.Fatal(err)
					}
					want := decodeWAV(t, w.Bytes(), len(samples))
					got, err := decodeFLAC(f.Bytes())
					if err != nil {
						t.Fatalf("mewkiz/flac cannot decode the stream: %v", err)
					}
					if len(got.samples) != len(want) {
						t.Fatalf("decoded %d samples, the WAV holds %d", len(got.samples), len(want))
					}
					for i := range want {
						if got.samples[i] != want[i] {
							t.Fatalf("sample %d (frame %d, channel %d) decodes to %d, the WAV holds %d", i, i/s.channels, i%s.channels, got.samples[i], want[i])
						}
					}
					in := got.info
					if in.SampleRate != 48000 || int(in.NChannels) != s.channels || int(in.BitsPerSample) != bits || in.NSamples != uint64(s.frames) {
						t.Errorf("STREAMINFO: %d Hz, %d channels, %d bits, %d frames", in.SampleRate, in.NChannels, in.BitsPerSample, in.NSamples)
					}
					if in.MD5sum != got.md5 {
						t.Errorf("STREAMINFO MD5 %x, the decoded samples' %x", in.MD5sum, got.md5)
					}
					if max := flac.MaxSize(s.frames, opts); int64(f.Len()) > max {
						t.Errorf("wrote %d bytes, MaxSize says at most %d", f.Len(), max)
					}
				})
			}
		}
	}
}

// TestDecoderCatchesACorruptStream: the check above can fail. A bit
// flipped in a frame makes the independent decoder fail its CRC or decode
// other samples.
func TestDecoderCatchesACorruptStream(t *testing.T) {
	s := signals()[0]
	var f bytes.Buffer
	if err := flac.Encode(&f, s.samples(), flac.Options{SampleRate: 48000, BitDepth: 24, Channels: 2}); err != nil {
		t.Fatal(err)
	}
	good, err := decodeFLAC(f.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	bad := bytes.Clone(f.Bytes())
	bad[len(bad)-500] ^= 0x10
	got, err := decodeFLAC(bad)
	if err == nil && got.md5 == good.md5 {
		t.Fatal("a flipped bit went unnoticed")
	}
}

// TestRates: each way a frame header codes the sample rate (RFC 9639,
// section 9.1.2: the table, kHz, Hz, tens of Hz, or STREAMINFO's) is read
// back by the independent decoder.
func TestRates(t *testing.T) {
	for _, rate := range []int{8000, 22050, 44100, 48000, 96000, 192000, 11000, 12345, 100000, 384000, 655349} {
		samples := make([]float64, 5000)
		for i := range samples {
			samples[i] = math.Sin(float64(i) / 5)
		}
		var f bytes.Buffer
		if err := flac.Encode(&f, samples, flac.Options{SampleRate: rate, BitDepth: 16, Channels: 1}); err != nil {
			t.Fatal(err)
		}
		d, err := decodeFLAC(f.Bytes())
		if err != nil {
			t.Errorf("%d Hz: %v", rate, err)
			continue
		}
		if d.info.SampleRate != uint32(rate) || len(d.samples) != 5000 {
			t.Errorf("%d Hz: read back %d Hz, %d samples", rate, d.info.SampleRate, len(d.samples))
		}
	}
}

// TestSamplerChunks: the smpl and inst chunks are in APPLICATION "riff"
// blocks as the independent decoder finds them, and Inspect reads them
// and STREAMINFO back.
func TestSamplerChunks(t *testing.T) {
	opts := flac.Options{SampleRate: 44100, BitDepth: 24, Channels: 2,
		Sampler:    &wav.Sampler{UnityNote: 62, Loops: []wav.Loop{{Start: 100, End: 4999}}},
		Instrument: &wav.Instrument{UnshiftedNote: 62, LowNote: 60, HighNote: 64, LowVelocity: 1, HighVelocity: 90}}
	var f bytes.Buffer
	if err := flac.Encode(&f, make([]float64, 10000), opts); err != nil {
		t.Fatal(err)
	}
	d, err := decodeFLAC(f.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	want := append(wav.Chunks(wav.Options{SampleRate: 44100, Sampler: opts.Sampler}), wav.Chunks(wav.Options{Instrument: opts.Instrument})...)
	if !bytes.Equal(d.riff, want) {
		t.Errorf("riff blocks hold %x, want %x", d.riff, want)
	}
	info, err := flac.Inspect(f.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	if info.SampleRate != 44100 || info.Channels != 2 || info.BitDepth != 24 || info.Frames != 5000 || info.MD5 != d.info.MD5sum {
		t.Errorf("Inspect read %+v", info)
	}
	if info.Sampler == nil || info.Sampler.UnityNote != 62 || len(info.Sampler.Loops) != 1 || info.Sampler.Loops[0] != opts.Sampler.Loops[0] {
		t.Errorf("Inspect read the sampler chunk as %+v", info.Sampler)
	}
	if info.Instrument == nil || *info.Instrument != *opts.Instrument {
		t.Errorf("Inspect read the instrument chunk as %+v", info.Instrument)
	}
}

// TestCompresses: a dithered 24-bit harmonic note takes well under the
// WAV's size. The figure is loose; it fails when prediction is broken and
// every block falls back to verbatim samples.
func TestCompresses(t *testing.T) {
	s := signal{"note", 2, 48000, harmonics(110)}
	var f bytes.Buffer
	if err := flac.Encode(&f, s.samples(), flac.Options{SampleRate: 48000, BitDepth: 24, Channels: 2, Dither: true}); err != nil {
		t.Fatal(err)
	}
	pcm := 48000 * 2 * 3
	if ratio := float64(f.Len()) / float64(pcm); ratio > 0.6 {
		t.Errorf("%d bytes for %d bytes of samples (%.2f)", f.Len(), pcm, ratio)
	}
}

// TestEncodeRejects: one case per option Encode cannot write.
func TestEncodeRejects(t *testing.T) {
	cases := []struct {
		opts    flac.Options
		samples int
		want    string
	}{
		{flac.Options{SampleRate: 48000, BitDepth: 32, Channels: 1}, 10, "bit depth 32"},
		{flac.Options{SampleRate: 48000, BitDepth: 16, Channels: 3}, 9, "3 channels"},
		{flac.Options{SampleRate: 0, BitDepth: 16, Channels: 1}, 10, "sample rate 0"},
		{flac.Options{SampleRate: 700000, BitDepth: 16, Channels: 1}, 10, "sample rate 700000"},
		{flac.Options{SampleRate: 48000, BitDepth: 16, Channels: 2}, 9, "whole 2-channel frames"},
		{flac.Options{SampleRate: 48000, BitDepth: 16, Channels: 1, Sampler: &wav.Sampler{Loops: []wav.Loop{{Start: 2, End: 10}}}}, 10, "smpl loop 0 [2, 10]"},
	}
	for _, c := range cases {
		var f bytes.Buffer
		err := flac.Encode(&f, make([]float64, c.samples), c.opts)
		if err == nil || !strings.Contains(err.Error(), c.want) || f.Len() != 0 {
			t.Errorf("%+v: got %v and %d bytes, want an error with %q and nothing written", c.opts, err, f.Len(), c.want)
		}
	}
}

// BenchmarkEncode: a 24-bit stereo harmonic note with dither, in bytes of
// PCM audio (what the WAV file's data holds) a second.
func BenchmarkEncode(b *testing.B) {
	s := signal{"note", 2, 4 * 48000, harmonics(110)}
	samples := s.samples()
	b.SetBytes(int64(len(samples) * 3))
	var f bytes.Buffer
	for b.Loop() {
		f.Reset()
		if err := flac.Encode(&f, samples, flac.Options{SampleRate: 48000, BitDepth: 24, Channels: 2, Dither: true, DitherSeed: 1}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(f.Len())/float64(len(samples)*3), "size/pcm")
}
