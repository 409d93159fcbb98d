"""The one project exception. It carries the key path, the value and what was expected."""


class ScenarioError(ValueError):
    """Bad input: names the field, the value given and what was expected.

    The command line prints ``str(error)`` as one line and exits with code 2; the page shows it.
    """

    def __init__(self, key: str, value, expected: str):
        self.key = key
        self.value = value
        self.expected = expected
        shown = repr(value) if not isinstance(value, str) else f'"{value}"'
        super().__init__(f"{key}: got {shown}, expected {expected}")
