"""Cost of the bootstrap-sized blocks on the 89k blast holes of bench_discover.speed().

Run ``python benchmarks/block_sizing_cost.py default`` (the pair engine's default
blocks) and ``... sized`` (what discover builds: blocks for the block bootstrap),
one after the other; each times three discover calls and their pair passes.
"""
import sys, time, numpy as np, pandas as pd
sys.path.insert(0, str(__import__("pathlib").Path(__file__).parent))
import anisotropy, anisotropy.discovery.lags as L

orig = L._build_volume
mode = sys.argv[1]
def patched(*a, **k):
    if mode == "default":
        k["blocks"] = None
    t = time.perf_counter(); v = orig(*a, **k); print(mode, "pair pass", round(time.perf_counter()-t, 2), "blocks", k["blocks"], flush=True); return v
L._build_volume = patched
from anisotropy.simulate import simulate_field
from anisotropy.models import NestedModel, Structure
from bench_discover import frame
rng = np.random.default_rng(1); nx=122
gx, gy = np.meshgrid(np.arange(nx)*4.0, np.arange(nx)*4.0)
pts=[]
for b in range(6):
    p=np.column_stack([gx.ravel(), gy.ravel(), np.full(gx.size, -4.0*b)]); p[:, :2]+=rng.normal(0,0.4,(len(p),2)); pts.append(p)
c=np.concatenate(pts)
y = simulate_field(c, NestedModel(0.2, [Structure("spherical", 0.8, (80, 40, 15))], frame(60, 10, 0)), seed=2, method="spectral")
df = pd.DataFrame({"x": c[:,0], "y": c[:,1], "z": c[:,2], "au": np.exp(0.8*y)})
for k in range(3):
    t=time.perf_counter(); D = anisotropy.discover(df, value="au", seed=0); print(mode, "discover", round(time.perf_counter()-t,2), flush=True)
