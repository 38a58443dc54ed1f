// For scale only (not part of the program): the native cost of the same Koren triode and
// Dempwolf-Zolzer grid law as src/dsp/tubes/models.ts (korenTriodeInto, dempwolfZolzerGridInto),
// with the C library's exp/log, to compare with bench/laws.bench.ts. Measured here: 79 ns per
// evaluation against 145-185 ns in V8, i.e. the laws' floor under the processor's load would
// still be about half of what it is in JavaScript.
// Run: g++ -O2 -o /tmp/laws bench/native/laws.cpp && /tmp/laws
#include <cmath>
#include <chrono>
#include <cstdio>
struct P { double mu, ex, kg1, kp, kvb; };
struct G { double gg, cg, xi, ig0; };
static inline void triode(const P& p, double vgk, double vpk, double scale, double* out) {
  double ip = 0, dg = 0, dp = 0;
  if (vpk > 0) {
    double s = std::sqrt(p.kvb + vpk * vpk);
    double z = p.kp * (1 / p.mu + vgk / s);
    double sp, sig;
    if (z > 35) { sp = z; sig = 1; } else {
      double e = std::exp(-std::fabs(z)); double l = std::log1p(e);
      if (z >= 0) { sp = z + l; sig = 1 / (1 + e); } else { sp = l; sig = e / (1 + e); }
    }
    double e1 = (vpk / p.kp) * sp;
    if (e1 > 0) {
      double k = 2 * scale / p.kg1; double pw = std::exp((p.ex - 1) * std::log(e1));
      double dIdE = k * p.ex * pw; ip = k * pw * e1; dg = dIdE * (vpk * sig / s);
      dp = dIdE * (sp / p.kp - sig * vgk * vpk * vpk / (s * s * s));
    }
  }
  out[0] = ip; out[1] = dg; out[2] = dp;
}
static inline void grid(const G& p, double vgk, double* out) {
  double z = p.cg * vgk, ig = 0, dig = 0;
  if (z < -10) {
    double e = std::exp(z); double sp = e * (1 + e * (-0.5 + e * (1.0 / 3 - e / 4)));
    double lsp = z + e * (-0.5 + e * (5.0 / 24 - e / 8));
    double pw = std::exp((p.xi - 1) * (lsp - std::log(p.cg)));
    ig = p.gg * pw * (sp / p.cg); dig = p.gg * p.xi * pw * (e / (1 + e));
  } else {
    double e = std::exp(-std::fabs(z)); double l = std::log1p(e); double sp, sig;
    if (z >= 0) { sp = z + l; sig = 1 / (1 + e); } else { sp = l; sig = e / (1 + e); }
    double x = sp / p.cg; if (x > 0) { double pw = std::exp((p.xi - 1) * std::log(x)); ig = p.gg * pw * x; dig = p.gg * p.xi * pw * sig; }
  }
  out[3] = ig + p.ig0; out[4] = dig;
}
int main() {
  volatile double sink = 0; P p{100, 1.4, 1060, 600, 300}; G g{6.177e-4, 9.901, 1.314, 8.025e-8};
  double out[5]; const int N = 20000000; double best = 1e9;
  for (int rep = 0; rep < 5; rep++) {
    auto t0 = std::chrono::steady_clock::now();
    for (int n = 0; n < N; n++) { double vg = -1.5 + 1e-4 * (n & 1023) - 0.05, vp = 150 + 0.01 * (n & 511); triode(p, vg, vp, 1, out); grid(g, vg, out); sink = sink + out[0] + out[3]; }
    double ns = std::chrono::duration<double, std::nano>(std::chrono::steady_clock::now() - t0).count() / N;
    if (ns < best) best = ns;
  }
  std::printf("triode+grid native: %.1f ns per evaluation\n", best);
}
