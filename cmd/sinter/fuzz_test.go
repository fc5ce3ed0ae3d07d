package main

import "testing"

// FuzzParseKeys: any --keys list gives keys in 0..127 or an error, never
// a panic.
func FuzzParseKeys(f *testing.F) {
	for _, s := range []string{"C4,E4", "60-72", "C-1-C0", "Bb3 , F#4", "G9", "C4-C3", ",", "-", "60--61"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, list string) {
		keys, err := parseKeys(list)
		if err != nil {
			if keys != nil {
				t.Fatalf("keys %v along with the error %v", keys, err)
			}
			return
		}
		for _, k := range keys {
			if k < 0 || k > 127 {
				t.Fatalf("%q gave key %d", list, k)
			}
		}
	})
}

// FuzzParseShard: any --shard value, with any SINTER_SHARD, gives a shard
// K of N with 1 ≤ K ≤ N, or an error.
func FuzzParseShard(f *testing.F) {
	for _, s := range []string{"1/3", "3/3", "0/3", "auto", "4/3", "x/y", "/", "2/0", "-1/2"} {
		f.Add(s, "2/5")
	}
	f.Add("auto", "auto") // SINTER_SHARD=auto once recursed for ever
	f.Fuzz(func(t *testing.T, value, env string) {
		getenv := func(k string) string {
			if k == "SINTER_SHARD" {
				return env
			}
			return ""
		}
		s, err := parseShard(value, getenv)
		if err == nil && (s.Count < 1 || s.Index < 1 || s.Index > s.Count) {
			t.Fatalf("%q (SINTER_SHARD=%q) gave shard %+v", value, env, s)
		}
	})
}
