"""The default shielding model is written once per entry point; all must name ringshift.constants.DEFAULT_MODEL."""

import inspect

from click.testing import CliRunner

from ringshift import api
from ringshift.cli import cli
from ringshift.constants import DEFAULT_MODEL, MODELS
from ringshift.shifts import prediction


def test_api_and_pipeline_share_the_default_model():
    # ringshift.api spells the default out so that `import ringshift` stays free of NumPy/SciPy
    assert DEFAULT_MODEL in MODELS
    assert inspect.signature(api.predict).parameters["model"].default == DEFAULT_MODEL
    assert inspect.signature(prediction.predict).parameters["model"].default == DEFAULT_MODEL


def test_cli_help_shows_the_default_model():
    out = CliRunner().invoke(cli, ["predict", "-h"])
    assert out.exit_code == 0 and f"default: {DEFAULT_MODEL}" in " ".join(out.output.split())
