package mapping_test

import (
	"bytes"
	"errors"
	"reflect"
	"strings"
	"testing"

	"sinter/synth/mapping"
)

// TestReadSFZ reads mappings written by hand: one case per construct of
// the SFZ format (sfzformat.com: headers, opcode=value, sample paths with
// spaces, "//" comments, default_path under <control>, opcodes inherited
// from <global>, <master> and <group> and reset by the next header of
// their level).
func TestReadSFZ(t *testing.T) {
	type region struct {
		line, column int
		sample       string
		lokey        string
	}
	cases := []struct {
		name string
		src  string
		want []region
	}{
		{"one region", "<region> sample=a.wav lokey=60\n", []region{{1, 1, "a.wav", "60"}}},
		{"spaces in a path", "<region> sample=my pad/a b.wav lokey=61 hikey=62\n", []region{{1, 1, "my pad/a b.wav", "61"}}},
		{"path at the end of the line", "<region>lokey=1 sample=dir\\x y.wav  \n", []region{{1, 1, `dir\x y.wav`, "1"}}},
		{"headers and comments", "// title\n<group> ampeg_release=0.5 // longest\n<region> sample=a.wav lokey=1 /* old: sample=b.wav */\n  <region> sample=c.wav\n",
			[]region{{3, 1, "a.wav", "1"}, {4, 3, "c.wav", ""}}},
		{"comment over lines", "<region> sample=a.wav /* one\n<region> sample=b.wav\n */ lokey=5\n", []region{{1, 1, "a.wav", "5"}}},
		{"inherited", "<global> lokey=10\n<group> sample=g.wav\n<region>\n<region> sample=r.wav lokey=11\n<group>\n<region>\n",
			[]region{{3, 1, "g.wav", "10"}, {4, 1, "r.wav", "11"}, {6, 1, "", "10"}}},
		{"master resets groups", "<group> sample=g.wav\n<master>\n<region>\n", []region{{3, 1, "", ""}}},
		{"default path", "<control> default_path=samples/\n<region> sample=a.wav\n<control>\n<region> sample=b.wav\n",
			[]region{{2, 1, "samples/a.wav", ""}, {4, 1, "b.wav", ""}}},
		{"other headers", "<curve> curve_index=1 v000=0\n<region> sample=a.wav\n", []region{{2, 1, "a.wav", ""}}},
		{"several on a line", "<region> sample=a.wav <region> sample=b.wav\n", []region{{1, 1, "a.wav", ""}, {1, 23, "b.wav", ""}}},
		{"empty", "", nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := mapping.ReadSFZ(strings.NewReader(c.src))
			if err != nil {
				t.Fatal(err)
			}
			var regions []region
			for _, r := range got {
				regions = append(regions, region{r.Line, r.Column, r.Sample, r.Opcodes["lokey"]})
			}
			if !reflect.DeepEqual(regions, c.want) {
				t.Errorf("got  %+v\nwant %+v", regions, c.want)
			}
		})
	}
}

// TestReadSFZErrors: each thing the reader refuses, with its line and
// column.
func TestReadSFZErrors(t *testing.T) {
	cases := []struct {
		name         string
		src          string
		line, column int
		msg          string
	}{
		{"opcode before a header", "sample=a.wav\n", 1, 1, "comes before any header"},
		{"unclosed header", "<region> sample=a.wav\n<group\n", 2, 1, "not closed"},
		{"not a header", "<region>\n<re gion>\n", 2, 1, "is not a header"},
		{"stray text", "<region> sample=a.wav\n  lokey 60\n", 2, 3, "expected a header such as <region> or an opcode"},
		{"include", "<region> sample=a.wav\n#include \"more.sfz\"\n", 2, 1, "preprocessor"},
		{"define", "#define $KEY 60\n", 1, 1, "preprocessor"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := mapping.ReadSFZ(strings.NewReader(c.src))
			var re *mapping.ReadError
			if !errors.As(err, &re) || re.Line != c.line || re.Column != c.column || !strings.Contains(re.Msg, c.msg) {
				t.Errorf("error %v; want %d:%d with %q", err, c.line, c.column, c.msg)
			}
		})
	}
}

// TestReadWhatWriteWrites: the reader reads back every region the writer
// writes, in order, with its sample and opcodes.
func TestReadWhatWriteWrites(t *testing.T) {
	regions := []mapping.Region{
		{Sample: "pad_060_C4_v064.wav", Root: 60, LowKey: 58, HighKey: 61, LowVel: 1, HighVel: 64, SeqPosition: 1, SeqLength: 1},
		{Sample: "pad_064_E4_v127_rr2.wav", Root: 64, LowKey: 62, HighKey: 64, LowVel: 65, HighVel: 127, Looped: true, LoopStart: 100, LoopEnd: 4099, SeqPosition: 2, SeqLength: 3},
	}
	var buf bytes.Buffer
	if err := mapping.WriteSFZ(&buf, regions, mapping.Options{Title: "pad", Release: 0.8}); err != nil {
		t.Fatal(err)
	}
	got, err := mapping.ReadSFZ(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(regions) {
		t.Fatalf("%d regions read, %d written", len(got), len(regions))
	}
	for i, r := range got {
		if r.Sample != regions[i].Sample || r.Line != i+3 || r.Opcodes["ampeg_release"] != "0.8" {
			t.Errorf("region %d: %+v", i, r)
		}
	}
	if got[1].Opcodes["loop_end"] != "4099" || got[1].Opcodes["seq_position"] != "2" || got[1].Opcodes["pitch_keycenter"] != "64" {
		t.Errorf("opcodes %v", got[1].Opcodes)
	}
}

// FuzzReadSFZ: any text gives regions or a ReadError, never a panic; each
// region it finds starts with "<region>" where it says, and an error
// points inside the text.
func FuzzReadSFZ(f *testing.F) {
	for _, s := range []string{
		"<region> sample=a.wav lokey=60\n",
		"// t\n<group> ampeg_release=0.5\n<region> sample=my pad/a b.wav lokey=1 hikey=2 loop_mode=no_loop\n",
		"<control> default_path=s/\n<global>lokey=1<region>sample=x.wav\n",
		"<region> sample=a.wav /* x\n y */ lokey=2\n",
		"<region> sample=a.wav\n#include \"x.sfz\"\n",
		"sample=a.wav",
		"<region",
		"<region> =x\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		regions, err := mapping.ReadSFZ(bytes.NewReader(data))
		lines := strings.Split(string(data), "\n")
		if err != nil {
			var re *mapping.ReadError
			if errors.As(err, &re) && (re.Line < 1 || re.Line > len(lines) || re.Column < 1 || re.Column > len(lines[re.Line-1])) {
				t.Fatalf("error %v points outside the text", err)
			}
			return
		}
		for _, r := range regions {
			if r.Line < 1 || r.Line > len(lines) || !strings.HasPrefix(lines[r.Line-1][r.Column-1:], "<region>") {
				t.Fatalf("region at %d:%d does not start with <region>", r.Line, r.Column)
			}
		}
	})
}
