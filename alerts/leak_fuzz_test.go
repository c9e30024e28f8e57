package alerts

import (
	"encoding/binary"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// fuzzRisePoints bounds the records FuzzAnalyzeRise builds. The fuzzer
// spends most of its time minimising each input it finds interesting, and
// its byte minimiser is quadratic in the input's length: with records of
// 600 to 1200 float pairs (up to 19 KB) as seeds it minimised for the
// whole run and reported some twenty executions. Shapes, not lengths, are
// what it explores; the fixture tests and BenchmarkAnalyzeRise cover the
// long records.
const fuzzRisePoints = 24

// A fuzz record is a header of three float64 (time step, base pressure,
// pressure step: any values, so the fuzzer reaches non-finite values and
// spans that overflow) and then 3 bytes a reading: the time since the
// previous reading in steps (int8: negative and zero give unsorted and
// repeated times) and the pressure above the base in steps (int16): 96
// bytes at most, against 16 bytes a reading for raw float pairs.
const fuzzHeader = 24

// FuzzAnalyzeRise feeds arbitrary records: the analysis must never panic,
// must return an error only for input it documents as unusable (values that
// are not finite, times or pressures whose spread overflows), and its
// result must always encode as JSON (no NaN or infinity anywhere). The seed
// corpus (each fixture's first fuzzRisePoints readings on the record's
// lattice) runs with the normal tests; "go test -run '^$' -fuzz
// FuzzAnalyzeRise ./alerts" explores further (DEVELOPERS.md has its speed).
func FuzzAnalyzeRise(f *testing.F) {
	for _, spec := range riseSpecs {
		tt, p := spec.generate()
		n := min(len(tt), fuzzRisePoints)
		f.Add(latticeRecord(tt[:n], p[:n]))
	}
	f.Add(fuzzRecord(1, 0, 1, []int8{0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0}, []int16{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11}))
	f.Add(fuzzRecord(1e-300, 0, 0, []int8{0, 1, 1, 127, 1, 1, 1, 1, 1, 1, 1, 1}, make([]int16, 12)))
	f.Add(fuzzRecord(1, 1e-3, 1e304, []int8{-5, 100, -90, 4, 2, 2, 2, 2, 2, 2, 2, 4}, []int16{32767, -32768, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9}))
	f.Add(fuzzRecord(1e306, 0, 1e-5, []int8{0, 127, -128, 127, -128, 1, 1, 1, 1, 1, 1, 1}, []int16{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11}))
	f.Fuzz(func(t *testing.T, data []byte) {
		tt, p := decodeFuzzRecord(data)
		checkAnalyzeRise(t, tt, p)
	})
}

// checkAnalyzeRise is FuzzAnalyzeRise's property.
func checkAnalyzeRise(t *testing.T, tt, p []float64) {
	t.Helper()
	res, err := AnalyzeRise(tt, p, 0.03, RiseOptions{})
	if err != nil {
		if checkRiseInput(tt, p, 0.03) != nil {
			return // documented: values that are not finite, or spans that overflow
		}
		t.Fatalf("error on usable input: %v", err)
	}
	if _, err := json.Marshal(res); err != nil {
		t.Fatalf("result does not encode: %v (%+v)", err, res)
	}
	if res.Classification == "" || res.Reason == "" {
		t.Fatalf("result without classification or reason: %+v", res)
	}
}

// The record the fuzzer found when its inputs were raw float pairs, whose
// time and pressure spreads overflowed (kept in that form).
func TestAnalyzeRiseSpanOverflowFound(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("testdata", "rise", "span-overflow.fuzz"))
	if err != nil {
		t.Fatal(err)
	}
	_, lit, _ := strings.Cut(string(b), "\n")
	raw, err := strconv.Unquote(strings.TrimSuffix(strings.TrimPrefix(strings.TrimSpace(lit), "[]byte("), ")"))
	if err != nil {
		t.Fatalf("corpus file: %v", err)
	}
	tt, p := decodeRecord([]byte(raw))
	if len(tt) < 10 {
		t.Fatalf("decoded %d readings; the file is not the record it was", len(tt))
	}
	checkAnalyzeRise(t, tt, p)
}

func fuzzRecord(tStep, pBase, pStep float64, dt []int8, dp []int16) []byte {
	b := make([]byte, 0, fuzzHeader+3*len(dt))
	for _, v := range []float64{tStep, pBase, pStep} {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
	}
	for i := range dt {
		b = append(b, byte(dt[i]))
		b = binary.LittleEndian.AppendUint16(b, uint16(dp[i]))
	}
	return b
}

// latticeRecord puts a fixture record on the fuzz record's lattice: the
// median time step, pressure steps 1/30000 of the record's range.
func latticeRecord(tt, p []float64) []byte {
	tStep := 1.0
	if d := diffs(tt); len(d) > 0 && median(d) > 0 {
		tStep = median(d)
	}
	lo, hi := p[0], p[0]
	for _, v := range p {
		lo, hi = min(lo, v), max(hi, v)
	}
	pStep := max((hi-lo)/30000, 1e-12)
	dt, dp := make([]int8, len(tt)), make([]int16, len(tt))
	for i := range tt {
		if i > 0 {
			dt[i] = int8(max(-128, min(127, math.Round((tt[i]-tt[i-1])/tStep))))
		}
		dp[i] = int16(max(-32768, min(32767, math.Round((p[i]-lo)/pStep))))
	}
	return fuzzRecord(tStep, lo, pStep, dt, dp)
}

func diffs(v []float64) []float64 {
	var out []float64
	for i := 1; i < len(v); i++ {
		out = append(out, math.Abs(v[i]-v[i-1]))
	}
	return out
}

func decodeFuzzRecord(b []byte) (t, p []float64) {
	if len(b) < fuzzHeader {
		return nil, nil
	}
	h := func(i int) float64 { return math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:])) }
	tStep, pBase, pStep := h(0), h(1), h(2)
	b = b[fuzzHeader:]
	at := 0.0
	for len(b) >= 3 && len(t) < fuzzRisePoints {
		at += float64(int8(b[0])) * tStep
		t = append(t, at)
		p = append(p, pBase+float64(int16(binary.LittleEndian.Uint16(b[1:])))*pStep)
		b = b[3:]
	}
	return t, p
}

// decodeRecord reads raw little-endian (time, pressure) float64 pairs.
func decodeRecord(b []byte) (t, p []float64) {
	for len(b) >= 16 {
		t = append(t, math.Float64frombits(binary.LittleEndian.Uint64(b)))
		p = append(p, math.Float64frombits(binary.LittleEndian.Uint64(b[8:])))
		b = b[16:]
	}
	return t, p
}
