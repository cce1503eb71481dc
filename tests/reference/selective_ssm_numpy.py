#!/usr/bin/env python3
"""Independent float64 reference of the byte-level selective SSM (the Mamba block).

Written from the published equations, not from the project's Rust code:
Gu & Dao 2023, "Mamba: Linear-Time Sequence Modeling with Selective State Spaces",
arXiv:2312.00752, Sec. 3.2 and Algorithm 2 (equation numbers below are from memory of the
paper; the equations are as the project's design.md writes them):
  (2a) h_t = A_bar h_{t-1} + B_bar x_t        (2b) y_t = C h_t
  (4)  A_bar = exp(Delta A)  (zero-order hold); B_bar = Delta B (the Euler simplification the
       authors use for B)
  Alg. 2: B = s_B(x), C = s_C(x), Delta = softplus(Parameter + s_Delta(x)), s_Delta low rank.
The block around it (Sec. 3.4, Fig. 3): pre-norm residual, input projection to [x; z], causal
depthwise conv + SiLU on x, the selective SSM, skip D*x, SiLU(z) gate, output projection.
RMSNorm: Zhang & Sennrich 2019, v / sqrt(mean(v^2) + eps) * weight.

Runs one byte at a time, in time order, with the state held explicitly, exactly the recurrent
form; prints JSON {"logits": [256 floats after the last byte], "per_position": [[256] per byte]}.
"""

import argparse
import json
import os
import sys

import numpy as np

import safetensors_io

DEFAULT_EPS = 1e-5  # RMSNorm eps of the published block


def silu(v):
    """SiLU(v) = v * sigmoid(v) (Ramachandran et al. 2017; Hendrycks & Gimpel 2016)."""
    return v / (1.0 + np.exp(-v))


def softplus(v):
    """softplus(v) = log(1 + exp(v)), written to stay finite for large v."""
    return np.logaddexp(0.0, v)


def rmsnorm(v, weight, eps):
    return v / np.sqrt(np.mean(v * v) + eps) * weight


# The published Mamba reference code's tensor names (github.com/state-spaces/mamba,
# mamba_ssm/models/mixer_seq_simple.py, modules/mamba_simple.py; from memory of that code), and
# the design's names for the same weights. Its model-hub port differs in `backbone.embeddings`.
OUTSIDE_BLOCK_NAMES = {
    "norm.weight": "norm",
    "mixer.in_proj.weight": "expand",
    "mixer.in_proj.bias": "expand_bias",
    "mixer.conv1d.weight": "conv",
    "mixer.conv1d.bias": "conv_bias",
    "mixer.x_proj.weight": "select",
    "mixer.dt_proj.weight": "step",
    "mixer.dt_proj.bias": "step_bias",
    "mixer.A_log": "decay",
    "mixer.D": "skip",
    "mixer.out_proj.weight": "contract",
    "mixer.out_proj.bias": "contract_bias",
}


def from_outside_names(tensors):
    """A checkpoint in the reference code's (or its model-hub port's) names, renamed.

    In that code: `nn.Linear` weights are [out, in] as ours; the depthwise `nn.Conv1d` weight is
    [I, 1, K] and, with padding K-1 and the output cut to the input's length, computes
    out[t] = bias + sum_k w[k] x[t-K+1+k] (a cross-correlation), our window oldest -> newest;
    A = -exp(A_log); D is the skip; `dt_proj`'s bias is added before the softplus; an absent
    conv bias (trained with conv_bias=False) adds nothing; in_proj/out_proj biases (bias=True) are
    added after their products. Byte b is embedding row b, so only rows 0..256 are ever read or
    scored.
    """
    embed = tensors.get("backbone.embedding.weight", tensors.get("backbone.embeddings.weight"))
    out = {"byte_embed": embed[:256], "final_norm": tensors["backbone.norm_f.weight"]}
    if "lm_head.weight" in tensors:
        out["head"] = tensors["lm_head.weight"][:256]
    for name, values in tensors.items():
        if name.startswith("backbone.layers."):
            block, rest = name[len("backbone.layers."):].split(".", 1)
            field = OUTSIDE_BLOCK_NAMES[rest]
            if field == "conv":
                values = values[:, 0, :]
            out[f"blocks.{block}.{field}"] = values
    for name in list(out):
        if name.endswith(".skip"):
            out.setdefault(name.replace(".skip", ".conv_bias"), np.zeros(out[name].shape[0]))
    return out


