"""HTTP service for ibl: a thin Litestar layer over the library.

Contents
--------
- ``ibl_service.app``: routes and ``create_app(settings)``, the application factory.
- ``ibl_service.config``: ``Settings``, the limits, read from ``IBL_*`` variables.
- ``ibl_service.wire``: envelopes and RFC 9457 problem details on the wire.
- ``ibl_service.errors``: kinds of problem and the one exception-to-response table.
- ``ibl_service.codec``: bodies to library types and back, non-finite numbers kept out.
- ``ibl_service.work``: what each analysis endpoint does, run off the event loop.
- ``ibl_service.runner``: worker threads, queue bound and time limit.
- ``ibl_service.metrics``: Prometheus request metrics, merged across workers.
- ``ibl_service.openapi``: the OpenAPI document; ``python -m ibl_service.openapi`` writes it.
- ``ibl_service.serve``: ``ibl serve``, the multi-worker launcher.

Nothing is imported here, so that ``ibl_service.serve`` can set up the environment
before any worker imports the application.
"""

__all__: list[str] = []
