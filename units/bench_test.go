package units

import "testing"

var unitSink Unit

func BenchmarkParseSimple(b *testing.B)   { parseBench(b, "kg/h") }
func BenchmarkParseCompound(b *testing.B) { parseBench(b, "kJ/(kg*degC)") }
func BenchmarkParsePower(b *testing.B)    { parseBench(b, "m^(1/2)*Pa^0.5/h") }
func BenchmarkParseUnknown(b *testing.B)  { parseBench(b, "kmole/h") } // error path with suggestion

func parseBench(b *testing.B, s string) {
	b.ReportAllocs()
	for b.Loop() {
		unitSink, _ = Parse(s)
	}
}
