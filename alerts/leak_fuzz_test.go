package alerts

import (
	"encoding/binary"
	"encoding/json"
	"math"
	"testing"
)

// FuzzAnalyzeRise feeds arbitrary records: the analysis must never panic,
// must return an error only for input it documents as unusable (values that
// are not finite, times or pressures whose spread overflows), and its
// result must always encode as JSON (no NaN or infinity anywhere). The seed
// corpus runs with the normal tests; "go test -fuzz FuzzAnalyzeRise ./alerts"
// explores further.
func FuzzAnalyzeRise(f *testing.F) {
	for _, spec := range riseSpecs {
		tt, p := spec.generate()
		f.Add(encodeRecord(tt, p))
	}
	f.Add(encodeRecord([]float64{0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0}, []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11}))
	f.Add(encodeRecord([]float64{0, 1e-300, 2e-300, 3, 4, 5, 6, 7, 8, 9, 10, 11}, make([]float64, 12)))
	f.Add(encodeRecord([]float64{-5, 1e9, 3, 7, 9, 11, 13, 15, 17, 19, 21, 25}, []float64{1e30, -1e30, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9}))
	f.Fuzz(func(t *testing.T, data []byte) {
		tt, p := decodeRecord(data)
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
	})
}

func encodeRecord(t, p []float64) []byte {
	b := make([]byte, 0, 16*len(t))
	for i := range t {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(t[i]))
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(p[i]))
	}
	return b
}

func decodeRecord(b []byte) (t, p []float64) {
	for len(b) >= 16 {
		t = append(t, math.Float64frombits(binary.LittleEndian.Uint64(b)))
		p = append(p, math.Float64frombits(binary.LittleEndian.Uint64(b[8:])))
		b = b[16:]
	}
	return t, p
}
