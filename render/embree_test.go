package render

import (
	"bytes"
	"encoding/binary"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"

	"patina/render/refcheck"
)

// embreeCastC is a minimal Embree 3 caller (Debian libembree-dev): it reads
// a mesh (int32 nv, nt; float32 xyz per vertex; int32 triples) and rays
// (seven float32 each), and writes the closest hit of each ray as float32 t
// (+Inf on a miss) and int32 triangle.
const embreeCastC = `
#include <embree3/rtcore.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
int main(int argc, char** argv) {
  if (argc != 4) return 2;
  FILE* f = fopen(argv[1], "rb"); int nv, nt;
  if (!f || fread(&nv, 4, 1, f) != 1 || fread(&nt, 4, 1, f) != 1) return 3;
  RTCDevice dev = rtcNewDevice("threads=1");
  RTCScene s = rtcNewScene(dev);
  RTCGeometry g = rtcNewGeometry(dev, RTC_GEOMETRY_TYPE_TRIANGLE);
  float* v = rtcSetNewGeometryBuffer(g, RTC_BUFFER_TYPE_VERTEX, 0, RTC_FORMAT_FLOAT3, 12, nv);
  unsigned* ix = rtcSetNewGeometryBuffer(g, RTC_BUFFER_TYPE_INDEX, 0, RTC_FORMAT_UINT3, 12, nt);
  if (fread(v, 12, nv, f) != (size_t)nv || fread(ix, 12, nt, f) != (size_t)nt) return 4;
  fclose(f);
  rtcCommitGeometry(g); rtcAttachGeometry(s, g); rtcReleaseGeometry(g); rtcCommitScene(s);
  struct RTCIntersectContext ctx; rtcInitIntersectContext(&ctx);
  FILE* in = fopen(argv[2], "rb"); FILE* out = fopen(argv[3], "wb");
  if (!in || !out) return 5;
  float r[7];
  while (fread(r, 4, 7, in) == 7) {
    struct RTCRayHit h;
    h.ray.org_x = r[0]; h.ray.org_y = r[1]; h.ray.org_z = r[2];
    h.ray.dir_x = r[3]; h.ray.dir_y = r[4]; h.ray.dir_z = r[5];
    h.ray.tnear = 0; h.ray.tfar = r[6]; h.ray.time = 0; h.ray.mask = ~0u; h.ray.id = 0; h.ray.flags = 0;
    h.hit.geomID = RTC_INVALID_GEOMETRY_ID; h.hit.instID[0] = RTC_INVALID_GEOMETRY_ID;
    rtcIntersect1(s, &ctx, &h);
    struct { float t; int prim; } o = {INFINITY, -1};
    if (h.hit.geomID != RTC_INVALID_GEOMETRY_ID) { o.t = h.ray.tfar; o.prim = (int)h.hit.primID; }
    fwrite(&o, sizeof o, 1, out);
  }
  fclose(out);
  return 0;
}
`

