package patch_test

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/invopop/jsonschema"
	validator "github.com/santhosh-tekuri/jsonschema/v6"
	"gopkg.in/yaml.v3"

	"sinter/patch"
)

// The types below describe the patch language for its JSON Schema, which
// TestSchemaIsUpToDate generates from them with invopop/jsonschema and
// holds patch/sinter.schema.json (what `sinter schema` prints) to. The
// decoder reads YAML node by node, so these types are not used to decode;
// TestSchemaKnowsEveryKey keeps them in step with the decoder's keys.

type schemaPatch struct {
	Name       string           `yaml:"name" jsonschema:"pattern=^[a-z0-9][a-z0-9._-]*$,description=Set name; the start of every file name."`
	SampleRate int              `yaml:"sample_rate,omitempty" jsonschema:"minimum=8000,maximum=384000,default=48000"`
	BitDepth   int              `yaml:"bit_depth,omitempty" jsonschema:"enum=16,enum=24,enum=32,default=24"`
	Channels   int              `yaml:"channels,omitempty" jsonschema:"enum=1,enum=2,default=1"`
	Tuning     *schemaTuning    `yaml:"tuning,omitempty"`
	Keys       schemaKeys       `yaml:"keys,omitempty"`
	Velocities schemaVelocities `yaml:"velocities,omitempty"`
	Hold       float64          `yaml:"hold,omitempty" jsonschema:"minimum=0,maximum=600,default=2,description=Seconds from note-on to note-off."`
	Tail       schemaTail       `yaml:"tail,omitempty"`
	BandLimit  float64          `yaml:"band_limit,omitempty" jsonschema:"minimum=0.01,maximum=0.5,default=0.45"`
	BandFade   float64          `yaml:"band_fade,omitempty" jsonschema:"minimum=0,maximum=1,default=0.1"`
	Normalize  schemaNormalize  `yaml:"normalize,omitempty"`
	Loop       schemaLoop       `yaml:"loop,omitempty"`
	RoundRobin int              `yaml:"round_robin,omitempty" jsonschema:"minimum=1,maximum=100,default=1"`
	Seed       int64            `yaml:"seed,omitempty" jsonschema:"minimum=0"`
	Dither     schemaOnOff      `yaml:"dither,omitempty"`
	Envelope   *schemaEnvelope  `yaml:"envelope,omitempty"`
	Partials   []schemaEntry    `yaml:"partials" jsonschema:"minItems=1"`
	Body       schemaPoints     `yaml:"body,omitempty" jsonschema:"description=Spectral envelope: [hz, dB] points with rising frequencies."`
	Output     *schemaOutput    `yaml:"output,omitempty"`
}

type schemaTuning struct {
	A4 float64 `yaml:"a4,omitempty" jsonschema:"minimum=100,maximum=1000,default=440"`
}

type schemaOutput struct {
	Dir string `yaml:"dir,omitempty" jsonschema:"description=Relative to the patch's folder and inside it."`
}

type schemaGroup struct {
	Harmonics  schemaSeries    `yaml:"harmonics,omitempty"`
	Ratio      float64         `yaml:"ratio,omitempty" jsonschema:"exclusiveMinimum=0"`
	Ratios     []float64       `yaml:"ratios,omitempty" jsonschema:"minItems=1"`
	Modes      string          `yaml:"modes,omitempty" jsonschema:"enum=bar,enum=drumhead"`
	Spectrum   string          `yaml:"spectrum,omitempty" jsonschema:"enum=sawtooth,enum=square,enum=triangle"`
	Cluster    *schemaCluster  `yaml:"cluster,omitempty"`
	Count      int             `yaml:"count,omitempty" jsonschema:"minimum=1,maximum=4096"`
	Amplitude  schemaLevel     `yaml:"amplitude,omitempty"`
	Amplitudes []schemaLevel   `yaml:"amplitudes,omitempty"`
	Phase      schemaPhase     `yaml:"phase,omitempty"`
	Envelope   *schemaEnvelope `yaml:"envelope,omitempty"`
	Stiffness  schemaValue     `yaml:"stiffness,omitempty"`
	Tilt       schemaValue     `yaml:"tilt,omitempty"`
	Detune     schemaValue     `yaml:"detune,omitempty"`
	Unison     *schemaUnison   `yaml:"unison,omitempty"`
	Pan        schemaPan       `yaml:"pan,omitempty"`
	Pitch      schemaPoints    `yaml:"pitch,omitempty"`
	Vibrato    *schemaVibrato  `yaml:"vibrato,omitempty"`
	Drift      *schemaDrift    `yaml:"drift,omitempty"`
}

