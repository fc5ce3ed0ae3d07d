package wav

import (
	"bytes"
	"encoding/binary"
	"fmt"
)

// Info is what Inspect reads back from a file.
type Info struct {
	FormatTag    uint16 // 1 PCM, 3 IEEE float, 0xFFFE extensible
	SubFormat    uint16 // for extensible: 1 PCM or 3 float (first 2 bytes of the GUID); else equal to FormatTag
	SampleRate   int    // Hz
	BitDepth     int    // bits per sample container (wBitsPerSample)
	ValidBits    int    // wValidBitsPerSample for extensible; else equal to BitDepth
	Channels     int
	Frames       int
	Sampler      *Sampler    // nil if the file has no smpl chunk
	SamplePeriod uint32      // ns per sample as stored in smpl, 0 if none
	Instrument   *Instrument // nil if none
}

// Inspect parses a WAV file's chunks and returns its format and sampler
// metadata. Chunks may come in any order; unknown chunks are skipped, and
// the pad byte after an odd-sized chunk is honoured (a missing one after the
// last chunk is tolerated, as some writers omit it). Bytes past the end of
// the RIFF form, as its size field gives it, are ignored.
//
// Inspect reports an error, naming the problem and the byte offset where it
// was found, for a file that is not RIFF/WAVE, is truncated, lacks a fmt or
// data chunk, holds a format other than integer PCM or IEEE float, has
// inconsistent fmt fields, or has smpl loops that Loop cannot represent
// (only forward, endless, whole-frame loops inside the data).
//
// Inspect never allocates more than a small multiple of len(data), whatever
// the size fields claim.
func Inspect(data []byte) (Info, error) {
	var info Info
	if len(data) < riffHeaderSize {
		return info, formatError(0, "%d bytes are too few for a RIFF header (12)", len(data))
	}
	if id := string(data[0:4]); id != "RIFF" {
		return info, formatError(0, "file starts with %q, not \"RIFF\"", id)
	}
	if form := string(data[8:12]); form != "WAVE" {
		return info, formatError(8, "RIFF form type %q, not \"WAVE\"", form)
	}
	riffSize := binary.LittleEndian.Uint32(data[4:])
	end := int64(riffSize) + chunkHeaderSize
	if end > int64(len(data)) {
		return info, formatError(4, "RIFF size %d needs a %d-byte file, have %d (truncated)", riffSize, end, len(data))
	}
	if end < riffHeaderSize {
		return info, formatError(4, "RIFF size %d is too small to hold the form type", riffSize)
	}

	var fmtAt, dataAt, smplAt, instAt int // chunk offsets; 0 means not seen
	var blockAlign, dataSize int
	for off := riffHeaderSize; int64(off) < end; {
		if end-int64(off) < chunkHeaderSize {
			return info, formatError(off, "%d stray bytes are too few for a chunk header", end-int64(off))
		}
		id := string(data[off : off+4])
		size := binary.LittleEndian.Uint32(data[off+4:])
		bodyAt := off + chunkHeaderSize
		if int64(size) > end-int64(bodyAt) {
			return info, formatError(off, "%q chunk claims %d bytes, only %d remain (truncated)", id, size, end-int64(bodyAt))
		}
		body := data[bodyAt : bodyAt+int(size)]

		var seen *int
		var err error
		switch id {
		case "fmt ":
			seen = &fmtAt
			blockAlign, err = parseFormat(&info, body, off)
		case "data":
			seen = &dataAt
			dataSize = len(body)
		case "smpl":
			seen = &smplAt
			err = parseSampler(&info, body, off)
		case "inst":
			seen = &instAt
			err = parseInstrument(&info, body, off)
		}
		if seen != nil {
			if *seen != 0 {
				return info, formatError(off, "second %q chunk (first at byte %d)", id, *seen)
			}
			*seen = off
		}
		if err != nil {
			return info, err
		}
		off = bodyAt + int(size) + int(size%2)
	}

	if fmtAt == 0 {
		return info, formatError(riffHeaderSize, "no \"fmt \" chunk in the RIFF form (bytes %d to %d)", riffHeaderSize, end)
	}
	if dataAt == 0 {
		return info, formatError(riffHeaderSize, "no \"data\" chunk in the RIFF form (bytes %d to %d)", riffHeaderSize, end)
	}
	if dataSize%blockAlign != 0 {
		return info, formatError(dataAt+4, "data size %d is not a whole number of %d-byte frames", dataSize, blockAlign)
	}
	info.Frames = dataSize / blockAlign
	if s := info.Sampler; s != nil {
		for i, l := range s.Loops {
			if int64(l.End) >= int64(info.Frames) {
				return info, formatError(loopAt(smplAt, i)+12, "smpl loop %d ends at frame %d, past the last frame %d", i, l.End, info.Frames-1)
			}
		}
	}
	return info, nil
}

