package wav_test

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"strings"
	"testing"

	gowav "github.com/go-audio/wav"

	"sinter/synth/wav"
)

// TestDecodeAgreesWithGoAudio reads files of every format Encode writes
// with Decode and with go-audio/wav's decoder, the independent reader, and
// compares every sample: integer codes scaled by 2^(bits−1), float32 as
// go-audio returns it, raw bits (libraries sheet §1).
func TestDecodeAgreesWithGoAudio(t *testing.T) {
	for _, bits := range []int{16, 24, 32} {
		for _, channels := range []int{1, 2} {
			t.Run(fmt.Sprintf("%dbit/%dch", bits, channels), func(t *testing.T) {
				samples := testSamples(1001 * channels)
				opts := wav.Options{SampleRate: 44100, BitDepth: bits, Channels: channels, Sampler: sampler(wav.Loop{Start: 1, End: 5}), Instrument: instrument}
				data := encode(t, samples, opts)
				a, err := wav.Decode(data)
				if err != nil {
					t.Fatal(err)
				}
				if a.Info.SampleRate != 44100 || a.Info.Channels != channels || a.Info.Frames != 1001 || len(a.Samples) != channels {
					t.Fatalf("read %+v with %d channels", a.Info, len(a.Samples))
				}
				buf, err := gowav.NewDecoder(bytes.NewReader(data)).FullPCMBuffer()
				if err != nil {
					t.Fatal(err)
				}
				for i := range samples {
					got := a.Samples[i%channels][i/channels]
					want := float64(buf.Data[i]) / math.Ldexp(1, bits-1)
					if bits == 32 {
						want = float64(math.Float32frombits(uint32(buf.Data[i])))
					}
					if got != want {
						t.Fatalf("sample %d = %v, go-audio reads %v", i, got, want)
					}
				}
			})
		}
	}
}

// fmtBody is a plain fmt chunk body for PCM or float (format tag tag).
func fmtBody(tag, channels, rate, bits int) []byte {
	align := channels * (bits + 7) / 8
	b := binary.LittleEndian.AppendUint16(nil, uint16(tag))
	b = binary.LittleEndian.AppendUint16(b, uint16(channels))
	b = binary.LittleEndian.AppendUint32(b, uint32(rate))
	b = binary.LittleEndian.AppendUint32(b, uint32(rate*align))
	b = binary.LittleEndian.AppendUint16(b, uint16(align))
	return binary.LittleEndian.AppendUint16(b, uint16(bits))
}

// TestDecodeFormats checks the scaling of the formats Encode does not
// write against values worked out by hand from the format's definition
// (two's complement, 8-bit offset binary, IEEE float; standards sheet
// §1.2), and that chunks other than fmt and data are skipped whatever
// they hold.
func TestDecodeFormats(t *testing.T) {
	f64 := func(xs ...float64) []byte {
		var b []byte
		for _, x := range xs {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
		}
		return b
	}
	pingPong := make([]byte, 36+24) // smpl with one alternating loop, which Inspect refuses
	binary.LittleEndian.PutUint32(pingPong[28:], 1)
	binary.LittleEndian.PutUint32(pingPong[36+4:], 1)
	for _, tc := range []struct {
		name string
		file []byte
		want []float64
	}{
		{"8-bit unsigned", riff(chunk("fmt ", fmtBody(1, 1, 8000, 8)), chunk("data", []byte{128, 255, 0})), []float64{0, 127.0 / 128, -1}},
		{"32-bit integer", riff(chunk("fmt ", fmtBody(1, 1, 8000, 32)), chunk("data", binary.LittleEndian.AppendUint32(le32(1<<30), 0x80000000))), []float64{0.5, -1}},
		{"24-bit negative", riff(chunk("fmt ", fmtBody(1, 1, 8000, 24)), chunk("data", []byte{0x00, 0x00, 0xC0, 0xFF, 0xFF, 0xFF})), []float64{-0.5, -1.0 / (1 << 23)}},
		{"64-bit float", riff(chunk("fmt ", fmtBody(3, 1, 8000, 64)), chunk("data", f64(0.25, -2))), []float64{0.25, -2}},
		{"odd chunk and ping-pong loop skipped", riff(chunk("junk", []byte{1, 2, 3}), chunk("smpl", pingPong), chunk("fmt ", fmtBody(1, 1, 8000, 16)), chunk("data", []byte{0x00, 0x40})), []float64{0.5}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			a, err := wav.Decode(tc.file)
			if err != nil {
				t.Fatal(err)
			}
			if fmt.Sprint(a.Samples[0]) != fmt.Sprint(tc.want) {
				t.Errorf("read %v, want %v", a.Samples[0], tc.want)
			}
		})
	}
}

