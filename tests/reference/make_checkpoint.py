#!/usr/bin/env python3
"""Write a random checkpoint in the inkling schema (design.md, "Checkpoint schema").

Values are drawn so that the model sits where a freshly initialised or lightly trained selective
SSM sits, following the initialisation published with the method (Gu & Dao 2023, arXiv:2312.00752,
and its released code as summarised in the project's references): norm weights near 1, decay =
ln(1..N) per channel plus noise (S4D-real), step_bias = inverse softplus of a step drawn
log-uniformly in [0.001, 0.1], skip near 1, projections uniform in +-1/sqrt(fan_in), the output
projection further divided by sqrt(blocks).

Optionally also writes a name-mapped copy (same values, other tensor names, other order) and the
TOML mapping file `[names]` with one `"our name" = "their name"` entry per tensor, or one per
role with the `{block}` placeholder.

With --layout, writes the checkpoint instead in the tensor names and shapes of the published
Mamba reference code (Gu & Dao, github.com/state-spaces/mamba, mamba_ssm/models/
mixer_seq_simple.py and modules/mamba_simple.py: `backbone.embedding`, `backbone.layers.{l}.norm`,
`mixer.in_proj`, `mixer.conv1d` as a depthwise Conv1d weight [I, 1, K], `mixer.x_proj`,
`mixer.dt_proj`, `mixer.A_log`, `mixer.D`, `mixer.out_proj`, `backbone.norm_f`, `lm_head`; names
from memory of that code) or of its model-hub port (the same but `backbone.embeddings`, and the
tied head written out as `lm_head.weight`). A_log is the same number as the schema's decay
(A = -exp(A_log) in both), D is the skip.
"""

import argparse
import math

import numpy as np

import safetensors_io

# Step sizes of the published initialisation: dt log-uniform in [DT_MIN, DT_MAX].
DT_MIN, DT_MAX = 0.001, 0.1


def uniform_fan_in(rng, shape, fan_in):
    """Uniform in +-1/sqrt(fan_in): the default initialisation of a dense layer."""
    bound = 1.0 / math.sqrt(fan_in)
    return rng.uniform(-bound, bound, size=shape)


def inverse_softplus(y):
    """x with softplus(x) = y, i.e. log(exp(y) - 1) = y + log(-expm1(-y)) (stable for small y)."""
    return y + np.log(-np.expm1(-y))


def draw_checkpoint(d, i, n, k, r, blocks, untied, seed):
    """name -> float64 array, in schema order."""
    rng = np.random.default_rng(seed)
    tensors = {}
    # Row norm about 1 for every byte, so a tied head gives logits of a few nats.
    tensors["byte_embed"] = rng.normal(0.0, 1.0 / math.sqrt(d), size=(256, d))
    for block in range(blocks):
        p = f"blocks.{block}."
        tensors[p + "norm"] = 1.0 + rng.normal(0.0, 0.1, size=d)
        tensors[p + "expand"] = uniform_fan_in(rng, (2 * i, d), d)
        # Depthwise conv: fan_in is the kernel width.
        tensors[p + "conv"] = uniform_fan_in(rng, (i, k), k)
        tensors[p + "conv_bias"] = uniform_fan_in(rng, (i,), k)
        tensors[p + "select"] = uniform_fan_in(rng, (r + 2 * n, i), i)
        tensors[p + "step"] = uniform_fan_in(rng, (i, r), r)
        dt = np.exp(rng.uniform(math.log(DT_MIN), math.log(DT_MAX), size=i))
        tensors[p + "step_bias"] = inverse_softplus(dt)
        tensors[p + "decay"] = np.log(np.tile(np.arange(1, n + 1, dtype=np.float64), (i, 1)))
        tensors[p + "decay"] += rng.normal(0.0, 0.1, size=(i, n))
        tensors[p + "skip"] = 1.0 + rng.normal(0.0, 0.1, size=i)
        tensors[p + "contract"] = uniform_fan_in(rng, (d, i), i) / math.sqrt(blocks)
    tensors["final_norm"] = 1.0 + rng.normal(0.0, 0.1, size=d)
    if untied:
        tensors["head"] = rng.normal(0.0, 2.0 / math.sqrt(d), size=(256, d))
    return tensors


def their_name(ours):
    """The invented naming of a foreign trainer, for the name-mapping test."""
    fixed = {"byte_embed": "embedding.weight", "final_norm": "out_norm.weight", "head": "unembed.weight"}
    if ours in fixed:
        return fixed[ours]
    _, block, field = ours.split(".")
    field_names = {
        "norm": "norm.weight",
        "expand": "in_proj.weight",
        "conv": "conv1d.weight",
        "conv_bias": "conv1d.bias",
        "select": "x_proj.weight",
        "step": "dt_proj.weight",
        "step_bias": "dt_proj.bias",
        "decay": "a_log",
        "skip": "d_skip",
        "contract": "out_proj.weight",
    }
    return f"layers.{block}.{field_names[field]}"


def write_map_file(path, names, pattern):
    with open(path, "w", encoding="utf-8") as out:
        out.write("# inkling schema name = name in the foreign checkpoint\n[names]\n")
        written = set()
        for ours in names:
            theirs = their_name(ours)
            if pattern and ours.startswith("blocks."):
                # One line per role: the block number becomes the placeholder on both sides.
                block = ours.split(".")[1]
                ours = ours.replace(f"blocks.{block}.", "blocks.{block}.", 1)
                theirs = theirs.replace(f"layers.{block}.", "layers.{block}.", 1)
            if ours not in written:
                written.add(ours)
                out.write(f'"{ours}" = "{theirs}"\n')


