package brdf

import (
	"math/rand/v2"
	"testing"
)

// Benchmarks for the hot paths of the fit (Eval, EvalGrad) and the path
// tracer (Sample, PDF). Targets on the project machine: Eval < 40 ns,
// EvalGrad < 3x Eval, Sample < 80 ns, no allocations. The inputs cycle
// through a table so branch prediction does not see one fixed case.
// Besides ns/op each reports cpu-ns/op, the benchmark thread's own CPU
// time per operation, which other load on the machine does not inflate.

const benchN = 1024

type benchInput struct {
	wo, wi Vec
	u      [3]float64
}

var (
	benchIn     = makeBenchInputs()
	benchParams = Params{Kind: Free, Diffuse: RGB{0.6, 0.4, 0.3}, Specular: RGB{0.04, 0.05, 0.06}, Roughness: 0.45}
	sinkRGB     RGB
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
	b.ReportAllocs()
	p := benchParams
	ct := startCPU(b)
	defer ct.stop(b)
	for i := 0; b.Loop(); i++ {
		in := &benchIn[i&(benchN-1)]
		sinkRGB = Eval(&p, in.wo, in.wi)
	}
}

func BenchmarkEvalGrad(b *testing.B) {
	b.ReportAllocs()
	p := benchParams
	ct := startCPU(b)
	defer ct.stop(b)
	var g Grad
	for i := 0; b.Loop(); i++ {
		in := &benchIn[i&(benchN-1)]
		sinkRGB = EvalGrad(&p, in.wo, in.wi, &g)
	}
	sinkF = g[0][0]
}

func BenchmarkSample(b *testing.B) {
	b.ReportAllocs()
	p := benchParams
	ct := startCPU(b)
	defer ct.stop(b)
	for i := 0; b.Loop(); i++ {
		in := &benchIn[i&(benchN-1)]
		_, pdf, w, _ := Sample(&p, in.wo, in.u)
		sinkF, sinkRGB = pdf, w
	}
}

func BenchmarkPDF(b *testing.B) {
	b.ReportAllocs()
	p := benchParams
	ct := startCPU(b)
	defer ct.stop(b)
	for i := 0; b.Loop(); i++ {
		in := &benchIn[i&(benchN-1)]
		sinkF = PDF(&p, in.wo, in.wi)
	}
}
