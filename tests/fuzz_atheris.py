"""Coverage-guided fuzzing of every reader with atheris (a long run, not part of CI).

    pip install atheris
    python tests/fuzz_atheris.py -atheris_runs=100000

Any input must give a model, a certificate or the package's own InputError: any
other exception is a finding and stops the run with the input saved.
"""

import sys

import atheris

with atheris.instrument_imports():
    import exactlp
    from exactlp.certificate import parse_certificate_text
    from exactlp.errors import InputError
    from exactlp.io import model_from_text, mps_from_text
    from exactlp.io.yamltree import decode

MODEL = model_from_text("minimize: x\nvariables: {x: {}}\nconstraints: {c: x >= 1}\n")


def one_input(data: bytes) -> None:
    if not data:
        return
    kind, body = data[0] % 3, data[1:]
    try:
        text = decode(body, "<fuzz>")
        if kind == 0:
            model_from_text(text, "<fuzz>")
        elif kind == 1:
            mps_from_text(text, "<fuzz>")
        else:
            exactlp.verify(MODEL, parse_certificate_text(text, "<fuzz>"))
    except InputError:
        pass


if __name__ == "__main__":
    atheris.Setup(sys.argv, one_input)
    atheris.Fuzz()
