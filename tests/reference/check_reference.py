#!/usr/bin/env python3
"""Self-checks of the numpy reference and the checkpoint writer, against closed forms.

Run: python3 check_reference.py  (numpy only; exits non-zero on a failure).
"""

import json
import math
import os
import subprocess
import sys
import tempfile
import tomllib
import unittest

import numpy as np

import make_checkpoint
import safetensors_io
import selective_ssm_numpy as ref

HERE = os.path.dirname(os.path.abspath(__file__))
TEXT = "Tap 7 keys, ça va? ok\n\tEND 42.".encode("utf-8")


def write_tmp(directory, tensors, dtype="F32", eps="1e-05"):
    path = os.path.join(directory, f"ckpt-{len(os.listdir(directory))}.safetensors")
    safetensors_io.write(path, tensors, dtype, {"norm_eps": eps})
    return path


class ContainerTests(unittest.TestCase):
    def test_bit_patterns(self):
        # IEEE 754-2008 binary16: 1.0 = 0x3C00, 65504 = 0x7BFF; bfloat16: 1.0 = 0x3F80.
        self.assertEqual(safetensors_io.encode([1.0, 65504.0], "F16"), bytes([0x00, 0x3C, 0xFF, 0x7B]))
        self.assertEqual(safetensors_io.encode([1.0], "BF16"), bytes([0x80, 0x3F]))
        # Round to nearest, ties to even (IEEE 754 default rounding): 1 + 2^-8 lies halfway
        # between bfloat16 neighbours 1.0 and 1 + 2^-7 and goes to the even one, 1.0;
        # 1 + 3*2^-8 is halfway between 1 + 2^-7 (odd) and 1 + 2^-6 (even) and goes up.
        bits = safetensors_io.f32_to_bf16_bits(np.array([1 + 2**-8, 1 + 3 * 2**-8], dtype=np.float32))
        self.assertEqual(bits.tolist(), [0x3F80, 0x3F82])

    def test_round_trip_each_dtype(self):
        values = np.array([[0.5, -1.25, 3.0], [1e-3, 2.0**-14, -65504.0]])
        with tempfile.TemporaryDirectory() as tmp:
            for dtype, tolerance in (("F32", 1e-7), ("F16", 2**-11), ("BF16", 2**-8)):
                path = write_tmp(tmp, {"w": values}, dtype)
                back, meta = safetensors_io.read(path)
                self.assertEqual(meta, {"norm_eps": "1e-05"})
                np.testing.assert_allclose(back["w"], values, rtol=tolerance, err_msg=dtype)
                with open(path, "rb") as src:
                    header_len = int.from_bytes(src.read(8), "little")
                self.assertEqual((8 + header_len) % 8, 0, "data starts 8-byte aligned")


