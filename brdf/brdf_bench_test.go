package brdf

import (
	"math/rand/v2"
	"testing"
)

// Benchmarks for the hot paths of the fit (Eval, EvalGrad) and the path
// tracer (Sample, PDF). Targets on the project machine: Eval < 40 ns,
// EvalGrad < 3x Eval, Sample < 80 ns, no allocations. The inputs cycle
// through a table of directions above the horizon (cos theta >= 0.05, so
// nothing takes the early exit) and uniform numbers, so branch prediction
// does not see one fixed case. Besides ns/op each reports cpu-ns/op, the
// benchmark thread's own CPU time per operation, which other load on the
// machine inflates less.
//
// Each benchmark has two sub-benchmarks: "current" is the package's
// function, "previous" the implementation before the speed work
// (prev_test.go), run in the same process one after the other, so the
// ratio of the two is meaningful on a busy machine even when the absolute
// figures are not. Sample has a third, "spherical-caps", the candidate
// sampler of capsample_test.go.
//
// The loops use the results the way the callers do, channel by channel
// (the fit sums f[c] times the irradiance, the renderer multiplies its
// throughput by weight[c]), into accumulators stored once at the end. They
// count b.N rather than use b.Loop: b.Loop keeps every call result alive
// by spilling it to the stack in each iteration, and for the 24-byte RGB
// results those extra copies (with store-forwarding stalls) cost 5 to
// 10 ns per call (measured on the project machine) that no caller pays. The called functions are not
// inlined as a whole, so the compiler cannot drop the work.

const benchN = 1024

type benchInput struct {
	wo, wi Vec
	u      [3]float64
}

var (
	benchIn     = makeBenchInputs()
	benchParams = Params{Kind: Free, Diffuse: RGB{0.6, 0.4, 0.3}, Specular: RGB{0.04, 0.05, 0.06}, Roughness: 0.45}
	sinkF       float64
)

func makeBenchInputs() []benchInput {
	rng := rand.New(rand.NewPCG(42, 43))
	in := make([]benchInput, benchN)
	for i := range in {
		in[i] = benchInput{randomDir(rng, 0.05), randomDir(rng, 0.05), [3]float64{rng.Float64(), rng.Float64(), rng.Float64()}}
	}
	return in
}

func BenchmarkEval(b *testing.B) {
	b.Run("current", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var a0, a1, a2 float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			f := Eval(&p, in.wo, in.wi)
			a0 += f[0]
			a1 += f[1]
			a2 += f[2]
		}
		sinkF = a0 + a1 + a2
	})
	b.Run("previous", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var a0, a1, a2 float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			f := prevEval(&p, in.wo, in.wi)
			a0 += f[0]
			a1 += f[1]
			a2 += f[2]
		}
		sinkF = a0 + a1 + a2
	})
}

func BenchmarkEvalGrad(b *testing.B) {
	b.Run("current", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var g Grad
		var a0, a1, a2, ag float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			f := EvalGrad(&p, in.wo, in.wi, &g)
			a0 += f[0]
			a1 += f[1]
			a2 += f[2]
			ag += g[0][6]
		}
		sinkF = a0 + a1 + a2 + ag
	})
	b.Run("previous", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var g Grad
		var a0, a1, a2, ag float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			f := prevEvalGrad(&p, in.wo, in.wi, &g)
			a0 += f[0]
			a1 += f[1]
			a2 += f[2]
			ag += g[0][6]
		}
		sinkF = a0 + a1 + a2 + ag
	})
}

func BenchmarkSample(b *testing.B) {
	b.Run("current", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var a0, a1, a2, ap float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			wi, pdf, w, ok := Sample(&p, in.wo, in.u)
			if ok {
				a0 += w[0] * wi.X
				a1 += w[1] * wi.Y
				a2 += w[2] * wi.Z
				ap += pdf
			}
		}
		sinkF = a0 + a1 + a2 + ap
	})
	b.Run("previous", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var a0, a1, a2, ap float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			wi, pdf, w, ok := prevSample(&p, in.wo, in.u)
			if ok {
				a0 += w[0] * wi.X
				a1 += w[1] * wi.Y
				a2 += w[2] * wi.Z
				ap += pdf
			}
		}
		sinkF = a0 + a1 + a2 + ap
	})
	b.Run("spherical-caps", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		var a0, a1, a2, ap float64
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			wi, pdf, w, ok := capSample(&p, in.wo, in.u)
			if ok {
				a0 += w[0] * wi.X
				a1 += w[1] * wi.Y
				a2 += w[2] * wi.Z
				ap += pdf
			}
		}
		sinkF = a0 + a1 + a2 + ap
	})
}

func BenchmarkPDF(b *testing.B) {
	b.Run("current", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		a := 0.0
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			a += PDF(&p, in.wo, in.wi)
		}
		sinkF = a
	})
	b.Run("previous", func(b *testing.B) {
		b.ReportAllocs()
		p := benchParams
		ct := startCPU(b)
		defer ct.stop(b)
		a := 0.0
		for i := 0; i < b.N; i++ {
			in := &benchIn[i&(benchN-1)]
			a += prevPDF(&p, in.wo, in.wi)
		}
		sinkF = a
	})
}
