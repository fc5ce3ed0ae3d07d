package patch

import (
	_ "embed"
	"sort"

	"gopkg.in/yaml.v3"
)

//go:embed modes.yaml
var modesYAML []byte

// modeTables are the tables of modes.yaml by name.
var modeTables = func() map[string][]float64 {
	var t map[string][]float64
	if err := yaml.Unmarshal(modesYAML, &t); err != nil {
		panic("patch: modes.yaml: " + err.Error()) // fixed at build time
	}
	return t
}()

// modeTableNames lists the tables for messages, sorted.
func modeTableNames() []string {
	names := make([]string, 0, len(modeTables))
	for name := range modeTables {
		names = append(names, name)
	}
	sort.Strings(names)
	return names
}