class ReferenceTests(unittest.TestCase):
    def setUp(self):
        self.tmp = tempfile.TemporaryDirectory()
        self.addCleanup(self.tmp.cleanup)

    def random_tensors(self, seed=1, untied=False):
        return make_checkpoint.draw_checkpoint(24, 40, 8, 3, 2, 2, untied, seed)

    def test_zero_expand_leaves_only_the_embedding(self):
        # With expand = 0 the gate z is 0 and SiLU(0) = 0, so y = 0 and every block adds nothing:
        # logits = head . (rmsnorm(embed[b]) * final_norm), whatever came before.
        tensors = self.random_tensors(untied=True)
        for name in tensors:
            if name.endswith(".expand"):
                tensors[name][:] = 0.0
        for eps in ("1e-05", "0.5"):
            model = ref.Model(write_tmp(self.tmp.name, tensors, eps=eps))
            got = ref.run(model, TEXT)
            e = float(eps)
            for t, byte in enumerate(TEXT):
                v = model.embed[byte]
                expected = model.head @ (v / np.sqrt(np.mean(v * v) + e) * model.final_norm)
                np.testing.assert_allclose(got[t], expected, rtol=1e-12, atol=1e-12)

    def test_one_tiny_block_by_hand(self):
        # D=2, I=1, N=1, K=2, R=1, tied head: every step written out in scalars, with the state
        # taken from the unrolled (convolutional) form of eq. (2a),
        # h_t = sum_j (prod_{m=j+1..t} a_m) b_j, instead of the recurrence.
        embed = np.array([[((b % 7) - 3) / 4.0, ((b % 5) - 2) / 8.0 + 0.125] for b in range(256)])
        tensors = {
            "byte_embed": embed,
            "blocks.0.norm": np.array([1.25, 0.75]),
            "blocks.0.expand": np.array([[0.5, -1.5], [1.0, 0.25]]),
            "blocks.0.conv": np.array([[-0.5, 0.75]]),
            "blocks.0.conv_bias": np.array([0.125]),
            "blocks.0.select": np.array([[0.5], [1.5], [-1.25]]),
            "blocks.0.step": np.array([[0.75]]),
            "blocks.0.step_bias": np.array([-2.0]),
            "blocks.0.decay": np.array([[0.5]]),
            "blocks.0.skip": np.array([1.0]),
            "blocks.0.contract": np.array([[0.625], [-0.375]]),
            "final_norm": np.array([1.0, 1.5]),
        }
        text = b"k9?a"
        got = ref.run(ref.Model(write_tmp(self.tmp.name, tensors)), text)

        eps = 1e-5
        sig = lambda v: 1.0 / (1.0 + math.exp(-v))
        xin_prev, a_hist, b_hist = 0.0, [], []
        for t, byte in enumerate(text):
            u0, u1 = embed[byte]
            scale = 1.0 / math.sqrt((u0 * u0 + u1 * u1) / 2 + eps)
            n0, n1 = u0 * scale * 1.25, u1 * scale * 0.75
            xin, z = 0.5 * n0 - 1.5 * n1, 1.0 * n0 + 0.25 * n1
            pre = 0.125 - 0.5 * xin_prev + 0.75 * xin
            xc = pre * sig(pre)
            xin_prev = xin
            r, b_sel, c_sel = 0.5 * xc, 1.5 * xc, -1.25 * xc
            dt = math.log1p(math.exp(0.75 * r - 2.0))
            a_hist.append(math.exp(-dt * math.exp(0.5)))
            b_hist.append(dt * b_sel * xc)
            h = sum(math.prod(a_hist[j + 1:]) * b_hist[j] for j in range(t + 1))
            y = (h * c_sel + 1.0 * xc) * (z * sig(z))
            w0, w1 = u0 + 0.625 * y, u1 - 0.375 * y
            scale = 1.0 / math.sqrt((w0 * w0 + w1 * w1) / 2 + eps)
            expected = [embed[v, 0] * w0 * scale * 1.0 + embed[v, 1] * w1 * scale * 1.5 for v in range(256)]
            np.testing.assert_allclose(got[t], expected, rtol=1e-12, atol=1e-12, err_msg=f"byte {t}")

    def test_causal(self):
        # The logits after byte j depend on bytes 0..j only.
        model = ref.Model(write_tmp(self.tmp.name, self.random_tensors()))
        full = ref.run(model, TEXT)
        np.testing.assert_array_equal(ref.run(model, TEXT[:11]), full[:11])

    def test_absent_head_is_tied(self):
        tied = self.random_tensors()
        untied = dict(tied, head=tied["byte_embed"].copy())
        a = ref.run(ref.Model(write_tmp(self.tmp.name, tied)), TEXT)
        b = ref.run(ref.Model(write_tmp(self.tmp.name, untied)), TEXT)
        np.testing.assert_array_equal(a, b)

    def test_generator_regime(self):
        tensors = self.random_tensors(seed=7)
        # Published initialisation: dt = softplus(step_bias) in [0.001, 0.1]; decay = ln(1..N) + noise.
        dt = ref.softplus(tensors["blocks.0.step_bias"])
        self.assertTrue(np.all((dt >= 0.001 * (1 - 1e-9)) & (dt <= 0.1 * (1 + 1e-9))))
        np.testing.assert_allclose(tensors["blocks.1.decay"].mean(axis=0), np.log(np.arange(1, 9)), atol=0.1)
        logits = ref.run(ref.Model(write_tmp(self.tmp.name, tensors, "BF16")), TEXT)
        self.assertTrue(np.all(np.isfinite(logits)))
        # Not flat, not saturated: a few nats between the mean and the best byte (common practice, no source).
        spread = logits.max(axis=1) - logits.mean(axis=1)
        self.assertTrue(np.all((spread > 1.0) & (spread < 30.0)), spread)

    def test_cli_and_mapped_copy(self):
        out = os.path.join(self.tmp.name, "m.safetensors")
        mapped = os.path.join(self.tmp.name, "mapped.safetensors")
        map_file = os.path.join(self.tmp.name, "names.toml")
        subprocess.run(
            [sys.executable, os.path.join(HERE, "make_checkpoint.py"), "--d", "16", "--n", "4",
             "--blocks", "1", "--head", "untied", "--dtype", "F16", "--seed", "5", "-o", out,
             "--mapped-out", mapped, "--map-file", map_file],
            check=True,
        )
        ours, _ = safetensors_io.read(out)
        theirs, _ = safetensors_io.read(mapped)
        with open(map_file, "rb") as src:
            names = tomllib.load(src)["names"]
        self.assertEqual(sorted(names), sorted(ours))
        self.assertEqual(len(set(names.values())), len(names))
        for schema_name, foreign_name in names.items():
            np.testing.assert_array_equal(ours[schema_name], theirs[foreign_name])
        text_file = os.path.join(self.tmp.name, "text.bin")
        with open(text_file, "wb") as dst:
            dst.write(TEXT)
        printed = subprocess.run(
            [sys.executable, os.path.join(HERE, "selective_ssm_numpy.py"), out, "--text-file", text_file],
            check=True, capture_output=True,
        )
        result = json.loads(printed.stdout)
        self.assertEqual(len(result["per_position"]), len(TEXT))
        self.assertEqual(result["logits"], result["per_position"][-1])
        np.testing.assert_allclose(result["per_position"], ref.run(ref.Model(out), TEXT), rtol=1e-15)


if __name__ == "__main__":
    unittest.main()
