"""HTTP service for ibl: a thin Litestar layer over the library.

Contents
--------
- ``service.app``: routes and ``create_app(settings)``, the application factory.
- ``service.config``: ``Settings``, the limits, read from ``IBL_*`` variables.
- ``service.wire``: envelopes and RFC 9457 problem details on the wire.
- ``service.errors``: kinds of problem and the one exception-to-response table.
- ``service.codec``: bodies to library types and back, non-finite numbers kept out.
- ``service.work``: what each analysis endpoint does, run off the event loop.
- ``service.runner``: worker threads, queue bound and time limit.
- ``service.metrics``: Prometheus request metrics, merged across workers.
- ``service.openapi``: the OpenAPI document; ``python -m service.openapi`` writes it.
- ``service.serve``: ``ibl serve``, the multi-worker launcher.

Nothing is imported here, so that ``service.serve`` can set up the environment
before any worker imports the application.
"""

__all__: list[str] = []