# Per-block names of the outside layouts, after `backbone.layers.{l}.`.
OUTSIDE_BLOCK_NAMES = {
    "norm": "norm.weight",
    "expand": "mixer.in_proj.weight",
    "conv": "mixer.conv1d.weight",
    "conv_bias": "mixer.conv1d.bias",
    "select": "mixer.x_proj.weight",
    "step": "mixer.dt_proj.weight",
    "step_bias": "mixer.dt_proj.bias",
    "decay": "mixer.A_log",
    "skip": "mixer.D",
    "contract": "mixer.out_proj.weight",
}


def outside_layout(tensors, layout, extra_rows, rng):
    """The tensors under the names and shapes of `layout` ("reference-code" or "model-hub")."""
    embed = tensors["byte_embed"]
    head = tensors.get("head")
    if extra_rows:
        # A padded vocabulary: rows past 256 that no byte reads.
        embed = np.concatenate([embed, rng.normal(0.0, 1.0, size=(extra_rows, embed.shape[1]))])
        if head is not None:
            head = np.concatenate([head, rng.normal(0.0, 1.0, size=(extra_rows, head.shape[1]))])
    embedding = "backbone.embedding.weight" if layout == "reference-code" else "backbone.embeddings.weight"
    out = {embedding: embed}
    for name, values in tensors.items():
        if name.startswith("blocks."):
            _, block, field = name.split(".")
            if field == "conv":
                values = values[:, None, :]  # a depthwise Conv1d weight: [I, 1, K]
            out[f"backbone.layers.{block}.{OUTSIDE_BLOCK_NAMES[field]}"] = values
    out["backbone.norm_f.weight"] = tensors["final_norm"]
    if head is not None:
        out["lm_head.weight"] = head
    elif layout == "model-hub":
        out["lm_head.weight"] = embed  # the port writes the tied head out
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--d", type=int, default=32, help="model width D")
    parser.add_argument("--i", type=int, default=None, help="inner width I (default 2D)")
    parser.add_argument("--n", type=int, default=16, help="state size N")
    parser.add_argument("--k", type=int, default=4, help="conv kernel K")
    parser.add_argument("--r", type=int, default=None, help="step rank R (default ceil(D/16))")
    parser.add_argument("--blocks", type=int, default=2)
    parser.add_argument("--head", choices=["tied", "untied"], default="tied")
    parser.add_argument("--dtype", choices=["F32", "F16", "BF16"], default="F32")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("-o", "--out", required=True, help="checkpoint path")
    parser.add_argument("--mapped-out", help="also write a copy with foreign tensor names here")
    parser.add_argument("--map-file", help="TOML mapping for --mapped-out")
    parser.add_argument("--map-pattern", action="store_true",
                        help="write the mapping with one {block} line per role")
    parser.add_argument("--layout", choices=["schema", "reference-code", "model-hub"], default="schema",
                        help="tensor names and shapes of the file written with -o")
    parser.add_argument("--extra-rows", type=int, default=0,
                        help="outside layouts: embedding (and head) rows past 256")
    parser.add_argument("--proj-bias", choices=["none", "zero", "random"], default="none",
                        help="outside layouts: also write in_proj and out_proj biases")
    parser.add_argument("--norm-bias", action="store_true",
                        help="outside layouts: also write a bias of block 0's norm (layer norm)")
    parser.add_argument("--a-log-vector", action="store_true",
                        help="outside layouts: A_log as one value per channel, [I] (a later block's form)")
    parser.add_argument("--drop", action="append", default=[],
                        help="leave out this tensor (its name in the file written); repeatable")
    parser.add_argument("--no-metadata", action="store_true",
                        help="write no __metadata__ (as outside trainers do)")
    args = parser.parse_args()
    if (args.mapped_out is None) != (args.map_file is None):
        parser.error("--mapped-out and --map-file go together")
    i = args.i if args.i is not None else 2 * args.d
    r = args.r if args.r is not None else math.ceil(args.d / 16)
    tensors = draw_checkpoint(args.d, i, args.n, args.k, r, args.blocks, args.head == "untied", args.seed)
    metadata = {} if args.no_metadata else {"norm_eps": "1e-05"}
    written = tensors
    if args.layout != "schema":
        rng = np.random.default_rng(args.seed + 1)
        written = outside_layout(tensors, args.layout, args.extra_rows, rng)
        i = tensors["blocks.0.skip"].shape[0]
        for block in range(args.blocks):
            p = f"backbone.layers.{block}.mixer."
            if args.proj_bias != "none":
                scale = 0.0 if args.proj_bias == "zero" else 0.1
                written[p + "in_proj.bias"] = rng.normal(0.0, 1.0, size=2 * i) * scale
                written[p + "out_proj.bias"] = rng.normal(0.0, 1.0, size=args.d) * scale
        if args.norm_bias:
            written["backbone.layers.0.norm.bias"] = rng.normal(0.0, 0.1, size=args.d)
        if args.a_log_vector:
            for block in range(args.blocks):
                name = f"backbone.layers.{block}.mixer.A_log"
                written[name] = written[name].mean(axis=1)
    for name in args.drop:
        del written[name]
    safetensors_io.write(args.out, written, args.dtype, metadata)
    if args.mapped_out:
        # Reverse order too: a reader must go by name, not by position.
        mapped = {their_name(name): tensors[name] for name in reversed(list(tensors))}
        safetensors_io.write(args.mapped_out, mapped, args.dtype, metadata)
        write_map_file(args.map_file, tensors, args.map_pattern)


if __name__ == "__main__":
    main()
