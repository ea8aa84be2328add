#!/usr/bin/python3
"""The two architectures written as PyTorch modules from their documentation,
for `go test ./model -run TestArchTorchModule`.

The other PyTorch references (testdata/model/gen_st.py, testdata/infer/
torch_forward.py, testdata/stereo/net/torch_stereo.py) walk the layer list
that Go writes (default_arch.json, arch.json), so they check the kernels and
would walk a wrong layer faithfully. These modules do not read any layer list:
every layer below is written by hand from the documentation alone (model/doc.go,
the doc comments of StereoArchName, OpMatch, OpPairView, Matching.Pool and
PairView in model/, DEVELOPERS.md and the README's "Training the same
architecture elsewhere"), then loaded with the embedded weights through
load_state_dict(strict=True), which refuses a missing, unexpected or
misshapen parameter. The parameter counts are checked against the figures
the documentation states (929,352 and 299,228).

Kernels are shared with the other references, not re-coded: the safetensors
reader of testdata/infer/torch_forward.py (by the format's specification,
struct and json), the correlation and the warp (F.grid_sample) of
testdata/stereo/net/torch_stereo.py.

Inputs (written by `go test ./model -run TestArchTorchModule
-update-arch-module`, in testdata/arch/):
  pair_u8.bin  the left then the right view, 3x64x128 bytes each (RGB
               planes): testdata/synth/greenhouse 000000, 2x2 block means
  match.bin    package sgm's classical match of that pair, as Go's OpMatch
               layers read it before pooling (model.Matching, full
               resolution, holes filled along the rows): the disparity in
               pixels, float32 2x64x128 (the pair, then the mirrored,
               swapped pair in its mirrored coordinates), then the matcher's
               own validity before the filling, 2x64x128 bytes (0 or 1). The
               matcher is not a PyTorch thing: it is an input here, and the
               pooling to each level is done below from Matching.Pool's doc.
Outputs, float32 little-endian, computed in float64:
  oneimage_out.bin  the embedded default weights (model/weights/
                    default.safetensors) on the left view: disp0 ... disp3,
                    1x2xHxW each (channel 0 d_L, channel 1 d_R)
  stereo_out.bin    the embedded stereo weights (model/weights/
                    stereo.safetensors, parallax-stereo version 2) on the
                    pair: disp0 ... disp3, 1x2xHxW each

Run from the repository root with Debian's interpreter (python3-torch
1.13.1, python3-numpy 1.24.2):

    go test ./model -run TestArchTorchModule -update-arch-module   # inputs
    /usr/bin/python3 testdata/arch/torch_modules.py                # outputs

It also prints how far plausible misreadings of the documentation move the
outputs (the size of the error the Go test's tolerance must catch).
"""
import json
import os
import sys

import numpy as np
import torch
import torch.nn as nn
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.join(HERE, "..", "..")
sys.path.insert(0, os.path.join(HERE, "..", "infer"))
sys.path.insert(0, os.path.join(HERE, "..", "model"))
sys.path.insert(0, os.path.join(HERE, "..", "stereo", "net"))
from torch_forward import load_safetensors  # noqa: E402
from torch_stereo import correlation, warp_left  # noqa: E402

H, W = 64, 128

# Readings of the documentation that the checks below compare against the
# one the modules use (see misreadings()).
VARIANT = {"align_corners": False, "mirror_images": False}


def conv3(cin, cout, stride=1, dilation=1):
    """A 3x3 convolution with bias and reflect padding as wide as its
    dilation (model/doc.go: "every convolution is 3x3 with reflect padding")."""
    return nn.Conv2d(cin, cout, 3, stride=stride, padding=dilation, dilation=dilation, padding_mode="reflect")


def up_bilinear(x):
    """x2 bilinear: PyTorch's half-pixel convention (model/doc.go)."""
    if VARIANT["align_corners"]:
        return F.interpolate(x, size=(2 * x.shape[2], 2 * x.shape[3]), mode="bilinear", align_corners=True)
    return F.interpolate(x, scale_factor=2, mode="bilinear", align_corners=False)


def up_nearest(x):
    return F.interpolate(x, scale_factor=2, mode="nearest")


def add_encoder(module, prefix, widths):
    """The encoder levels L = 1, 2, ...: PREFIXLa (stride 2) and PREFIXLb
    (stride 1), both of widths[L−1] channels."""
    cin = 3
    for level, width in enumerate(widths, 1):
        setattr(module, "%s%da" % (prefix, level), conv3(cin, width, stride=2))
        setattr(module, "%s%db" % (prefix, level), conv3(width, width))
        cin = width


