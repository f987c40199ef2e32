"""The one exception the client raises for a refused or failed call."""
from __future__ import annotations

import grpc


class PlumblineError(Exception):
    """A call plumbd refused or that failed on the way.

    code is the grpc.StatusCode (NOT_FOUND for an unknown set,
    INVALID_ARGUMENT for a bad record, UNAUTHENTICATED, UNAVAILABLE, ...);
    message is plumbd's text, which names the set, record and feature.
    report: for Client.report_outcomes, the OutcomesReport of the call
    (which outcomes were accepted and which refused); None otherwise.
    """

    def __init__(self, code: grpc.StatusCode, message: str, method: str = ""):
        self.code = code
        self.message = message
        self.method = method
        self.report = None
        where = f"{method}: " if method else ""
        super().__init__(f"{where}{code.name}: {message}")

    @classmethod
    def from_rpc_error(cls, error: grpc.RpcError, method: str) -> "PlumblineError":
        code = error.code() if hasattr(error, "code") else grpc.StatusCode.UNKNOWN
        details = error.details() if hasattr(error, "details") else str(error)
        return cls(code, details or "", method)
