# syntax=docker/dockerfile:1
# Peel service image: API (`node dist/api/main.js`) and workers (`node dist/worker/main.js`) from one image.

# ——— build: install everything, compile TypeScript, then drop dev dependencies ———
FROM node:20-bookworm-slim AS build
WORKDIR /app
COPY package.json package-lock.json ./
RUN npm ci --no-audit --no-fund
COPY . .
RUN npm run build && npm prune --omit=dev

# ——— runtime: compiled code, production dependencies and the rule sets only ———
FROM node:20-bookworm-slim AS runtime
ENV NODE_ENV=production \
    PORT=8080 \
    WORKER_METRICS_PORT=9464
WORKDIR /app
COPY --from=build --chown=node:node /app/package.json /app/package-lock.json ./
COPY --from=build --chown=node:node /app/node_modules ./node_modules
COPY --from=build --chown=node:node /app/dist ./dist
COPY --from=build --chown=node:node /app/rules ./rules
COPY --from=build --chown=node:node /app/web ./web
USER node
EXPOSE 8080 9464
# The API answers /readyz on PORT; a worker container overrides this check (see docker-compose.yml).
HEALTHCHECK --interval=10s --timeout=3s --start-period=20s --retries=3 \
  CMD node -e "fetch('http://127.0.0.1:'+process.env.PORT+'/readyz').then(r=>process.exit(r.ok?0:1),()=>process.exit(1))"
STOPSIGNAL SIGTERM
CMD ["node", "dist/api/main.js"]
