FROM python:3.11-slim
ENV PYTHONDONTWRITEBYTECODE=1 PYTHONUNBUFFERED=1
WORKDIR /app
COPY requirements.txt .
RUN pip install --no-cache-dir -r requirements.txt
COPY . .
# The one production build (CI runs the same script).
RUN PYTHON=python sh bin/build
ENV WEB_BIND=0.0.0.0:8000
EXPOSE 8000
# Workers, timeout and the rest: gunicorn.conf.py.
CMD ["sh", "-c", "python manage.py migrate --noinput && gunicorn fleetcare.wsgi:application"]
