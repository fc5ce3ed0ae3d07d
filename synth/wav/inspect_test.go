package wav_test

import (
	"bytes"
	"encoding/binary"
	"reflect"
	"runtime"
	"strings"
	"testing"

	"sinter/synth/wav"
)

// chunk builds one RIFF chunk, with the zero pad byte an odd size needs
// (RIFF chunk rule, standards sheet §1.1).
func chunk(id string, body []byte) []byte {
	b := binary.LittleEndian.AppendUint32([]byte(id), uint32(len(body)))
	b = append(b, body...)
	if len(body)%2 == 1 {
		b = append(b, 0)
	}
	return b
}

// riff wraps chunks in a RIFF/WAVE header whose size covers them all.
func riff(chunks ...[]byte) []byte {
	b := []byte("RIFF\x00\x00\x00\x00WAVE")
	for _, c := range chunks {
		b = append(b, c...)
	}
	binary.LittleEndian.PutUint32(b[4:], uint32(len(b)-8))
	return b
}

// chunkBodies splits a file written by Encode into its chunk bodies by id,
// walking it independently of Inspect.
func chunkBodies(t *testing.T, data []byte) map[string][]byte {
	t.Helper()
	bodies := map[string][]byte{}
	for off := 12; off < len(data); {
		size := int(binary.LittleEndian.Uint32(data[off+4:]))
		bodies[string(data[off:off+4])] = data[off+8 : off+8+size]
		off += 8 + size + size%2
	}
	return bodies
}

func le32(v uint32) []byte { return binary.LittleEndian.AppendUint32(nil, v) }

// patched returns a copy of data with b written at off.
func patched(data []byte, off int, b []byte) []byte {
	c := bytes.Clone(data)
	copy(c[off:], b)
	return c
}

func TestInspectReadsBackEncode(t *testing.T) {
	for _, tc := range []struct {
		bits, channels      int
		formatTag, subTag   uint16
		sampler             *wav.Sampler
		instrument          *wav.Instrument
		rate, frames, valid int
	}{
		// Format tags per standards sheet §1.2 (Kabal): PCM 1, IEEE float 3,
		// EXTENSIBLE 0xFFFE with the PCM SubFormat for 24 bits.
		{bits: 16, channels: 1, formatTag: 1, subTag: 1, rate: 44100, frames: 1001, valid: 16},
		{bits: 16, channels: 2, formatTag: 1, subTag: 1, rate: 48000, frames: 10, valid: 16,
			sampler: sampler(wav.Loop{Start: 2, End: 9}), instrument: instrument},
		{bits: 24, channels: 1, formatTag: 0xFFFE, subTag: 1, rate: 96000, frames: 1001, valid: 24,
			sampler: &wav.Sampler{UnityNote: 127, PitchFraction: 0x028F5C29}},
		{bits: 24, channels: 2, formatTag: 0xFFFE, subTag: 1, rate: 44100, frames: 1000, valid: 24,
			instrument: &wav.Instrument{UnshiftedNote: 0, FineTune: 50, Gain: 127, HighNote: 127, HighVelocity: 127}},
		{bits: 32, channels: 1, formatTag: 3, subTag: 3, rate: 22050, frames: 7, valid: 32,
			sampler: sampler(wav.Loop{Start: 0, End: 6}, wav.Loop{Start: 3, End: 3}), instrument: instrument},
		{bits: 32, channels: 2, formatTag: 3, subTag: 3, rate: 192000, frames: 0, valid: 32},
	} {
		opts := wav.Options{SampleRate: tc.rate, BitDepth: tc.bits, Channels: tc.channels, Sampler: tc.sampler, Instrument: tc.instrument}
		got, err := wav.Inspect(encode(t, testSamples(tc.frames*tc.channels), opts))
		if err != nil {
			t.Errorf("%+v: Inspect: %v", opts, err)
			continue
		}
		want := wav.Info{
			FormatTag: tc.formatTag, SubFormat: tc.subTag,
			SampleRate: tc.rate, BitDepth: tc.bits, ValidBits: tc.valid, Channels: tc.channels,
			Frames: tc.frames, Sampler: tc.sampler, Instrument: tc.instrument,
		}
		if tc.sampler != nil {
			want.SamplePeriod = uint32(1_000_000_000 / tc.rate) // ns per sample, truncated ([RIFF94] smpl)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%d-bit %dch: Inspect\n got %+v\nwant %+v", tc.bits, tc.channels, got, want)
		}
	}
}

