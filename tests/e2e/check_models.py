#!/usr/bin/python3
"""The models' parameters as chaosweep documents and resolves them.

Usage: check_models.py docs CHAOSWEEP DOCS_MD      docs/models.md is `chaosweep models`, and its
                                                   defaults are the published ones
       check_models.py check CHAOSWEEP WORKDIR     `chaosweep check` prints every parameter as
                                                   resolved, the defaults marked
"""
import os
import subprocess
import sys

# Published defaults (the papers each model file cites):
# - Lorenz (1963), J. Atmos. Sci. 20, 130: sigma 10, rho 28, b = 8/3 (no forcing: f = 0);
# - Lorenz (1984), Tellus 36A, 98: a 1/4, b 4, F 8, G 1 (its chaotic case);
# - Lorenz (1996), Proc. ECMWF Seminar on Predictability: the ring of 40 sites with F 8, and
#   the two-level model with K 36, J 10, F 10, h 1, c 10, b 10.
# Doubles are compared exactly: 8/3 is the nearest double to it, 2.6666666666666665.
PUBLISHED = {
    "lorenz63": {"sigma": 10.0, "rho": 28.0, "beta": 8.0 / 3.0, "forcing": 0.0},
    "lorenz84": {"a": 0.25, "b": 4.0, "F": 8.0, "G": 1.0},
    "lorenz96": {"n": 40.0, "F": 8.0},
    "lorenz96-two-scale": {"K": 36.0, "J": 10.0, "F": 10.0, "h": 1.0, "c": 10.0, "b": 10.0},
}


def fail(message):
    print("FAIL: " + message)
    sys.exit(1)


def run(*args):
    done = subprocess.run(args, capture_output=True, text=True)
    if done.returncode != 0:
        fail(f"{' '.join(args)}: exit {done.returncode}: {done.stderr.strip()}")
    return done.stdout


def documented_parameters(text):
    """{model: {parameter: (default text, sweep, schedule)}} from the Markdown of `models`."""
    out, model = {}, None
    for line in text.splitlines():
        if line.startswith("## `"):
            model = line[4:line.index("`", 4)]
            out[model] = {}
        elif model and line.startswith("| `"):
            cells = [c.strip() for c in line.strip("|").split("|")]
            out[model][cells[0].strip("`")] = (cells[1], cells[3], cells[4])
    return out


def check_docs(prog, docs):
    """docs/models.md is exactly what `chaosweep models` prints (so it cannot drift from the
    registry), and the defaults it lists are the published ones."""
    text = run(prog, "models")
    with open(docs) as f:
        if f.read() != text:
            fail(f"{docs} differs from `chaosweep models`; regenerate it: "
                 f"chaosweep models > docs/models.md")
    documented = documented_parameters(text)
    for model, published in PUBLISHED.items():
        if model not in documented:
            fail(f"{model} is not documented")
        for name, value in published.items():
            if name not in documented[model]:
                fail(f"{model}: parameter {name} is not documented")
            if float(documented[model][name][0]) != value:
                fail(f"{model}: {name} documented as {documented[model][name][0]}, "
                     f"published {value!r}")
    # structural parameters set the state size: never swept nor scheduled (README)
    for model, name in (("lorenz96", "n"), ("lorenz96-two-scale", "K"),
                        ("lorenz96-two-scale", "J")):
        if documented[model][name][1:] != ("no (sets the state size)", "no"):
            fail(f"{model}: {name} documented as sweepable or schedulable")
    for model in ("lorenz96", "lorenz96-two-scale"):
        section = text[text.index(f"## `{model}`"):]
        derived = section[section.index("Derived observables:"):].split("\n\n")[1]
        if "- `site_mean`" not in derived or "- `mean`" in derived:
            fail(f"{model}: derived observables {derived!r}")
    print(f"ok: {docs} matches `chaosweep models`; {len(PUBLISHED)} models' defaults are the "
          f"published ones")


def printed_parameters(out):
    """{parameter: text} from the `parameters` block of `chaosweep check`."""
    params, inside = {}, False
    for line in out.splitlines():
        label, rest = line[2:16].strip(), line[16:].strip()
        if label == "parameters":
            inside = True
        elif label:
            inside = False
        if inside and rest:
            name, text = rest.split(None, 1)
            params[name] = text
    return params


# Specs checked: the model section, what the spec sets, and the expected text of every other
# parameter (besides the published defaults, marked "(default)").
CASES = [
    ("lorenz63", "  parameters: {rho: 24, forcing_direction: [0, 1, 0]}\n"
     "sweep:\n  - {parameter: forcing, values: [0, 1, 2]}\n",
     {"rho": "24", "forcing_direction": "[0, 1, 0]",
      "forcing": "swept: 3 values from 0 to 2"}),
    ("lorenz84", "", {}),
    ("lorenz96", "  parameters: {n: 12}\n"
     "schedule: {parameter: F, kind: ramp, from: 6, to: 9, start: 0.2, end: 0.8}\n",
     {"n": "12", "F": "follows the schedule (ramp)"}),
    ("lorenz96-two-scale", "  parameters: {K: 8, J: 4, h: 0.5}\n", {"K": "8", "J": "4",
                                                                      "h": "0.5"}),
]


def check_check(prog, work):
    """`chaosweep check` lists every parameter of the model once, in the model's order, with
    the value it will be used with: the spec's own values unmarked, the others marked
    "(default)" with the published default, swept and scheduled ones saying so."""
    os.makedirs(work, exist_ok=True)
    documented = documented_parameters(run(prog, "models"))
    for model, section, expected in CASES:
        path = os.path.join(work, f"{model}.yaml")
        with open(path, "w") as f:
            f.write(f"campaign: {{name: {model}-parameters}}\nmodel:\n  name: {model}\n{section}"
                    "ensemble: {members: 8, seed: 1}\n"
                    "integration: {dt: 0.001, spinup: 0, duration: 1}\n"
                    "output: {archive: out.h5}\n")
        params = printed_parameters(run(prog, "check", path, "--no-calibrate"))
        if list(params) != list(documented[model]):
            fail(f"{model}: check printed {list(params)}, the model has "
                 f"{list(documented[model])}")
        for name, text in params.items():
            if name in expected:
                want = expected[name]
            elif name in PUBLISHED[model]:
                want = f"{PUBLISHED[model][name]!r}".removesuffix(".0") + " (default)"
            else:
                want = documented[model][name][0] + " (default)"
            if text != want:
                fail(f"{model}: {name} printed as {text!r}, expected {want!r}")
        print(f"ok: {model}: {len(params)} parameters, {len(params) - len(expected)} defaults")


if __name__ == "__main__":
    {"docs": check_docs, "check": check_check}[sys.argv[1]](*sys.argv[2:])