// TestAgainstEmbree compares closest hits with Intel's Embree 3 (the
// reference CPU ray-tracing kernel) on the bunny and a displaced sphere.
// Random rays and rays aimed inside triangles must agree on hit/miss (at
// most 1 in 10^4 may differ, grazing an edge) and on distance to 1e-5
// relative. Rays aimed exactly at vertices and edges are only counted:
// Embree's default triangle test is not watertight and lets some of them
// slip between two triangles, where Patina's must hit (TestWatertight), and
// rays from outside may just touch a silhouette edge.
func TestAgainstEmbree(t *testing.T) {
	cc := refcheck.RequireCommand(t, "gcc", "gcc")
	if _, err := os.Stat("/usr/include/embree3/rtcore.h"); err != nil {
		refcheck.Missing(t, "Embree 3 headers from Debian package libembree-dev")
	}
	dir := t.TempDir()
	src := filepath.Join(dir, "cast.c")
	bin := filepath.Join(dir, "cast")
	if err := os.WriteFile(src, []byte(embreeCastC), 0o644); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command(cc, "-O2", "-std=c11", src, "-o", bin, "-lembree3", "-lm").CombinedOutput(); err != nil {
		refcheck.Missing(t, "a working Embree 3 (libembree-dev): "+string(out))
	}
	meshes := map[string]*Mesh{"bunny": bunnyMesh(t), "sphere": displacedSphere(60)}
	for name, m := range meshes {
		t.Run(name, func(t *testing.T) {
			var mb bytes.Buffer
			binary.Write(&mb, binary.LittleEndian, int32(m.NumVertices()))
			binary.Write(&mb, binary.LittleEndian, int32(m.NumTriangles()))
			binary.Write(&mb, binary.LittleEndian, m.Positions)
			binary.Write(&mb, binary.LittleEndian, m.Indices)
			mp := filepath.Join(dir, name+".mesh")
			os.WriteFile(mp, mb.Bytes(), 0o644)
			s, err := NewScene(m, 0)
			if err != nil {
				t.Fatal(err)
			}
			n := 200000
			if testing.Short() {
				n = 20000
			}
			rays, tmax := testRays(m, n, 77)
			// Only random and aimed rays from outside: Embree and Patina
			// differ on purpose for rays starting on the surface (t near 0).
			var rb bytes.Buffer
			var kept []int
			rng := rand.New(rand.NewPCG(9, 9))
			for i, r := range rays {
				if i%6 == 4 {
					continue
				}
				r.O = Vec3{float64(float32(r.O.X)), float64(float32(r.O.Y)), float64(float32(r.O.Z))}
				r.D = Vec3{float64(float32(r.D.X)), float64(float32(r.D.Y)), float64(float32(r.D.Z))}
				rays[i] = r
				if rng.IntN(4) == 0 {
					tmax[i] = float64(float32(tmax[i]))
				}
				binary.Write(&rb, binary.LittleEndian, [7]float32{float32(r.O.X), float32(r.O.Y), float32(r.O.Z), float32(r.D.X), float32(r.D.Y), float32(r.D.Z), float32(tmax[i])})
				kept = append(kept, i)
			}
			rp, op := filepath.Join(dir, name+".rays"), filepath.Join(dir, name+".hits")
			os.WriteFile(rp, rb.Bytes(), 0o644)
			if out, err := exec.Command(bin, mp, rp, op).CombinedOutput(); err != nil {
				t.Fatalf("embree caller: %v %s", err, out)
			}
			hb, err := os.ReadFile(op)
			if err != nil || len(hb) != 8*len(kept) {
				t.Fatalf("embree output: %v, %d bytes for %d rays", err, len(hb), len(kept))
			}
			differ, hits, compared, settled := 0, 0, 0, 0
			edgeOnlyPatina, edgeOnlyEmbree := 0, 0
			sumP, sumE := 0.0, 0.0
			for k, i := range kept {
				et := float64(math.Float32frombits(binary.LittleEndian.Uint32(hb[8*k:])))
				eHit := !math.IsInf(et, 1)
				pt, _, _, _, pHit := s.ClosestHit(rays[i], tmax[i])
				if kind := i % 6; kind >= 1 && kind <= 3 { // aimed at a vertex or an edge
					if pHit && (!eHit || et > pt*(1+1e-5)) {
						edgeOnlyPatina++
					}
					if eHit && (!pHit || pt > et*(1+1e-5)) {
						edgeOnlyEmbree++
					}
					continue
				}
				compared++
				if pHit != eHit {
					differ++
					continue
				}
				if pHit {
					hits++
					sumP += pt
					sumE += et
					// 1e-5 relative, plus Embree's float32 resolution at the
					// origin's magnitude for the shortest rays.
					if math.Abs(pt-et) > 1e-5*et+4e-7*rays[i].O.Len() {
						// Settle it in float64 with Möller-Trumbore over all
						// triangles: at grazing incidence Embree's float32
						// distance can be off by more.
						mt := math.Inf(1)
						for tri := 0; tri < m.NumTriangles(); tri++ {
							a, b, c := triVertices(m, tri)
							if tt, _, _, ok := mollerTrumbore(rays[i], a, b, c); ok && tt > 0 && tt < mt {
								mt = tt
							}
						}
						if math.Abs(pt-mt) > 1e-9*mt {
							t.Fatalf("ray %d: Patina t %v, Embree t %v, float64 Möller-Trumbore %v", i, pt, et, mt)
						}
						settled++
					}
				}
			}
			t.Logf("%d random and aimed rays: %d hits, %d hit/miss differences, sum t Patina %.6f Embree %.6f; %d distances beyond 1e-5 settled in float64 for Patina",
				compared, hits, differ, sumP, sumE, settled)
			if settled*1000 > compared {
				t.Fatalf("%d distances disagree with Embree", settled)
			}
			t.Logf("%d rays at vertices and edges: %d where only Patina finds the nearer hit, %d where only Embree does", len(kept)-compared, edgeOnlyPatina, edgeOnlyEmbree)
			// Rays aimed at edges from outside include silhouette edges,
			// which a ray only touches: either answer is right there.
			if differ*10000 > compared {
				t.Fatalf("%d of %d rays disagree on hit/miss", differ, compared)
			}
		})
	}
}