// TestDecodeRejects names the problem and its byte offset for each broken
// file, one case per fault.
func TestDecodeRejects(t *testing.T) {
	good := encode(t, testSamples(8), wav.Options{SampleRate: 48000, BitDepth: 16, Channels: 1})
	pcm := chunk("fmt ", fmtBody(1, 1, 8000, 16))
	for _, tc := range []struct {
		name string
		file []byte
		want string
	}{
		{"empty", nil, "byte 0: 0 bytes are too few"},
		{"not RIFF", []byte("ID3\x03\x00\x00\x00\x00\x00\x00\x00\x00 an mp3"), `byte 0: file starts with "ID3\x03"`},
		{"not WAVE", patched(good, 8, []byte("AVI ")), `byte 8: RIFF form type "AVI "`},
		{"truncated", good[:len(good)-3], "byte 4: RIFF size"},
		{"chunk past the form", riff(pcm, []byte("data\xff\x00\x00\x00")), `byte 36: "data" chunk claims 255 bytes`},
		{"stray bytes", riff(pcm, chunk("data", []byte{0, 0}), []byte{1, 2}), "byte 46: 2 stray bytes"},
		{"no fmt", riff(chunk("data", []byte{0, 0})), `no "fmt " chunk`},
		{"no data", riff(pcm), `no "data" chunk`},
		{"two data chunks", riff(pcm, chunk("data", []byte{0, 0}), chunk("data", []byte{0, 0})), `byte 46: second "data" chunk (first at byte 36)`},
		{"partial frame", riff(pcm, chunk("data", []byte{0, 0, 0})), "data size 3 is not a whole number of 2-byte frames"},
		{"mp3 in a WAV", riff(chunk("fmt ", fmtBody(0x55, 1, 8000, 16)), chunk("data", []byte{0, 0})), "format 0x0055 not supported"},
		{"40-bit integer", riff(chunk("fmt ", fmtBody(1, 1, 8000, 40)), chunk("data", make([]byte, 5))), "40-bit integer samples not supported"},
		{"block align wrong", patched(good, 32, []byte{4, 0}), "byte 32: block align 4"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := wav.Decode(tc.file)
			if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "wav: byte ") {
				t.Errorf("error %v, want one naming a byte and %q", err, tc.want)
			}
		})
	}
}

// FuzzDecode: any bytes give samples consistent with the format read, or
// an error naming a byte offset; never a panic, and never more samples
// than the file holds bytes.
func FuzzDecode(f *testing.F) {
	for _, opts := range []wav.Options{
		{SampleRate: 48000, BitDepth: 16, Channels: 2, Sampler: sampler(wav.Loop{Start: 1, End: 2})},
		{SampleRate: 44100, BitDepth: 24, Channels: 1, Instrument: instrument},
		{SampleRate: 96000, BitDepth: 32, Channels: 1},
	} {
		data := encode(f, testSamples(3*opts.Channels), opts)
		f.Add(data)
		f.Add(data[:len(data)-3])
		f.Add(patched(data, 4, le32(0xFFFFFFFF)))
	}
	f.Add(riff(chunk("fmt ", fmtBody(1, 8, 8000, 8)), chunk("data", make([]byte, 16))))
	f.Fuzz(func(t *testing.T, data []byte) {
		a, err := wav.Decode(data)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "wav: byte ") {
				t.Errorf("error %q does not name a byte offset", err)
			}
			return
		}
		if len(a.Samples) != a.Info.Channels || a.Info.Channels < 1 {
			t.Fatalf("%d channels of samples for %+v", len(a.Samples), a.Info)
		}
		for _, ch := range a.Samples {
			if len(ch) != a.Info.Frames || len(ch)*a.Info.Channels > len(data) {
				t.Fatalf("%d frames in a %d-byte file", len(ch), len(data))
			}
			for _, x := range ch {
				if a.Info.SubFormat == 1 && (x < -1 || x >= 1) {
					t.Fatalf("integer sample %v outside [-1, 1)", x)
				}
			}
		}
	})
}
