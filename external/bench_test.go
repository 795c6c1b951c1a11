package external

import (
	"fmt"
	"testing"
	"time"
)

// BenchmarkRoundTrip measures the time per fit of the protocol itself
// (encoding, the pipes, the program reading a line, decoding): the fake
// program answers each line at once without decoding it. One op is one
// fit; n = 100, p = 5.
func BenchmarkRoundTrip(b *testing.B) {
	const n, p = 100, 5
	for _, batch := range []int{1, 16, 64} {
		b.Run(fmt.Sprintf("batch=%d", batch), func(b *testing.B) {
			proc, err := Start(fakeCommand(b, "instant", -1, time.Minute))
			if err != nil {
				b.Fatal(err)
			}
			defer proc.Close()
			reqs := requests(batch, n, p)
			out := make([]Reply, batch)
			proc.FitBatch(reqs, out) // warm up the buffers
			b.ReportAllocs()
			b.ResetTimer()
			for done := 0; done < b.N; done += batch {
				k := min(batch, b.N-done)
				proc.FitBatch(reqs[:k], out[:k])
				if out[0].Status != OK {
					b.Fatal(out[0].Err)
				}
			}
			b.StopTimer()
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N), "ns/fit")
		})
	}
}
