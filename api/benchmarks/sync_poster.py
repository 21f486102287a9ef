"""The second field client of ``bench sync``, run in a process of its own.

Spawned processes import this module before Django is set up, so it imports
nothing of Django at the top.
"""

from __future__ import annotations

import os
import time


def post_until_stopped(base: str, key: str, tops: list[str], stop, ready, results) -> None:
    """Another client: new contexts and relationships, one post each, until told to stop.

    Sets ``ready`` after five posts.  Puts on ``results`` the (start, end) wall-clock times of every post.
    """
    import django

    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "config.settings")
    django.setup()
    from django.conf import settings
    from django.test.utils import override_settings as override
    from rest_framework.test import APIClient

    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    spans = []
    k = 0
    with override(DEBUG=False, REST_FRAMEWORK={**settings.REST_FRAMEWORK, "DEFAULT_THROTTLE_CLASSES": []}):
        while not stop.is_set():
            label = f"P{os.getpid()}-{k}"
            # Both posts count: either may be the one that waits for the batch's lock.
            for url, body in ((f"{base}/contexts/", {"label": label, "kind": "deposit", "area": "other"}),
                              (f"{base}/relationships/", {"subject": label, "type": "above",
                                                          "object": tops[k % len(tops)]})):
                t0 = time.time()
                response = client.post(url, body, format="json")
                spans.append((t0, time.time()))
                if response.status_code >= 300:
                    raise RuntimeError(f"single post refused: {response.status_code} {response.content[:300]}")
            k += 1
            if k == 5:
                ready.set()  # warm: its order is cached and its connection open
    results.put(spans)
