# %% [markdown]
# # Exploring a finished sweep
#
# A script with notebook cells (`# %%`): open it in Jupyter (jupytext) or VS Code, or
# run it as `python docs/explore_results.py quickstart.zarr` after the README's first
# command. Everything stays lazy until a statistic or a plot asks for numbers.

# %%
import sys
from pathlib import Path

import matplotlib

matplotlib.use("Agg")  # drop this line in a notebook to see figures inline
import matplotlib.pyplot as plt  # noqa: E402

import sweep  # noqa: E402

STORE = Path(sys.argv[1]) if len(sys.argv) > 1 else Path("quickstart.zarr")
ds = sweep.open(STORE)
print(ds)

# %% [markdown]
# One point by parameter value. `sweep.select` compares floats with a tolerance, so
# 0.5 finds 0.5000000000001; exact `.sel` on floats would not.

# %%
point = sweep.select(ds, diffusivity=0.5)
print(
    "walkers:",
    int(point.walkers_done),
    " censored:",
    int(point.first_passage_time.isnull().sum()),
)

# %% [markdown]
# Headline statistics of every point in one call, with 95 % intervals.

# %%
summary = sweep.stats.summary(ds)
print(
    summary[["mean_fpt", "mean_fpt_lower", "mean_fpt_upper", "censored"]].to_dataframe()
)

# %% [markdown]
# A product grid viewed with one dimension per swept parameter.

# %%
grid = sweep.grid_view(ds)
print(grid.survival.dims)

# %% [markdown]
# Survival curves with their pointwise intervals and the simultaneous band.

# %%
surv = sweep.stats.survival(ds)
band = sweep.stats.survival_band(ds)
fig, ax = plt.subplots()
for p in range(ds.sizes["point"]):
    ax.plot(
        ds.time, surv.estimate.isel(point=p), label=f"D = {float(ds.diffusivity[p]):g}"
    )
    ax.fill_between(
        ds.time, band.lower.isel(point=p), band.upper.isel(point=p), alpha=0.2
    )
ax.set_xlabel("time")
ax.set_ylabel("survival")
ax.legend()
fig.savefig(STORE.with_suffix(".survival.png"))