type schemaCluster struct {
	Count int     `yaml:"count" jsonschema:"minimum=1,maximum=4096"`
	From  float64 `yaml:"from,omitempty" jsonschema:"exclusiveMinimum=0"`
	To    float64 `yaml:"to,omitempty" jsonschema:"exclusiveMinimum=0"`
}

type schemaUnison struct {
	Voices int     `yaml:"voices,omitempty" jsonschema:"minimum=1,maximum=16"`
	Spread float64 `yaml:"spread,omitempty" jsonschema:"minimum=0,maximum=1200"`
	Width  float64 `yaml:"width,omitempty" jsonschema:"minimum=0,maximum=1"`
}

type schemaVibrato struct {
	Rate  schemaValue `yaml:"rate,omitempty"`
	Depth schemaValue `yaml:"depth,omitempty"`
	Delay schemaValue `yaml:"delay,omitempty"`
	Fade  schemaValue `yaml:"fade,omitempty"`
}

type schemaDrift struct {
	Rate  schemaValue `yaml:"rate,omitempty"`
	Depth schemaValue `yaml:"depth,omitempty"`
}

type schemaEnvelope struct {
	Attack  schemaValue  `yaml:"attack,omitempty"`
	Decay   schemaValue  `yaml:"decay,omitempty"`
	Sustain schemaLevel  `yaml:"sustain,omitempty"`
	Release schemaValue  `yaml:"release,omitempty"`
	Curve   string       `yaml:"curve,omitempty" jsonschema:"enum=exponential,enum=linear"`
	Points  schemaPoints `yaml:"points,omitempty"`
	Stretch schemaValue  `yaml:"stretch,omitempty"`
}

// Values that take several shapes describe themselves.
type (
	schemaValue      struct{}
	schemaLevel      struct{}
	schemaPhase      struct{}
	schemaPan        struct{}
	schemaSeries     struct{}
	schemaKeys       struct{}
	schemaVelocities struct{}
	schemaTail       struct{}
	schemaNormalize  struct{}
	schemaLoop       struct{}
	schemaOnOff      struct{}
	schemaPoints     struct{}
	schemaEntry      struct{}
)

func anyOf(alternatives ...*jsonschema.Schema) *jsonschema.Schema {
	return &jsonschema.Schema{AnyOf: alternatives}
}

func number() *jsonschema.Schema { return &jsonschema.Schema{Type: "number"} }
func text(desc string) *jsonschema.Schema {
	return &jsonschema.Schema{Type: "string", Description: desc}
}
func enum(values ...any) *jsonschema.Schema { return &jsonschema.Schema{Enum: values} }
func list(item *jsonschema.Schema) *jsonschema.Schema {
	return &jsonschema.Schema{Type: "array", Items: item}
}

// object is a closed mapping of the given properties, each any value
// allowed by its schema.
func object(props map[string]*jsonschema.Schema) *jsonschema.Schema {
	s := &jsonschema.Schema{Type: "object", Properties: jsonschema.NewProperties(), AdditionalProperties: jsonschema.FalseSchema}
	keys := make([]string, 0, len(props))
	for k := range props {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		s.Properties.Set(k, props[k])
	}
	return s
}