class Model:
    """The checkpoint's tensors in float64, dimensions read from the shapes."""

    def __init__(self, path):
        tensors, metadata = safetensors_io.read(path)
        if "byte_embed" not in tensors:
            tensors = from_outside_names(tensors)
        self.eps = float(metadata.get("norm_eps", DEFAULT_EPS))
        self.embed = tensors["byte_embed"]
        self.d = self.embed.shape[1]
        self.final_norm = tensors["final_norm"]
        self.head = tensors.get("head", self.embed)  # absent head = tied to the embedding
        self.blocks = []
        while f"blocks.{len(self.blocks)}.norm" in tensors:
            p = f"blocks.{len(self.blocks)}."
            block = {name: tensors[p + name] for name in
                     ("norm", "expand", "conv", "conv_bias", "select", "step", "step_bias",
                      "decay", "skip", "contract") if p + name in tensors}
            block["i"] = block["skip"].shape[0]
            # Biases only the outside layouts may carry; absent means none (zeros).
            for name, size in (("expand_bias", 2 * block["i"]), ("contract_bias", self.d)):
                block[name] = tensors.get(p + name, np.zeros(size))
            block["k"] = block["conv"].shape[1]
            block["r"] = block["step"].shape[1]
            block["n"] = block["decay"].shape[1]
            check_shapes(path, p, block, self.d)
            self.blocks.append(block)


def check_shapes(path, prefix, block, d):
    """The schema's shapes (design.md), so that a wrong checkpoint fails by name, not by broadcast."""
    i, k, r, n = block["i"], block["k"], block["r"], block["n"]
    expected = {
        "norm": (d,), "expand": (2 * i, d), "conv": (i, k), "conv_bias": (i,),
        "select": (r + 2 * n, i), "step": (i, r), "step_bias": (i,), "decay": (i, n),
        "skip": (i,), "contract": (d, i),
    }
    for name, shape in expected.items():
        if block[name].shape != shape:
            raise ValueError(f"{path}: tensor {prefix}{name} has shape {list(block[name].shape)}, "
                             f"the schema wants {list(shape)}")


class BlockState:
    """What one block remembers between bytes: the last K-1 conv inputs and the SSM state h."""

    def __init__(self, block):
        # Zeros before the start of the text (causal padding).
        self.window = np.zeros((block["i"], block["k"] - 1))
        self.h = np.zeros((block["i"], block["n"]))


def block_step(block, state, u, eps):
    """One byte through one block; returns the block's residual update contract . y."""
    i, r, n = block["i"], block["r"], block["n"]
    # Pre-norm.
    hn = rmsnorm(u, block["norm"], eps)
    # Input projection: rows 0..I give x, rows I..2I give the gate z.
    xz = block["expand"] @ hn + block["expand_bias"]
    x_in, z = xz[:i], xz[i:]
    # Causal depthwise conv over the window oldest -> newest; conv[:, K-1] meets the newest input.
    window = np.concatenate([state.window, x_in[:, None]], axis=1)  # [I, K]
    x = silu(block["conv_bias"] + np.sum(block["conv"] * window, axis=1))
    state.window = window[:, 1:]
    # Alg. 2 lines 2-4: the selection projections s_Delta (rank R), s_B, s_C all from x.
    rbc = block["select"] @ x
    r_low, b_sel, c_sel = rbc[:r], rbc[r:r + n], rbc[r + n:r + 2 * n]
    # Alg. 2 line 4: Delta = softplus(Parameter + Linear_I(Linear_R(x))), one step per channel.
    delta = softplus(block["step"] @ r_low + block["step_bias"])  # [I]
    # Alg. 2 line 1: A = -exp(A_log), diagonal, one row of N per channel.
    a = -np.exp(block["decay"])  # [I, N]
    # Eq. (4), Alg. 2 line 5: A_bar = exp(Delta A), B_bar = Delta B.
    a_bar = np.exp(delta[:, None] * a)  # [I, N]
    b_bar = delta[:, None] * b_sel[None, :]  # [I, N]
    # Eq. (2a): h_t = A_bar h_{t-1} + B_bar x_t, per channel i and state n.
    state.h = a_bar * state.h + b_bar * x[:, None]
    # Eq. (2b) plus the skip D x_t, then the SiLU(z) gate.
    y = (state.h @ c_sel + block["skip"] * x) * silu(z)
    # Output projection back to the residual width.
    return block["contract"] @ y + block["contract_bias"]


def run(model, text):
    """Logits after each byte of `text`, shape [len(text), 256]."""
    states = [BlockState(block) for block in model.blocks]
    out = np.zeros((len(text), 256))
    for t, byte in enumerate(text):
        u = model.embed[byte].copy()  # residual stream
        for block, state in zip(model.blocks, states):
            u = u + block_step(block, state, u, model.eps)
        out[t] = model.head @ rmsnorm(u, model.final_norm, model.eps)
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("checkpoint")
    source = parser.add_mutually_exclusive_group(required=True)
    source.add_argument("--text", help="the text; its UTF-8 bytes are the input")
    source.add_argument("--text-file", help="a file whose raw bytes are the input")
    args = parser.parse_args()
    if args.text is not None:
        # The argument's bytes as the OS passed them.
        text = os.fsencode(args.text)
    else:
        with open(args.text_file, "rb") as src:
            text = src.read()
    if not text:
        parser.error("the text is empty: there is no byte to predict after")
    logits = run(Model(args.checkpoint), text)
    json.dump({"logits": logits[-1].tolist(), "per_position": logits.tolist()}, sys.stdout)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