def run_encoder(module, prefix, levels, x):
    """The features of every encoder level, each after its ELUs."""
    feats = []
    for level in range(1, levels + 1):
        x = F.elu(getattr(module, "%s%da" % (prefix, level))(x))
        x = F.elu(getattr(module, "%s%db" % (prefix, level))(x))
        feats.append(x)
    return feats


def param_count(m):
    return sum(p.numel() for p in m.parameters())


class DecoderLevel(nn.Conv2d):
    """decL of the one-image network: "reduce" (a stride-1 convolution at the
    coarser resolution that sets the decoder width), x2 nearest, cat(the
    upsampled features first, then the skips in order), then the level's own
    convolution; all with ELU. Its parameters are decL.weight, decL.bias,
    decL.reduce.weight and decL.reduce.bias."""

    def __init__(self, coarse, skips, width):
        super().__init__(width + skips, width, 3, padding=1, padding_mode="reflect")
        self.reduce = conv3(coarse, width)

    def forward(self, coarse, skips):
        up = up_nearest(F.elu(self.reduce(coarse)))
        return F.elu(super().forward(torch.cat([up] + skips, dim=1)))


class OneImageNet(nn.Module):
    """parallax-ed version 1 (model/doc.go), from the left image alone:

    encoder levels L = 1 ... 5: encLa (stride 2), encLb (stride 1), widths E;
    decoder levels L = 4 ... 0 of widths D: decL reads the coarser level
    (enc5b for dec4) and joins the encoder's skip at its resolution (the
    image itself at L = 0) and, from L = 2 on, the coarser disparity x2
    bilinear; levels 3 ... 0 carry headL: a convolution to 2 channels,
    sigmoid, times d_max, giving dispL (channel 0 d_L, channel 1 d_R)."""

    ENCODER = [16, 32, 64, 96, 128]  # DefaultEncoder (model/doc.go)
    DECODER = [16, 16, 32, 64, 96]  # DefaultDecoder: entry l at 1/2^l

    def __init__(self, d_max):
        super().__init__()
        self.d_max = d_max
        E, D = self.ENCODER, self.DECODER
        add_encoder(self, "enc", E)
        coarse = E[4]
        for level in range(4, -1, -1):
            skip = 3 if level == 0 else E[level - 1]
            disp = 2 if level <= 2 else 0
            setattr(self, "dec%d" % level, DecoderLevel(coarse, skip + disp, D[level]))
            if level <= 3:
                setattr(self, "head%d" % level, conv3(D[level], 2))
            coarse = D[level]

    def forward(self, image):
        skips = [image] + run_encoder(self, "enc", 5, image)
        x = skips[5]
        disp, outs = None, {}
        for level in range(4, -1, -1):
            cat = [skips[level]]
            if disp is not None:
                cat.append(up_bilinear(disp))
            x = getattr(self, "dec%d" % level)(x, cat)
            if level <= 3:
                disp = self.d_max * torch.sigmoid(getattr(self, "head%d" % level)(x))
                outs[level] = disp
        return [outs[s] for s in range(4)]


def mirror(x):
    return torch.flip(x, dims=[3])


def pair_view(x, view):
    """OpPairView on a batch [N left; N right]: ViewLeft gives [left;
    mirror(right)], ViewRight [right; mirror(left)] (model.PairView)."""
    n = x.shape[0] // 2
    a, b = (x[:n], x[n:]) if view == "left" else (x[n:], x[:n])
    return torch.cat([a, mirror(b)], dim=0)


class RefineLevel(nn.Module):
    """refL of the stereo network: ctx (the context from the coarser level),
    a, and at L > 0 b; their widths are the decoder width of the level."""

    def __init__(self, cin, coarse, width, second):
        super().__init__()
        self.ctx = conv3(coarse, width)
        self.a = conv3(cin, width)
        if second:
            self.b = conv3(width, width)