func (schemaValue) JSONSchema() *jsonschema.Schema {
	return anyOf(number(), text("An expression of n, ratio, hz, f0, key and vel."))
}
func (schemaLevel) JSONSchema() *jsonschema.Schema {
	return anyOf(number(), text("An expression, or a level in dB such as \"-6 dB\"."))
}
func (schemaPhase) JSONSchema() *jsonschema.Schema {
	return anyOf(number(), enum("random", "schroeder"), text("Degrees: an expression."))
}
func (schemaPan) JSONSchema() *jsonschema.Schema {
	rule := object(map[string]*jsonschema.Schema{"rule": enum("alternate", "random", "ratio"), "width": number()})
	rule.Required = []string{"rule"}
	return anyOf(number(), text("A position from -1 to 1: an expression."), rule)
}
func (schemaSeries) JSONSchema() *jsonschema.Schema {
	return anyOf(&jsonschema.Schema{Type: "integer"}, object(map[string]*jsonschema.Schema{
		"count": {Type: "integer"}, "first": {Type: "integer"}, "step": {Type: "integer"}}))
}

// note is a key: a MIDI number or a name in scientific pitch notation.
func note() *jsonschema.Schema {
	return anyOf(&jsonschema.Schema{Type: "integer"}, &jsonschema.Schema{Type: "string", Pattern: "^[A-Ga-g][#sb]?-?[0-9]$"})
}

func (schemaKeys) JSONSchema() *jsonschema.Schema {
	return anyOf(note(), list(note()), object(map[string]*jsonschema.Schema{"from": note(), "to": note(), "step": {Type: "integer"}}))
}
func (schemaVelocities) JSONSchema() *jsonschema.Schema {
	v := &jsonschema.Schema{Type: "integer"}
	return anyOf(v, list(v))
}
func (schemaTail) JSONSchema() *jsonschema.Schema {
	return anyOf(number(), enum("auto"), object(map[string]*jsonschema.Schema{"until": text("A level such as \"-80 dBFS\"."), "max": number()}))
}
func (schemaNormalize) JSONSchema() *jsonschema.Schema {
	level := text("A level such as \"-1 dBFS\", \"-1 dBTP\" or \"-16 LUFS\".")
	return anyOf(enum("off"), object(map[string]*jsonschema.Schema{
		"peak": level, "true_peak": level, "loudness": level,
		"scope": enum("set", "key", "file"), "ceiling": level, "strict": schemaOnOff{}.JSONSchema()}))
}
func (schemaLoop) JSONSchema() *jsonschema.Schema {
	return anyOf(enum("off", "auto"), object(map[string]*jsonschema.Schema{
		"start": number(), "length": number(), "crossfade": number(), "exact": schemaOnOff{}.JSONSchema()}))
}
func (schemaOnOff) JSONSchema() *jsonschema.Schema {
	return enum("on", "off", true, false, "yes", "no")
}
func (schemaPoints) JSONSchema() *jsonschema.Schema {
	two := uint64(2)
	return &jsonschema.Schema{Type: "array", MinItems: &two, Items: &jsonschema.Schema{Type: "array", Items: number(), MinItems: &two, MaxItems: &two}}
}
func (schemaEntry) JSONSchema() *jsonschema.Schema {
	include := object(map[string]*jsonschema.Schema{"include": text("A file of partial groups, relative to this one.")})
	include.Required = []string{"include"}
	return anyOf(&jsonschema.Schema{Ref: "#/$defs/schemaGroup"}, include)
}

// generateSchema reflects the types above into the patch language's schema.
func generateSchema(t *testing.T) []byte {
	t.Helper()
	r := &jsonschema.Reflector{FieldNameTag: "yaml", ExpandedStruct: true}
	s := r.Reflect(&schemaPatch{})
	// schemaEntry refers to the group by name; make sure it is defined.
	if s.Definitions == nil {
		s.Definitions = jsonschema.Definitions{}
	}
	s.Definitions["schemaGroup"] = r.Reflect(&schemaGroup{}).Definitions["schemaGroup"]
	if s.Definitions["schemaGroup"] == nil {
		g := (&jsonschema.Reflector{FieldNameTag: "yaml", ExpandedStruct: true, DoNotReference: true}).Reflect(&schemaGroup{})
		g.Version = ""
		s.Definitions["schemaGroup"] = g
	}
	s.Title = "sinter patch"
	s.Description = "A sinter patch: sine partials compiled into a sample set. See the README's patch reference."
	s.ID = "https://sinter.invalid/sinter.schema.json"
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	return append(data, '\n')
}