// TestInspectChunkOrder: readers must skip unknown chunks and honour pad
// bytes, and chunks may come in any order ([RIFF91] via the standards sheet §1.1).
func TestInspectChunkOrder(t *testing.T) {
	opts := wav.Options{SampleRate: 48000, BitDepth: 24, Channels: 1, Sampler: sampler(wav.Loop{Start: 1, End: 2}), Instrument: instrument}
	data := encode(t, testSamples(3), opts)
	want, err := wav.Inspect(data)
	if err != nil {
		t.Fatal(err)
	}
	c := chunkBodies(t, data)
	// Some writers drop the pad byte after the last chunk and leave it out
	// of the RIFF size (libraries sheet §1: go-audio's encoder).
	unpadded := riff(chunk("fmt ", c["fmt "]), chunk("smpl", c["smpl"]), chunk("inst", c["inst"]), chunk("data", c["data"]))
	unpadded = unpadded[:len(unpadded)-1]
	binary.LittleEndian.PutUint32(unpadded[4:], uint32(len(unpadded)-8))
	for name, file := range map[string][]byte{
		"metadata first":  riff(chunk("inst", c["inst"]), chunk("smpl", c["smpl"]), chunk("fmt ", c["fmt "]), chunk("data", c["data"])),
		"data before fmt": riff(chunk("data", c["data"]), chunk("fmt ", c["fmt "]), chunk("smpl", c["smpl"]), chunk("inst", c["inst"])),
		"odd unknown chunks": riff(chunk("LIST", []byte("INFOabc")), chunk("fmt ", c["fmt "]), chunk("junk", []byte{1}),
			chunk("data", c["data"]), chunk("cue ", make([]byte, 4)), chunk("smpl", c["smpl"]), chunk("inst", c["inst"]), chunk("zzzz", nil)),
		"last pad byte missing":              unpadded,
		"trailing bytes after the RIFF form": append(bytes.Clone(data), "garbage"...),
	} {
		got, err := wav.Inspect(file)
		if err != nil {
			t.Errorf("%s: %v", name, err)
		} else if !reflect.DeepEqual(got, want) {
			t.Errorf("%s: Inspect\n got %+v\nwant %+v", name, got, want)
		}
	}
}

