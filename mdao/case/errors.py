"""The error every bad case input raises."""

#: Longest line of a message [characters]; a longer line is cut with "...".
MAX_LINE = 400
#: Most errors a case reports at once.
MAX_ERRORS = 20


def _safe_line(line):
    """A message line with control characters escaped and its length bounded."""
    if not line.isprintable():
        line = "".join(c if c.isprintable() else repr(c)[1:-1] for c in line)
    return line if len(line) <= MAX_LINE else line[:MAX_LINE - 3] + "..."


class CaseError(ValueError):
    """Bad case input; the message names the key, the value and what is allowed.

    Every line of the message has its control characters escaped and is cut to
    :data:`MAX_LINE` characters, whatever the caller put in it (values typed by the user reach
    the terminal and the reports only through such messages).
    """

    def __init__(self, message="", *args):
        lines = str(message).split("\n")
        super().__init__("\n".join(_safe_line(line) for line in lines), *args)

    @classmethod
    def joined(cls, errors, where="the case"):
        """One error from several (each a CaseError or message), one per line, the first line
        ``"N errors in WHERE:"``; a single error is returned as it is."""
        messages = [str(e) for e in errors]
        if len(messages) == 1:
            return errors[0] if isinstance(errors[0], CaseError) else cls(messages[0])
        head = f"{len(messages)} errors in {where}:"
        if len(messages) > MAX_ERRORS:
            messages = messages[:MAX_ERRORS] + [f"... and {len(messages) - MAX_ERRORS} more"]
        return cls("\n".join([head] + [f"- {m}" for m in messages]))
