"""Small middleware of our own."""

from __future__ import annotations


class ApiNoStoreMiddleware:
    """API responses carry records that may be confidential: never store them in caches."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        response = self.get_response(request)
        if request.path.startswith("/api/"):
            response["Cache-Control"] = "no-store"
            response.setdefault("Pragma", "no-cache")
        return response
