# syntax=docker/dockerfile:1
# The ibl HTTP service: CPU only, non-root, `ibl serve` as entrypoint.
#
#   docker build -t ibl .
#   docker run --rm -p 8000:8000 -e IBL_WORKERS=2 ibl
#
# Offline build (no package index reachable): download the wheels of the pinned
# packages below into ./wheelhouse first, then build with
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
# Every runtime package, pinned: the versions the test suite and benchmarks ran with.
RUN --mount=type=bind,target=/ctx \
    /opt/venv/bin/pip install ${PIP_OPTIONS} --no-deps \
        anyio==4.16.0 \
        certifi==2026.10.19.post1 \
        click==8.5.1 \
        contourpy==1.3.3 \
        cycler==0.12.1 \
        Faker==40.63.0 \
        fonttools==4.68.0 \
        h11==0.16.0 \
        httpcore==1.0.9 \
        httptools==0.9.0 \
        httpx==0.28.1 \
        idna==3.20 \
        Jinja2==3.1.6 \
        kiwisolver==1.5.1 \
        litestar-htmx==0.5.0 \
        litestar==2.25.0 \
        llvmlite==0.50.0 \
        markdown-it-py==4.3.0 \
        MarkupSafe==3.0.4 \
        matplotlib==3.11.2 \
        mdurl==0.1.2 \
        msgspec==0.23.0 \
        multidict==7.2.1 \
        multipart==2.0.1 \
        numba==0.68.1 \
        numpy==2.4.6 \
        orjson==3.13.0 \
        packaging==26.2 \
        pillow==13.0.0 \
        polyfactory==3.5.0 \
        prometheus-client==0.26.0 \
        Pygments==2.21.0 \
        pyparsing==3.3.2 \
        python-dateutil==2.9.0.post0 \
        PyYAML==6.0.4 \
        rich-click==1.9.9 \
        rich==15.0.0 \
        scipy==1.17.1 \
        setuptools==84.2.1 \
        six==1.17.0 \
        sniffio==1.3.1 \
        swagger-ui-py==25.7.1 \
        tqdm==4.70.1 \
        typing-extensions==4.16.0 \
        uvicorn==0.54.0 \
        uvloop==0.23.0
# Only what the package needs: a wheelhouse in the build context stays out of /src.
COPY pyproject.toml README.md /src/
COPY ibl /src/ibl
COPY service /src/service
# The project itself, without resolving anything beyond the pins above.
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
RUN python -c "import service.app as app; app.warm_up(); import matplotlib.font_manager"
EXPOSE 8000
HEALTHCHECK --interval=30s --timeout=5s --start-period=60s --retries=3 \
    CMD ["python", "-c", "import os, urllib.request as u; u.urlopen('http://127.0.0.1:' + os.environ.get('IBL_PORT', '8000') + '/health/live', timeout=4)"]
ENTRYPOINT ["ibl", "serve"]
