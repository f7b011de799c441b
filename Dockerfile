# One image for web, worker and beat.
FROM python:3.12-slim
ENV PYTHONDONTWRITEBYTECODE=1 PYTHONUNBUFFERED=1
WORKDIR /app
# The runtime lock (make lock): the same versions as CI, every file checked against its hash.
COPY requirements/base.txt ./requirements/base.txt
RUN pip install --no-cache-dir --require-hashes -r requirements/base.txt
COPY . .
RUN pip install --no-cache-dir --no-deps .
RUN SECRET_KEY=build-only-collectstatic-key-not-used-at-run-time-0123456789 \
    LEDGER_SIGNING_KEY=build-only-collectstatic-ledger-key-not-used-at-run-time-01234 \
    python manage.py collectstatic --no-input
RUN useradd --system --uid 1000 fleetfuel && chown -R fleetfuel /app
USER fleetfuel
EXPOSE 8000
CMD ["gunicorn", "fleetfuel.wsgi", "--bind", "0.0.0.0:8000", "--worker-class", "gthread", "--workers", "2", "--threads", "4", "--timeout", "120"]