class PairNet(nn.Module):
    """parallax-stereo version 2 (the doc comment of model.StereoArchName):

    one encoder f1a s2, f1b, f2a s2, f2b, f3a s2, f3b on both views; at 1/8 the
    correlation of the left and right features over StereoDisps = 24 shifts,
    cat(cost3, left f3, match3) through agg3.0 ... agg3.3 (dilations 1 2 4
    1) to res3, disp3 = match3.d + res3 pixels; at 1/4 and 1/2 the estimate
    x2 bilinear, the right features warped by it less StereoRadius = 2 px, a
    5-shift correlation, cat(cost, left f, context, match, up in pixels)
    through refL.a, refL.b to resL, dispL = up + resL pixels; at full
    resolution cat(left image, context, match0, up in pixels) through ref0.a
    to res0. Residuals are in pixels of their level, disparities fractions
    of the width. The layers run on the pair and the mirrored, swapped pair
    (OpPairView), so each output packs d_L and d_R mirrored back."""

    ENCODER = [16, 32, 64]  # DefaultStereoEncoder: entry i at 1/2^(i+1)
    DECODER = [8, 16, 32, 64]  # DefaultStereoDecoder: entry l at 1/2^l
    DISPS, RADIUS = 24, 2

    def __init__(self):
        super().__init__()
        E, D = self.ENCODER, self.DECODER
        add_encoder(self, "f", E)
        self.agg3 = nn.ModuleList()
        cin = self.DISPS + E[2] + 2
        for d in (1, 2, 4, 1):
            self.agg3.append(conv3(cin, D[3], dilation=d))
            cin = D[3]
        self.res3 = conv3(D[3], 1)
        coarse = D[3]
        for level in (2, 1, 0):
            if level > 0:
                cin = (2 * self.RADIUS + 1) + E[level - 1] + D[level] + 2 + 1
            else:
                cin = 3 + D[0] + 2 + 1
            setattr(self, "ref%d" % level, RefineLevel(cin, coarse, D[level], level > 0))
            setattr(self, "res%d" % level, conv3(D[level], 1))
            coarse = D[level]

    @staticmethod
    def pool(match_disp, match_valid, level, channels):
        """OpMatch at 1/2^level (Matching.Pool): block means of the
        full-resolution match; with 2 channels the disparity in pixels of
        the level and the fraction of the block the matcher found itself,
        with 1 the disparity as a fraction of the width."""
        k = 1 << level
        d = F.avg_pool2d(match_disp, k) if k > 1 else match_disp
        if channels == 1:
            return d / match_disp.shape[3]
        v = F.avg_pool2d(match_valid, k) if k > 1 else match_valid
        return torch.cat([d / k, v], dim=1)

    def encoder(self, x):
        return run_encoder(self, "f", 3, x)

    def forward(self, left, right, match_disp, match_valid):
        pair = torch.cat([left, right], dim=0)
        if VARIANT["mirror_images"]:
            # A misreading: the encoder run on the mirrored images instead of
            # its features mirrored (OpPairView mirrors features).
            views = [torch.cat([left, mirror(right)], 0), torch.cat([right, mirror(left)], 0)]
            lv = [views[0]] + self.encoder(views[0])
            rv = [None] + self.encoder(views[1])
        else:
            feats = self.encoder(pair)
            lv = [pair_view(pair, "left")] + [pair_view(f, "left") for f in feats]
            rv = [None] + [pair_view(f, "right") for f in feats]

        def pool(level, c):
            return self.pool(match_disp, match_valid, level, c)

        cost = correlation(lv[3], rv[3], self.DISPS)
        x = torch.cat([cost, lv[3], pool(3, 2)], dim=1)
        for conv in self.agg3:
            x = F.elu(conv(x))
        disp = pool(3, 1) + self.res3(x) / x.shape[3]
        outs = {3: disp}
        hidden = x
        for level in (2, 1, 0):
            ref = getattr(self, "ref%d" % level)
            up = up_bilinear(disp)
            w = up.shape[3]
            ctx = up_nearest(F.elu(ref.ctx(hidden)))
            if level > 0:
                warped = warp_left(rv[level], up - self.RADIUS / w)
                cost = correlation(lv[level], warped, 2 * self.RADIUS + 1)
                parts = [cost, lv[level], ctx, pool(level, 2), up * w]
            else:
                parts = [lv[0], ctx, pool(0, 2), up * w]
            x = F.elu(ref.a(torch.cat(parts, dim=1)))
            if level > 0:
                x = F.elu(ref.b(x))
            hidden = x
            disp = up + getattr(self, "res%d" % level)(x) / w
            outs[level] = disp
        n = left.shape[0]
        return [torch.cat([outs[s][:n], mirror(outs[s][n:])], dim=1) for s in range(4)]


