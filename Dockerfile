FROM python:3.11-slim
WORKDIR /srv/shoalcast
COPY pyproject.toml README.md alembic.ini ./
COPY app ./app
COPY models ./models
COPY migrations ./migrations
RUN pip install --no-cache-dir -e .
EXPOSE 8000
CMD ["shoalcast", "serve", "--host", "0.0.0.0", "--port", "8000"]
