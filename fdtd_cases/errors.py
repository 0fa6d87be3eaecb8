"""The one error type for bad input, carrying the file and the key path, and the hint a message gives."""

import difflib


class CaseError(Exception):
    """Bad input in a case file (or on the command line).

    Parameters
    ----------
    source : str
        The file the input came from (or a description such as ``"command line"``).
    key : str
        Dotted key path inside the file, for example ``"surface.period"``;
        empty when the problem is with the file as a whole.
    message : str
        What is wrong and what is allowed.
    """

    def __init__(self, source, key, message):
        self.source = str(source)
        self.key = key
        self.message = message
        super().__init__(str(self))

    def __str__(self):
        where = f"{self.source}: {self.key}" if self.key else self.source
        return f"{where}: {self.message}"


def did_you_mean(word, allowed):
    """"did you mean X? " for the allowed name closest to a misspelled ``word``, else "" (difflib, ratio 0.6)."""
    close = difflib.get_close_matches(str(word), list(allowed), n=1, cutoff=0.6)
    return f"did you mean {close[0]}? " if close else ""
