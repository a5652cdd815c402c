"""Languages of the homeowner's pages: gettext message catalogs, one per language.

The English text is in the code (``_("...")``); ``locale/<lang>/LC_MESSAGES/commission.po``
holds each translation and the compiled ``.mo`` beside it ships inside the package, so a
non-editable install finds it (``tests/report/test_i18n.py`` checks that the shipped
``.mo`` matches its ``.po``, compiled with Babel). A job chooses its language with
``new --language`` or ``amend --language``.
"""

from __future__ import annotations

import gettext
from pathlib import Path

DOMAIN = "commission"
LOCALE_DIR = Path(__file__).resolve().parent / "locale"
LANGUAGES = {"en": "English", "fr": "français"}
DEFAULT = "en"


def check_language(code: str) -> str:
    from .errors import UserError

    code = (code or DEFAULT).strip().lower()
    if code not in LANGUAGES:
        raise UserError(f"--language {code}: not a language of the homeowner pages "
                        f"(accepted: {', '.join(LANGUAGES)})")
    return code


def translator(code: str | None) -> gettext.NullTranslations:
    """The catalog of ``code``; English (the text in the code) for 'en' or unknown codes."""
    code = (code or DEFAULT).lower()
    if code == DEFAULT or code not in LANGUAGES:
        return gettext.NullTranslations()
    return gettext.translation(DOMAIN, localedir=str(LOCALE_DIR), languages=[code])
