# syntax=docker/dockerfile:1
# The ibl HTTP service: CPU only, non-root, `ibl serve` as entrypoint.
#
#   docker build -t ibl .
#   docker run --rm -p 8000:8000 -e IBL_WORKERS=2 ibl
#
# Every runtime package comes from requirements/container.lock (versions and hashes, made
# by `uv pip compile`; its first lines say how to regenerate it).
# Offline build (no package index reachable): download the locked wheels first,
#   pip download --no-deps --only-binary=:all: -d wheelhouse -r requirements/container.lock
# (with --platform/--python-version options off a Linux x86_64 Python 3.11 host), then build with
#   --build-arg PIP_OPTIONS="--no-index --find-links /ctx/wheelhouse"
# The wheelhouse is only mounted into the build stage; it never reaches the image.

ARG BASE_IMAGE=python:3.11-slim

# ---------------------------------------------------------------------------- build
FROM ${BASE_IMAGE} AS build
ARG PIP_OPTIONS=
ENV PIP_DISABLE_PIP_VERSION_CHECK=1 \
    PIP_NO_CACHE_DIR=1 \
    PYTHONDONTWRITEBYTECODE=1
RUN python3 -m venv /opt/venv
# Every runtime package, pinned with hashes: the versions the test suite and benchmarks ran with.
RUN --mount=type=bind,target=/ctx \
    /opt/venv/bin/pip install ${PIP_OPTIONS} --no-deps --require-hashes \
        -r /ctx/requirements/container.lock
# Only what the package needs: a wheelhouse in the build context stays out of /src.
COPY pyproject.toml README.md /src/
COPY ibl /src/ibl
COPY service /src/service
# The project itself, without resolving anything beyond the lock.
RUN /opt/venv/bin/pip install --no-deps --no-build-isolation /src \
 && /opt/venv/bin/pip check

# ---------------------------------------------------------------------------- runtime
FROM ${BASE_IMAGE}
RUN useradd --create-home --home-dir /home/ibl --uid 10001 --user-group ibl
COPY --from=build /opt/venv /opt/venv
ENV PATH=/opt/venv/bin:$PATH \
    PYTHONUNBUFFERED=1 \
    PYTHONDONTWRITEBYTECODE=1 \
    NUMBA_CACHE_DIR=/home/ibl/.cache/numba \
    IBL_HOST=0.0.0.0 \
    IBL_PORT=8000
USER 10001:10001
WORKDIR /home/ibl
# Compile the library's kernels once now, so that workers start in seconds, and build
# matplotlib's font cache, so that the first figure does not wait for it.
RUN python -c "import ibl_service.app as app; app.warm_up(); import matplotlib.font_manager"
EXPOSE 8000
HEALTHCHECK --interval=30s --timeout=5s --start-period=60s --retries=3 \
    CMD ["python", "-c", "import os, urllib.request as u; u.urlopen('http://127.0.0.1:' + os.environ.get('IBL_PORT', '8000') + '/health/live', timeout=4)"]
ENTRYPOINT ["ibl", "serve"]
