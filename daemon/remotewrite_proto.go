package daemon

import (
	"fmt"
	"math"

	"google.golang.org/protobuf/encoding/protowire"
)

// The remote-write 1.0 message, prometheus.WriteRequest (the remote write
// specification's proto): WriteRequest{repeated TimeSeries timeseries = 1},
// TimeSeries{repeated Label labels = 1; repeated Sample samples = 2},
// Label{string name = 1; string value = 2}, Sample{double value = 1;
// int64 timestamp = 2 (ms)}. Prometheus 2.x receivers take only this
// version, so it is encoded here with protowire rather than pulling in the
// server's own module; writeRequest has the Size/MarshalToSizedBuffer pair
// the client_golang remote API uses to marshal a message it does not know.

type rwLabel struct{ name, value string }

type rwSample struct {
	ms    int64
	value float64
}

type rwSeriesData struct {
	labels  []rwLabel // sorted by name
	samples []rwSample
}

type writeRequest struct{ series []rwSeriesData }

func labelSize(l rwLabel) int {
	return protowire.SizeTag(1) + protowire.SizeBytes(len(l.name)) + protowire.SizeTag(2) + protowire.SizeBytes(len(l.value))
}

func sampleSize(s rwSample) int {
	return protowire.SizeTag(1) + protowire.SizeFixed64() + protowire.SizeTag(2) + protowire.SizeVarint(uint64(s.ms))
}

func seriesSize(ts rwSeriesData) int {
	n := 0
	for _, l := range ts.labels {
		n += protowire.SizeTag(1) + protowire.SizeBytes(labelSize(l))
	}
	for _, s := range ts.samples {
		n += protowire.SizeTag(2) + protowire.SizeBytes(sampleSize(s))
	}
	return n
}

// Size is the encoded length of the request.
func (r *writeRequest) Size() int {
	n := 0
	for _, ts := range r.series {
		n += protowire.SizeTag(1) + protowire.SizeBytes(seriesSize(ts))
	}
	return n
}

// MarshalToSizedBuffer encodes the request into b, which must be Size bytes.
func (r *writeRequest) MarshalToSizedBuffer(b []byte) (int, error) {
	out := r.appendTo(b[:0])
	if len(out) != len(b) {
		return 0, fmt.Errorf("write request: encoded %d bytes into a buffer of %d", len(out), len(b))
	}
	return len(out), nil
}

func (r *writeRequest) appendTo(b []byte) []byte {
	for _, ts := range r.series {
		b = protowire.AppendTag(b, 1, protowire.BytesType)
		b = protowire.AppendVarint(b, uint64(seriesSize(ts)))
		for _, l := range ts.labels {
			b = protowire.AppendTag(b, 1, protowire.BytesType)
			b = protowire.AppendVarint(b, uint64(labelSize(l)))
			b = protowire.AppendTag(b, 1, protowire.BytesType)
			b = protowire.AppendString(b, l.name)
			b = protowire.AppendTag(b, 2, protowire.BytesType)
			b = protowire.AppendString(b, l.value)
		}
		for _, s := range ts.samples {
			b = protowire.AppendTag(b, 2, protowire.BytesType)
			b = protowire.AppendVarint(b, uint64(sampleSize(s)))
			b = protowire.AppendTag(b, 1, protowire.Fixed64Type)
			b = protowire.AppendFixed64(b, math.Float64bits(s.value))
			b = protowire.AppendTag(b, 2, protowire.VarintType)
			b = protowire.AppendVarint(b, uint64(s.ms))
		}
	}
	return b
}
