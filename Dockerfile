# haarline REST service. Build: docker build -t haarline .
# Run:   docker run -p 8000:8000 -v haarline-data:/data haarline
# Keys:  docker run --rm -v haarline-data:/data haarline haarline keys add my-bot
FROM python:3.11-slim

ENV PYTHONDONTWRITEBYTECODE=1 \
    PYTHONUNBUFFERED=1 \
    PIP_NO_CACHE_DIR=1 \
    HAARLINE_DATA_DIR=/data \
    HAARLINE_HOST=0.0.0.0 \
    HAARLINE_PORT=8000

RUN useradd --create-home --uid 10001 haarline \
    && mkdir -p /data && chown haarline:haarline /data

WORKDIR /app
COPY pyproject.toml setup.py README.md ./
COPY analysis ./analysis
COPY service ./service
# exactly what `make run` installs (the package and its dependencies, no extras)
RUN python -m pip install .

USER 10001
VOLUME ["/data"]
EXPOSE 8000
HEALTHCHECK --interval=30s --timeout=5s --start-period=20s --retries=3 \
    CMD ["python", "-c", "import urllib.request, sys; sys.exit(0 if urllib.request.urlopen('http://127.0.0.1:8000/healthz', timeout=4).status == 200 else 1)"]
CMD ["haarline", "serve"]
