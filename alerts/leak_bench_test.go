package alerts

import "testing"

// BenchmarkAnalyzeRise10Min analyses one 10-minute record at 1 Hz with leak
// and outgassing (the mixed fixture's formula, cut to 600 s).
func BenchmarkAnalyzeRise10Min(b *testing.B) {
	spec := riseSpec{Seed: 41, N: 600, Step: 1, P0: 1e-2, A: 4e-6, B: 5e-3, Tau: 150, Sigma: 2e-5}
	tt, p := spec.generate()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := AnalyzeRise(tt, p, fixtureVolume, RiseOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/600, "ns/sample")
}

// BenchmarkAnalyzeRiseDay analyses a day at 1 Hz (86400 samples, grouped).
func BenchmarkAnalyzeRiseDay(b *testing.B) {
	spec := riseSpec{Seed: 42, N: 86400, Step: 1, P0: 1e-3, A: 1e-7, B: 2e-3, Tau: 3600, Sigma: 1e-5}
	tt, p := spec.generate()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := AnalyzeRise(tt, p, fixtureVolume, RiseOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAnalyzeRiseFuzzSeeds analyses FuzzAnalyzeRise's seeds from the
// fixtures (each fixture's first fuzzRisePoints readings, on the fuzz
// record's lattice): what one fuzz execution costs, before the fuzzer's
// coverage counters.
func BenchmarkAnalyzeRiseFuzzSeeds(b *testing.B) {
	var recs [][2][]float64
	for _, spec := range riseSpecs {
		tt, p := spec.generate()
		n := min(len(tt), fuzzRisePoints)
		t2, p2 := decodeFuzzRecord(latticeRecord(tt[:n], p[:n]))
		recs = append(recs, [2][]float64{t2, p2})
	}
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		r := recs[i%len(recs)]
		AnalyzeRise(r[0], r[1], fixtureVolume, RiseOptions{})
		i++
	}
}
