package flac

import (
	"encoding/binary"
	"fmt"

	"sinter/synth/wav"
)

// Info is what Inspect reads from a FLAC stream's metadata.
type Info struct {
	SampleRate int
	BitDepth   int
	Channels   int
	Frames     int64    // total frames; 0 where STREAMINFO says unknown
	MD5        [16]byte // of the decoded samples; all zero where not computed
	// Sampler and Instrument are the smpl and inst chunks of the stream's
	// APPLICATION "riff" blocks; nil where there is none.
	Sampler    *wav.Sampler
	Instrument *wav.Instrument
	// AudioOffset is the byte where the first frame starts.
	AudioOffset int
}

// Inspect reads a FLAC stream's metadata blocks (RFC 9639, section 8):
// STREAMINFO, which must come first, and the smpl and inst chunks of
// APPLICATION "riff" blocks, read as wav.InspectChunks reads them; other
// blocks are skipped. Errors name the byte offset of the problem. The
// audio frames are not read: decoding them is a decoder's job.
func Inspect(data []byte) (Info, error) {
	var info Info
	if len(data) < 4 || string(data[:4]) != "fLaC" {
		return info, inspectError(0, "the stream does not start with the marker \"fLaC\"")
	}
	var riff []byte
	off := 4
	for first := true; ; first = false {
		if len(data)-off < 4 {
			return info, inspectError(off, "the metadata ends without a block marked last (truncated)")
		}
		h := binary.BigEndian.Uint32(data[off:])
		last, kind, size := h>>31 == 1, int(h>>24&0x7F), int(h&0xFFFFFF)
		body := off + 4
		if size > len(data)-body {
			return info, inspectError(off+1, "metadata block of type %d claims %d bytes, %d follow (truncated)", kind, size, len(data)-body)
		}
		switch {
		case first && kind != blockStreamInfo:
			return info, inspectError(off, "the first metadata block has type %d; STREAMINFO (0) must come first", kind)
		case !first && kind == blockStreamInfo:
			return info, inspectError(off, "a second STREAMINFO block")
		case kind == 127:
			return info, inspectError(off, "metadata block type 127 is forbidden")
		case kind == blockStreamInfo:
			if err := streamInfo(&info, data[body:body+size], body); err != nil {
				return info, err
			}
		case kind == blockApplication:
			if size < 4 {
				return info, inspectError(body, "APPLICATION block of %d bytes has no room for its 4-byte id", size)
			}
			if string(data[body:body+4]) == "riff" {
				riff = append(riff, data[body+4:body+size]...)
			}
		}
		off = body + size
		if last {
			break
		}
	}
	info.AudioOffset = off
	if len(riff) > 0 {
		chunks, err := wav.InspectChunks(riff)
		if err != nil {
			return info, fmt.Errorf("flac: in the APPLICATION \"riff\" blocks: %w", err)
		}
		info.Sampler, info.Instrument = chunks.Sampler, chunks.Instrument
	}
	return info, nil
}

// streamInfo reads the STREAMINFO block body b found at byte off (RFC
// 9639, section 8.2).
func streamInfo(info *Info, b []byte, off int) error {
	if len(b) != 34 {
		return inspectError(off, "STREAMINFO of %d bytes; it has 34", len(b))
	}
	minBlock, maxBlock := binary.BigEndian.Uint16(b), binary.BigEndian.Uint16(b[2:])
	if minBlock < 16 || maxBlock < minBlock {
		return inspectError(off, "block sizes %d to %d; they must be 16 or more and rising", minBlock, maxBlock)
	}
	packed := binary.BigEndian.Uint64(b[10:])
	info.SampleRate = int(packed >> 44)
	info.Channels = int(packed>>41&7) + 1
	info.BitDepth = int(packed>>36&31) + 1
	info.Frames = int64(packed & (1<<36 - 1))
	copy(info.MD5[:], b[18:])
	if info.SampleRate == 0 {
		return inspectError(off+10, "sample rate 0")
	}
	if info.BitDepth < 4 {
		return inspectError(off+13, "%d bits a sample; FLAC has 4 to 32", info.BitDepth)
	}
	return nil
}

func inspectError(offset int, format string, args ...any) error {
	return fmt.Errorf("flac: byte %d: "+format, append([]any{offset}, args...)...)
}
