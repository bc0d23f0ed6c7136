"""The one check every adapter makes on a reference's parameters."""
from ..errors import DatasetError, did_you_mean


def refuse_unknown(ref, allowed):
    """DatasetError for the first parameter the adapter does not take, naming the allowed ones."""
    extra = sorted(set(ref.params) - set(allowed))
    if extra:
        raise DatasetError(f"{ref.text}: unknown parameter {extra[0]!r}{did_you_mean(extra[0], allowed)}; "
                           f"allowed: {', '.join(sorted(allowed))}")