// parseFormat fills info from the fmt chunk body found at byte off and
// returns the block alignment, which the data chunk is checked against.
func parseFormat(info *Info, body []byte, off int) (blockAlign int, err error) {
	le := binary.LittleEndian
	at := off + chunkHeaderSize // offset of body[0], for error messages
	if len(body) < fmtPCMSize {
		return 0, formatError(off+4, "fmt chunk of %d bytes, need at least %d", len(body), fmtPCMSize)
	}
	info.FormatTag = le.Uint16(body[0:])
	info.SubFormat = info.FormatTag
	info.Channels = int(le.Uint16(body[2:]))
	info.SampleRate = int(le.Uint32(body[4:]))
	byteRate := le.Uint32(body[8:])
	blockAlign = int(le.Uint16(body[12:]))
	info.BitDepth = int(le.Uint16(body[14:]))
	info.ValidBits = info.BitDepth

	if info.FormatTag == tagExtensible {
		if len(body) < fmtExtSize {
			return 0, formatError(off+4, "extensible fmt chunk of %d bytes, need %d", len(body), fmtExtSize)
		}
		if cb := le.Uint16(body[16:]); cb < extCbSize {
			return 0, formatError(at+16, "extensible cbSize %d, need at least %d", cb, extCbSize)
		}
		info.ValidBits = int(le.Uint16(body[18:]))
		info.SubFormat = le.Uint16(body[24:])
		if !bytes.Equal(body[26:40], guidTail[:]) {
			return 0, formatError(at+24, "SubFormat GUID % X is not a KSDATAFORMAT_SUBTYPE GUID", body[24:40])
		}
		if info.ValidBits < 1 || info.ValidBits > info.BitDepth {
			return 0, formatError(at+18, "%d valid bits in a %d-bit container", info.ValidBits, info.BitDepth)
		}
	}

	switch {
	case info.SubFormat != tagPCM && info.SubFormat != tagFloat:
		return 0, formatError(at, "format %#04x not supported (PCM or IEEE float)", info.SubFormat)
	case info.SubFormat == tagFloat && info.BitDepth != 32 && info.BitDepth != 64:
		return 0, formatError(at+14, "%d-bit IEEE float not defined (32 or 64)", info.BitDepth)
	case info.BitDepth < 1 || info.BitDepth > 64:
		return 0, formatError(at+14, "%d bits per sample out of range (1 to 64)", info.BitDepth)
	case info.Channels < 1:
		return 0, formatError(at+2, "no channels")
	case info.SampleRate < 1:
		return 0, formatError(at+4, "sample rate 0")
	}
	// Containers are whole bytes; both sizes below are implied by the
	// channels, rate and bits, so a mismatch means a broken writer.
	if want := info.Channels * ((info.BitDepth + 7) / 8); blockAlign != want {
		return 0, formatError(at+12, "block align %d, want %d for %d channels of %d bits", blockAlign, want, info.Channels, info.BitDepth)
	}
	if want := uint64(info.SampleRate) * uint64(blockAlign); uint64(byteRate) != want {
		return 0, formatError(at+8, "byte rate %d, want %d (sample rate × block align)", byteRate, want)
	}
	return blockAlign, nil
}

// parseSampler fills info from the smpl chunk body found at byte off.
func parseSampler(info *Info, body []byte, off int) error {
	le := binary.LittleEndian
	at := off + chunkHeaderSize
	if len(body) < smplBaseSize {
		return formatError(off+4, "smpl chunk of %d bytes, need at least %d", len(body), smplBaseSize)
	}
	unity := le.Uint32(body[12:])
	if unity > 127 {
		return formatError(at+12, "smpl unity note %d out of MIDI range 0 to 127", unity)
	}
	count := le.Uint32(body[28:])
	samplerData := le.Uint32(body[32:])
	// Sizes are checked in 64 bits before any allocation, so a hostile count
	// cannot overflow or make Inspect allocate more than the chunk holds.
	if need := uint64(smplBaseSize) + uint64(smplLoopSize)*uint64(count) + uint64(samplerData); need > uint64(len(body)) {
		return formatError(at+28, "smpl claims %d loops and %d sampler data bytes (%d bytes), chunk has %d", count, samplerData, need, len(body))
	}
	s := &Sampler{UnityNote: uint8(unity), PitchFraction: le.Uint32(body[16:])}
	if count > 0 {
		s.Loops = make([]Loop, count)
	}
	for i := range s.Loops {
		rec := body[smplBaseSize+smplLoopSize*i:]
		recAt := loopAt(off, i)
		kind, fraction, plays := le.Uint32(rec[4:]), le.Uint32(rec[16:]), le.Uint32(rec[20:])
		l := Loop{Start: le.Uint32(rec[8:]), End: le.Uint32(rec[12:])}
		switch {
		case kind != 0:
			return formatError(recAt+4, "smpl loop %d has type %d; only forward loops (0) are supported", i, kind)
		case fraction != 0:
			return formatError(recAt+16, "smpl loop %d has fraction %#x; only whole-frame loops are supported", i, fraction)
		case plays != 0:
			return formatError(recAt+20, "smpl loop %d plays %d times; only endless loops (0) are supported", i, plays)
		case l.Start > l.End:
			return formatError(recAt+8, "smpl loop %d starts at frame %d, after its end %d", i, l.Start, l.End)
		}
		s.Loops[i] = l
	}
	info.Sampler = s
	info.SamplePeriod = le.Uint32(body[8:])
	return nil
}

// loopAt is the file offset of loop record i in the smpl chunk at byte off.
func loopAt(off, i int) int {
	return off + chunkHeaderSize + smplBaseSize + smplLoopSize*i
}

// parseInstrument fills info from the inst chunk body found at byte off.
func parseInstrument(info *Info, body []byte, off int) error {
	if len(body) < instSize {
		return formatError(off+4, "inst chunk of %d bytes, need %d", len(body), instSize)
	}
	info.Instrument = &Instrument{
		UnshiftedNote: body[0],
		FineTune:      int8(body[1]),
		Gain:          int8(body[2]),
		LowNote:       body[3],
		HighNote:      body[4],
		LowVelocity:   body[5],
		HighVelocity:  body[6],
	}
	return nil
}

// formatError reports a malformed file, prefixed with the byte offset at
// which the problem was found.
func formatError(offset int, format string, args ...any) error {
	return fmt.Errorf("wav: byte %d: "+format, append([]any{offset}, args...)...)
}
