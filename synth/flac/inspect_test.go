package flac_test

import (
	"bytes"
	"strings"
	"testing"

	"sinter/synth/flac"
	"sinter/synth/wav"
)

func encoded(t testing.TB) []byte {
	var f bytes.Buffer
	err := flac.Encode(&f, make([]float64, 200), flac.Options{SampleRate: 48000, BitDepth: 16, Channels: 2,
		Sampler: &wav.Sampler{UnityNote: 60, Loops: []wav.Loop{{Start: 10, End: 99}}}, Instrument: &wav.Instrument{HighNote: 127, HighVelocity: 127}})
	if err != nil {
		t.Fatal(err)
	}
	return f.Bytes()
}

// TestInspectRejects: one case per malformed stream, with the message and
// byte offset.
func TestInspectRejects(t *testing.T) {
	good := encoded(t)
	patch := func(off int, b ...byte) []byte {
		d := bytes.Clone(good)
		copy(d[off:], b)
		return d
	}
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"no marker", []byte("RIFF...."), "byte 0: the stream does not start"},
		{"truncated metadata", good[:6], "byte 4: the metadata ends"},
		{"block past the end", good[:30], "byte 5: metadata block of type 0 claims 34 bytes, 22 follow"},
		{"application first", patch(4, 0x02), "byte 4: the first metadata block has type 2"},
		{"short stream info", patch(4, 0x00, 0x00, 0x00, 0x10), "byte 8: STREAMINFO of 16 bytes"},
		{"tiny block size", patch(8, 0x00, 0x08), "block sizes 8 to 4096"},
		{"rate zero", patch(18, 0, 0, 0x0F), "byte 18: sample rate 0"},
		{"bad smpl in riff block", patch(42+4+4+8+12, 200), "flac: in the APPLICATION \"riff\" blocks: wav: byte 20: smpl unity note 200"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := flac.Inspect(c.data)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("got %v, want an error with %q", err, c.want)
			}
		})
	}
}

// FuzzInspect: any bytes give metadata or an error, never a panic, and a
// stream Inspect accepts has its audio inside the data.
func FuzzInspect(f *testing.F) {
	f.Add(encoded(f))
	f.Add([]byte("fLaC"))
	f.Add([]byte("fLaC\x80\x00\x00\x00"))
	f.Fuzz(func(t *testing.T, data []byte) {
		info, err := flac.Inspect(data)
		if err == nil && (info.AudioOffset > len(data) || info.AudioOffset < 8) {
			t.Fatalf("audio at byte %d of %d", info.AudioOffset, len(data))
		}
	})
}
