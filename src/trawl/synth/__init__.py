"""Query synthesis: pseudo-queries in several styles with graded *silver* judgments.

Silver judgments are estimates of what people would judge; ``bench/silver_agreement.py``
measures how well they rank systems the way human judgments do.
"""

from .calibrate import calibrate_profile
from .lexicon import Lexicon, read_lexicon
from .llm import LlmClient, LlmError
from .overlap import OverlapProfile, overlap
from .compose import DEFAULT_PROFILE, STYLES, SilverSet, synthesise
from .settings import SynthSettings
from .wordnet import load_wordnet

__all__ = ["DEFAULT_PROFILE", "STYLES", "Lexicon", "LlmClient", "LlmError", "OverlapProfile",
           "SilverSet", "SynthSettings", "calibrate_profile", "load_wordnet", "overlap", "read_lexicon",
           "synthesise"]
