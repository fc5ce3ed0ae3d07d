package wav

import (
	"encoding/binary"
	"math"
)

// Audio is a decoded recording: its format and its samples, one slice per
// channel, at full scale ±1.
type Audio struct {
	Info    Info        // the fmt chunk's fields; Frames is the number decoded
	Samples [][]float64 // Samples[c][i] is channel c at frame i
}

// Decode reads the samples of a RIFF/WAVE file: integer PCM of 8
// (unsigned), 16, 24 or 32 bits and IEEE float of 32 or 64 bits, plain or
// WAVE_FORMAT_EXTENSIBLE, any number of channels. An integer code c of a
// b-bit container becomes c / 2^(b−1), so full scale is ±1 as Encode
// writes it (valid bits narrower than the container are left-justified in
// it, so the same division holds).
//
// Only the fmt and data chunks are read; every other chunk is skipped
// whatever it holds, so a recording that a sampler editor gave a loop of
// any kind still reads (Inspect, which checks sinter's own files, refuses
// loops it cannot represent). The container must still be sound: an error
// names the byte offset of a file that is not RIFF/WAVE, is truncated, has
// a chunk that runs past the RIFF form, lacks fmt or data, holds another
// format, or has fmt fields that disagree with each other.
//
// Decode allocates the samples the data chunk holds and nothing in
// proportion to what size fields merely claim.
func Decode(data []byte) (Audio, error) {
	var a Audio
	if len(data) < riffHeaderSize {
		return a, formatError(0, "%d bytes are too few for a RIFF header (12)", len(data))
	}
	if id := string(data[0:4]); id != "RIFF" {
		return a, formatError(0, "file starts with %q, not \"RIFF\"", id)
	}
	if form := string(data[8:12]); form != "WAVE" {
		return a, formatError(8, "RIFF form type %q, not \"WAVE\"", form)
	}
	end := int64(binary.LittleEndian.Uint32(data[4:])) + chunkHeaderSize
	if end > int64(len(data)) {
		return a, formatError(4, "RIFF size %d needs a %d-byte file, have %d (truncated)", end-chunkHeaderSize, end, len(data))
	}
	fmtAt, dataAt, blockAlign := -1, -1, 0
	var body []byte
	for off := riffHeaderSize; int64(off) < end; {
		if end-int64(off) < chunkHeaderSize {
			return a, formatError(off, "%d stray bytes are too few for a chunk header", end-int64(off))
		}
		id, size := string(data[off:off+4]), binary.LittleEndian.Uint32(data[off+4:])
		bodyAt := off + chunkHeaderSize
		if int64(size) > end-int64(bodyAt) {
			return a, formatError(off, "%q chunk claims %d bytes, only %d remain (truncated)", id, size, end-int64(bodyAt))
		}
		switch id {
		case "fmt ", "data":
			first := &fmtAt
			if id == "data" {
				first = &dataAt
				body = data[bodyAt : bodyAt+int(size)]
			}
			if *first >= 0 {
				return a, formatError(off, "second %q chunk (first at byte %d)", id, *first)
			}
			*first = off
			if id == "fmt " {
				var err error
				if blockAlign, err = parseFormat(&a.Info, data[bodyAt:bodyAt+int(size)], off); err != nil {
					return a, err
				}
			}
		}
		off = bodyAt + int(size) + int(size%2)
	}
	switch {
	case fmtAt < 0:
		return a, formatError(riffHeaderSize, "no \"fmt \" chunk in the RIFF form")
	case dataAt < 0:
		return a, formatError(riffHeaderSize, "no \"data\" chunk in the RIFF form")
	case len(body)%blockAlign != 0:
		return a, formatError(dataAt+4, "data size %d is not a whole number of %d-byte frames", len(body), blockAlign)
	}
	info := &a.Info
	width := blockAlign / info.Channels
	if info.SubFormat == tagPCM && width > 4 {
		return a, formatError(fmtAt+chunkHeaderSize+14, "%d-bit integer samples not supported (8 to 32)", info.BitDepth)
	}
	info.Frames = len(body) / blockAlign
	a.Samples = make([][]float64, info.Channels)
	for c := range a.Samples {
		a.Samples[c] = make([]float64, info.Frames)
	}
	scale := 1 / math.Ldexp(1, 8*width-1)
	le := binary.LittleEndian
	for i := range info.Frames {
		for c, ch := range a.Samples {
			b := body[i*blockAlign+c*width:]
			switch {
			case info.SubFormat == tagFloat && width == 4:
				ch[i] = float64(math.Float32frombits(le.Uint32(b)))
			case info.SubFormat == tagFloat:
				ch[i] = math.Float64frombits(le.Uint64(b))
			case width == 1: // 8-bit PCM is unsigned, 128 its zero
				ch[i] = float64(int(b[0])-128) * scale
			default:
				// Sign-extend the little-endian code from its top byte.
				v := int32(int8(b[width-1]))
				for k := width - 2; k >= 0; k-- {
					v = v<<8 | int32(b[k])
				}
				ch[i] = float64(v) * scale
			}
		}
	}
	return a, nil
}