// TestSchemaIsUpToDate: the committed schema is what the types above
// generate. SINTER_UPDATE_SCHEMA=1 go test ./patch rewrites it.
func TestSchemaIsUpToDate(t *testing.T) {
	want := generateSchema(t)
	if os.Getenv("SINTER_UPDATE_SCHEMA") == "1" {
		if err := os.WriteFile("sinter.schema.json", want, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if !bytes.Equal(patch.JSONSchema(), want) {
		t.Errorf("patch/sinter.schema.json is out of date; run SINTER_UPDATE_SCHEMA=1 go test ./patch")
	}
}

// TestSchemaKnowsEveryKey: every key the decoder reads is in the schema,
// at the top level, in a group and in an envelope.
func TestSchemaKnowsEveryKey(t *testing.T) {
	var s struct {
		Properties map[string]any `json:"properties"`
		Defs       map[string]struct {
			Properties map[string]any `json:"properties"`
		} `json:"$defs"`
	}
	if err := json.Unmarshal(patch.JSONSchema(), &s); err != nil {
		t.Fatal(err)
	}
	for level, keys := range map[string][]string{"": patch.TopKeys(), "schemaGroup": patch.GroupKeys(), "schemaEnvelope": patch.EnvelopeKeys()} {
		props := s.Properties
		if level != "" {
			props = s.Defs[level].Properties
		}
		for _, k := range keys {
			if _, ok := props[k]; !ok {
				t.Errorf("the schema has no %q at %q", k, level)
			}
		}
		if len(props) != len(keys) {
			t.Errorf("%q: the schema has %d keys, the decoder %d", level, len(props), len(keys))
		}
	}
}

// TestExamplesMatchSchema validates every example patch, the test
// patches that parse and the starter patch against the schema with a
// general-purpose JSON Schema validator (santhosh-tekuri/jsonschema), and
// checks the validator rejects a misspelt key and a bit depth of 20.
func TestExamplesMatchSchema(t *testing.T) {
	c := validator.NewCompiler()
	doc, err := validator.UnmarshalJSON(bytes.NewReader(patch.JSONSchema()))
	if err != nil {
		t.Fatal(err)
	}
	if err := c.AddResource("sinter.schema.json", doc); err != nil {
		t.Fatal(err)
	}
	schema, err := c.Compile("sinter.schema.json")
	if err != nil {
		t.Fatalf("the schema does not compile: %v", err)
	}
	asJSON := func(t *testing.T, src []byte) any {
		var v any
		if err := yaml.Unmarshal(src, &v); err != nil {
			t.Fatal(err)
		}
		data, err := json.Marshal(v)
		if err != nil {
			t.Fatal(err)
		}
		out, err := validator.UnmarshalJSON(bytes.NewReader(data))
		if err != nil {
			t.Fatal(err)
		}
		return out
	}
	files, _ := filepath.Glob("../examples/*.yaml")
	good, _ := filepath.Glob("../testdata/patches/good-*.yaml")
	files = append(files, good...)
	if len(files) < 5 {
		t.Fatalf("found only %v", files)
	}
	for _, f := range files {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		if err := schema.Validate(asJSON(t, src)); err != nil {
			t.Errorf("%s does not match the schema: %v", f, err)
		}
		if !strings.HasPrefix(string(src), "# yaml-language-server: $schema=") && strings.Contains(f, "examples") {
			t.Errorf("%s does not start with the editor comment that points at the schema", f)
		}
	}
	for _, bad := range []string{
		"name: x\nsampel_rate: 48000\npartials: [{ratio: 1}]\n",
		"name: x\nbit_depth: 20\npartials: [{ratio: 1}]\n",
	} {
		if err := schema.Validate(asJSON(t, []byte(bad))); err == nil {
			t.Errorf("the schema accepts %q", bad)
		}
	}
}