func TestInspectRejects(t *testing.T) {
	opts := wav.Options{SampleRate: 48000, BitDepth: 16, Channels: 2, Sampler: sampler(wav.Loop{Start: 0, End: 3})}
	good := encode(t, testSamples(8), opts) // 4 frames
	c := chunkBodies(t, good)
	const fmtAt, dataAt = 12, 36 // canonical 44-byte PCM header (Kabal)
	smplAt := dataAt + 8 + 16
	for _, tc := range []struct {
		name string
		data []byte
		want string // substring of the error: what and where
	}{
		{"empty", nil, "byte 0: 0 bytes are too few"},
		{"not RIFF", []byte("ID3\x04\x00\x00\x00\x00\x00\x00\x00\x00mp3 data"), `byte 0: file starts with "ID3\x04"`},
		{"RF64", patched(good, 0, []byte("RF64")), `byte 0: file starts with "RF64"`},
		{"not WAVE", patched(good, 8, []byte("AVI ")), `byte 8: RIFF form type "AVI "`},
		{"truncated by one byte", good[:len(good)-1], "byte 4: RIFF size"},
		{"RIFF size too small", patched(good, 4, le32(3)), "byte 4: RIFF size 3"},
		{"chunk overruns the form", riff(chunk("fmt ", c["fmt "]), append([]byte("data"), le32(100)...)), `byte 36: "data" chunk claims 100 bytes, only 0 remain`},
		{"stray bytes", riff(chunk("fmt ", c["fmt "]), chunk("data", c["data"]), []byte("abc")), "byte 60: 3 stray bytes"},
		{"missing fmt", patched(good, fmtAt, []byte("junk")), `byte 12: no "fmt " chunk`},
		{"missing data", patched(good, dataAt, []byte("junk")), `byte 12: no "data" chunk`},
		{"duplicate fmt", riff(chunk("fmt ", c["fmt "]), chunk("fmt ", c["fmt "]), chunk("data", c["data"])), `byte 36: second "fmt " chunk (first at byte 12)`},
		{"short fmt", riff(chunk("fmt ", c["fmt "][:14]), chunk("data", c["data"])), "byte 16: fmt chunk of 14 bytes"},
		{"MP3 format tag", patched(good, fmtAt+8, []byte{0x55, 0}), "byte 20: format 0x0055 not supported"},
		{"zero channels", patched(good, fmtAt+10, []byte{0, 0}), "byte 22: no channels"},
		{"wrong block align", patched(good, fmtAt+20, []byte{3, 0}), "byte 32: block align 3, want 4"},
		{"wrong byte rate", patched(good, fmtAt+16, le32(48000)), "byte 28: byte rate 48000, want 192000"},
		{"partial frame", riff(chunk("fmt ", c["fmt "]), chunk("data", c["data"][:6])), "byte 40: data size 6 is not a whole number of 4-byte frames"},
		{"smpl loop count claims 4 G loops", patched(good, smplAt+8+28, le32(0xFFFFFFFF)), "byte 96: smpl claims 4294967295 loops"},
		{"smpl unity note 200", patched(good, smplAt+8+12, le32(200)), "byte 80: smpl unity note 200"},
		{"ping-pong loop", patched(good, smplAt+8+36+4, le32(1)), "byte 108: smpl loop 0 has type 1"},
		{"loop plays twice", patched(good, smplAt+8+36+20, le32(2)), "byte 124: smpl loop 0 plays 2 times"},
		{"loop end past the data", patched(good, smplAt+8+36+12, le32(4)), "byte 116: smpl loop 0 ends at frame 4, past the last frame 3"},
		{"loop start after end", patched(good, smplAt+8+36+8, le32(4)), "byte 112: smpl loop 0 starts at frame 4, after its end 3"},
		{"short inst", riff(chunk("fmt ", c["fmt "]), chunk("data", c["data"]), chunk("inst", []byte{1, 2, 3, 4, 5})), "byte 64: inst chunk of 5 bytes, need 7"},
	} {
		_, err := wav.Inspect(tc.data)
		if err == nil {
			t.Errorf("%s: Inspect accepted it", tc.name)
			continue
		}
		if !strings.HasPrefix(err.Error(), "wav: byte ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %q, want one containing %q", tc.name, err, tc.want)
		}
	}
}

// TestInspectRejectsEveryTruncation: every proper prefix of a valid file is
// rejected, for each chunk layout Encode writes.
func TestInspectRejectsEveryTruncation(t *testing.T) {
	for _, opts := range []wav.Options{
		{SampleRate: 44100, BitDepth: 16, Channels: 2},
		{SampleRate: 44100, BitDepth: 24, Channels: 1, Sampler: sampler(wav.Loop{Start: 0, End: 2}), Instrument: instrument},
		{SampleRate: 44100, BitDepth: 32, Channels: 1, Instrument: instrument},
	} {
		data := encode(t, testSamples(3*opts.Channels), opts)
		for n := range len(data) {
			if _, err := wav.Inspect(data[:n]); err == nil {
				t.Errorf("%d-bit file cut to %d of %d bytes: Inspect accepted it", opts.BitDepth, n, len(data))
			}
		}
	}
}

