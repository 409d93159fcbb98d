"""The one project exception. It carries the key path, the value and what was expected."""

MAX_SHOWN_CHARS = 60   # of the bad value, in a message; the rest is counted, not printed
MAX_KEY_CHARS = 200  # of the key path; a longer one keeps its end (the column or key name)


def shown(value, limit: int = MAX_SHOWN_CHARS) -> str:
    """A value as one line for a message: strings quoted with control characters escaped, at most
    `limit` characters of it (its start and its end, which for a path is the file's name), and the
    length when it was cut."""
    text = value if isinstance(value, str) else repr(value)
    if len(text) > 4 * limit:
        text_for_message = text[:limit] + text[-limit:]
    else:
        text_for_message = text
    escaped = (text_for_message if text_for_message.isprintable()
               else text_for_message.encode("unicode_escape").decode("ascii"))
    head = limit * 2 // 5
    cut = (escaped if len(escaped) <= limit and text_for_message is text
           else f"{escaped[:head]}…{escaped[-(limit - head):]} ({len(text)} characters)")
    return f'"{cut}"' if isinstance(value, str) else cut


class ScenarioError(ValueError):
    """Bad input: names the field, the value given and what was expected.

    The command line prints ``str(error)`` as one line and exits with code 2; the page shows it.
    The value is quoted on one line, at most MAX_SHOWN_CHARS characters of it.
    """

    def __init__(self, key: str, value, expected: str):
        self.key = key
        self.value = value
        self.expected = expected
        key_text = shown(str(key), 10**6)[1:-1]
        if len(key_text) > MAX_KEY_CHARS:
            key_text = "…" + key_text[-MAX_KEY_CHARS:]
        expected_text = " ".join(str(expected).split())
        super().__init__(f"{key_text}: got {shown(value)}, expected {expected_text}")

    def __reduce__(self):   # so that it pickles whole
        return type(self), (self.key, self.value, self.expected)
