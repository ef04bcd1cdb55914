"""Settings shared by the suite.

``.ci/run`` sets ``HYPOTHESIS_PROFILE=ci``: the property tests then draw the same
examples on every run (``derandomize``), so the continuous integration of a given
commit passes or fails the same way each time. Local runs keep drawing new
examples, which is how the property tests find new bad inputs.
"""

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True)
if os.environ.get("HYPOTHESIS_PROFILE"):
    settings.load_profile(os.environ["HYPOTHESIS_PROFILE"])
