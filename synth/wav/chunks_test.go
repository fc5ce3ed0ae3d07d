package wav_test

import (
	"bytes"
	"reflect"
	"strings"
	"testing"

	"sinter/synth/wav"
)

// TestChunksAreEncodes: the chunks Chunks returns are the bytes Encode
// writes after the samples, and InspectChunks reads them back as Inspect
// reads the whole file.
func TestChunksAreEncodes(t *testing.T) {
	opts := wav.Options{SampleRate: 48000, BitDepth: 24, Channels: 2,
		Sampler:    &wav.Sampler{UnityNote: 61, PitchFraction: 7, Loops: []wav.Loop{{Start: 3, End: 9}}},
		Instrument: &wav.Instrument{UnshiftedNote: 61, LowNote: 59, HighNote: 63, LowVelocity: 1, HighVelocity: 127}}
	file := encode(t, make([]float64, 20), opts) // 10 frames, 60 data bytes: no pad
	chunks := wav.Chunks(opts)
	if !bytes.HasSuffix(file, chunks) {
		t.Fatalf("Chunks is not the end of the encoded file:\n%x\n%x", chunks, file)
	}
	whole, err := wav.Inspect(file)
	if err != nil {
		t.Fatal(err)
	}
	got, err := wav.InspectChunks(chunks)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.Sampler, whole.Sampler) || !reflect.DeepEqual(got.Instrument, whole.Instrument) {
		t.Errorf("InspectChunks read %+v %+v, Inspect %+v %+v", got.Sampler, got.Instrument, whole.Sampler, whole.Instrument)
	}
}

// TestInspectChunksRejects: one case per malformed run of chunks.
func TestInspectChunksRejects(t *testing.T) {
	good := wav.Chunks(wav.Options{SampleRate: 48000, Sampler: &wav.Sampler{UnityNote: 60}, Instrument: &wav.Instrument{}})
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"short header", good[:5], "byte 0: 5 bytes left"},
		{"chunk past the end", good[:20], "byte 4: smpl chunk of 36 bytes, only 12 follow"},
		{"unity note", append(append([]byte{}, good[:20]...), append([]byte{200}, good[21:]...)...), "smpl unity note 200"},
		{"short inst", append(append([]byte{}, good[:44]...), 'i', 'n', 's', 't', 2, 0, 0, 0, 1, 2), "inst chunk of 2 bytes"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := wav.InspectChunks(c.data)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("got %v, want an error with %q", err, c.want)
			}
		})
	}
}

// FuzzInspectChunks: any bytes give chunks or an error, never a panic.
func FuzzInspectChunks(f *testing.F) {
	f.Add(wav.Chunks(wav.Options{SampleRate: 48000, Sampler: &wav.Sampler{UnityNote: 60, Loops: []wav.Loop{{Start: 1, End: 2}}}, Instrument: &wav.Instrument{}}))
	f.Add([]byte("smpl\x00\x00\x00\x00"))
	f.Add([]byte("inst\x07\x00\x00\x00\x3c\x00\x00\x00\x7f\x01\x7f\x00"))
	f.Fuzz(func(t *testing.T, data []byte) {
		wav.InspectChunks(data)
	})
}