// TestInspectBoundedAllocation: size fields that claim gigabytes in a tiny
// file must not make Inspect allocate them.
func TestInspectBoundedAllocation(t *testing.T) {
	good := encode(t, testSamples(8), wav.Options{SampleRate: 48000, BitDepth: 16, Channels: 2, Sampler: sampler()})
	const smplAt = 60
	hostile := [][]byte{
		patched(good, smplAt+8+28, le32(0xFFFFFFFF)), // 4 G loops
		patched(good, smplAt+4, le32(0xFFFFFFF0)),    // smpl chunk of 4 GB
		patched(good, 40, le32(0xFFFFFFF0)),          // data chunk of 4 GB
		patched(good, 4, le32(0xFFFFFFFF)),           // RIFF form of 4 GB
	}
	for i, data := range hostile {
		const runs = 100
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		for range runs {
			if _, err := wav.Inspect(data); err == nil {
				t.Errorf("hostile file %d accepted", i)
			}
		}
		runtime.ReadMemStats(&after)
		if perRun := (after.TotalAlloc - before.TotalAlloc) / runs; perRun > 4096 {
			t.Errorf("hostile file %d: Inspect allocated %d bytes per call for a %d-byte file", i, perRun, len(data))
		}
	}
}

func FuzzInspect(f *testing.F) {
	for _, opts := range []wav.Options{
		{SampleRate: 48000, BitDepth: 16, Channels: 2, Sampler: sampler(wav.Loop{Start: 1, End: 2})},
		{SampleRate: 44100, BitDepth: 24, Channels: 1, Sampler: sampler(), Instrument: instrument},
		{SampleRate: 96000, BitDepth: 32, Channels: 1, Instrument: instrument},
	} {
		data := encode(f, testSamples(3*opts.Channels), opts)
		f.Add(data)
		f.Add(data[:len(data)-3])
		f.Add(patched(data, 4, le32(0xFFFFFFFF)))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		info, err := wav.Inspect(data)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "wav: byte ") {
				t.Errorf("error %q does not name a byte offset", err)
			}
			return
		}
		if info.Channels < 1 || info.BitDepth < 1 || info.SampleRate < 1 {
			t.Fatalf("accepted a format with no samples: %+v", info)
		}
		if frameBytes := (info.BitDepth + 7) / 8 * info.Channels; info.Frames > len(data)/frameBytes {
			t.Fatalf("%d frames of %d bytes in a %d-byte file", info.Frames, frameBytes, len(data))
		}
		if s := info.Sampler; s != nil {
			if len(s.Loops) > len(data)/24 {
				t.Fatalf("%d loops in a %d-byte file", len(s.Loops), len(data))
			}
			for _, l := range s.Loops {
				if l.Start > l.End || int(l.End) >= info.Frames {
					t.Fatalf("accepted loop %+v with %d frames", l, info.Frames)
				}
			}
		}

		// Whatever Encode can write from the Info must read back as the same Info.
		writable := info.Channels <= 2 && (info.FormatTag == 1 && info.BitDepth == 16 ||
			info.FormatTag == 0xFFFE && info.SubFormat == 1 && info.BitDepth == 24 && info.ValidBits == 24 ||
			info.FormatTag == 3 && info.BitDepth == 32)
		if !writable {
			return
		}
		opts := wav.Options{SampleRate: info.SampleRate, BitDepth: info.BitDepth, Channels: info.Channels,
			Sampler: info.Sampler, Instrument: info.Instrument}
		var buf bytes.Buffer
		if err := wav.Encode(&buf, make([]float64, info.Frames*info.Channels), opts); err != nil {
			return // metadata outside MIDI ranges, which Encode refuses to write
		}
		again, err := wav.Inspect(buf.Bytes())
		if err != nil {
			t.Fatalf("Inspect of re-encoded file: %v", err)
		}
		if info.Sampler != nil {
			info.SamplePeriod = uint32(1_000_000_000 / info.SampleRate)
		}
		if !reflect.DeepEqual(again, info) {
			t.Fatalf("re-encoded Info\n got %+v\nwant %+v", again, info)
		}
	})
}