def load(module, path, arch, version):
    meta, params = load_safetensors(path)
    assert meta["arch"] == arch and meta["arch_version"] == str(version), (meta["arch"], meta["arch_version"])
    cfg = json.loads(meta["config"])
    assert cfg["encoder"] == module.ENCODER and cfg["decoder"] == module.DECODER, cfg
    module.load_state_dict(params, strict=True)
    return module.double().eval(), meta


def read_inputs():
    u8 = np.fromfile(os.path.join(HERE, "pair_u8.bin"), dtype=np.uint8)
    assert u8.size == 2 * 3 * H * W, u8.size
    pair = torch.from_numpy(u8.astype(np.float32).reshape(2, 3, H, W) / np.float32(255)).double()
    raw = open(os.path.join(HERE, "match.bin"), "rb").read()
    k = 2 * H * W
    assert len(raw) == 4 * k + k, len(raw)
    disp = np.frombuffer(raw[:4 * k], dtype="<f4").astype(np.float64).reshape(2, 1, H, W)
    valid = np.frombuffer(raw[4 * k:], dtype=np.uint8).astype(np.float64).reshape(2, 1, H, W)
    assert set(np.unique(valid)) <= {0.0, 1.0}
    return pair[:1], pair[1:], torch.from_numpy(disp), torch.from_numpy(valid)


def write(path, outs):
    with open(path, "wb") as f:
        for o in outs:
            f.write(o.numpy().astype("<f4").tobytes())


def largest_change(a, b):
    """Largest |a − b| over the four outputs, relative to each output's
    largest |value|."""
    return max(float((x - y).abs().max() / y.abs().max()) for x, y in zip(a, b))


def misreadings(one, stereo, left, right, md, mv, ref_one, ref_stereo):
    """Print how far readings of the documentation other than the modules'
    move the outputs: PyTorch's other bilinear convention, the stereo
    encoder run on mirrored images, and zero instead of reflect padding."""
    def run():
        with torch.no_grad():
            return largest_change(one(left), ref_one), largest_change(stereo(left, right, md, mv), ref_stereo)

    def report(what, changes):
        print("misreading %s: one-image outputs move by %.3g of their scale, stereo by %.3g" % ((what,) + changes),
              file=sys.stderr)

    for key in VARIANT:
        VARIANT[key] = not VARIANT[key]
        report("%s=%s" % (key, VARIANT[key]), run())
        VARIANT[key] = not VARIANT[key]
    convs = [m for net in (one, stereo) for m in net.modules() if isinstance(m, nn.Conv2d)]
    for m in convs:
        m.padding_mode = "zeros"
    report("zero padding", run())
    for m in convs:
        m.padding_mode = "reflect"


def main():
    weights = os.path.join(ROOT, "model", "weights")
    meta = load_safetensors(os.path.join(weights, "default.safetensors"))[0]
    one, _ = load(OneImageNet(float(meta["d_max"])), os.path.join(weights, "default.safetensors"), "parallax-ed", 1)
    stereo, _ = load(PairNet(), os.path.join(weights, "stereo.safetensors"), "parallax-stereo", 2)
    # The parameter counts the documentation gives (model/doc.go, README).
    assert param_count(one) == 929352, param_count(one)
    assert param_count(stereo) == 299228, param_count(stereo)
    left, right, md, mv = read_inputs()
    with torch.no_grad():
        ref_one = one(left)
        ref_stereo = stereo(left, right, md, mv)
        f32_one = one.float()(left.float())
        one.double()
    write(os.path.join(HERE, "oneimage_out.bin"), ref_one)
    write(os.path.join(HERE, "stereo_out.bin"), ref_stereo)
    for name, outs in (("one-image", ref_one), ("stereo", ref_stereo)):
        for s, o in enumerate(outs):
            print("%s disp%d %s d·W range [%.3f, %.3f] px" % (
                name, s, tuple(o.shape), o.min() * o.shape[3], o.max() * o.shape[3]), file=sys.stderr)
    print("one-image float32 against float64: %.3g of the scale" % largest_change(
        [o.double() for o in f32_one], ref_one), file=sys.stderr)
    misreadings(one, stereo, left, right, md, mv, ref_one, ref_stereo)
    print("torch", torch.__version__, "numpy", np.__version__, file=sys.stderr)


if __name__ == "__main__":
    main()
