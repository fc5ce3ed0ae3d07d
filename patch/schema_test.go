package patch_test

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	validator "github.com/santhosh-tekuri/jsonschema/v6"
	"gopkg.in/yaml.v3"

	"sinter/patch"
)

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
	for level, keys := range map[string][]string{"": patch.TopKeys(), "group": patch.GroupKeys(), "envelope": patch.EnvelopeKeys()} {
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
	schema := compileSchema(t)
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
		if err := schema.Validate(asJSON(t, string(src))); err != nil {
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
		if err := schema.Validate(asJSON(t, bad)); err == nil {
			t.Errorf("the schema accepts %q", bad)
		}
	}
}

// compileSchema compiles the committed schema with santhosh-tekuri/jsonschema,
// a general-purpose JSON Schema (draft 2020-12) validator from outside the
// project, so the schema is read as an editor would read it.
func compileSchema(t *testing.T) *validator.Schema {
	t.Helper()
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
	return schema
}

// asJSON reads YAML source as a YAML language server would hand it to the
// schema: through yaml.v3 into plain values, then JSON.
func asJSON(t *testing.T, src string) any {
	t.Helper()
	var v any
	if err := yaml.Unmarshal([]byte(src), &v); err != nil {
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
