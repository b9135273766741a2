package config

import (
	"bytes"
	"testing"
)

func BenchmarkParseFrequency(b *testing.B) {
	for _, in := range []string{"20000", "1.5 kHz", "2.2M"} {
		b.Run(in, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := ParseFrequency(in); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkParseResistance(b *testing.B) {
	for _, in := range []string{"4k7", "4.7 kΩ"} {
		b.Run(in, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := ParseResistance(in); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkParse reads the complete commented default file (about 3.5 kB).
func BenchmarkParse(b *testing.B) {
	var buf bytes.Buffer
	if err := Defaults().WriteTOML(&buf); err != nil {
		b.Fatal(err)
	}
	data := buf.Bytes()
	b.ReportAllocs()
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		if _, err := Parse(data, "bench.toml"); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkValidate(b *testing.B) {
	s := Defaults()
	b.ReportAllocs()
	for b.Loop() {
		if err := s.Validate(); err != nil {
			b.Fatal(err)
		}
	}
}
