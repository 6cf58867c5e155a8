# Multi-stage build: dependencies in one stage, a slim non-root runtime in the other, on Node 24
# LTS (the code also runs on Node 20; @types/node stays at 20 so nothing newer creeps in).
FROM node:24-bookworm-slim AS deps
WORKDIR /app
COPY package.json package-lock.json ./
# No lifecycle scripts here: `prepare` bundles src/, which this stage does not have (the runtime
# stage builds the bundles below); the packages need none of theirs (esbuild finds its platform
# binary package, msgpackr its prebuilt one).
RUN npm ci --omit=dev --no-audit --no-fund --ignore-scripts
# The speech detector runs on onnxruntime-node's bundled CPU build (its install script, which
# fetches GPU builds, is not run: --ignore-scripts here, allowScripts in package.json); only the
# Linux builds are kept.
# Its fallback, onnxruntime-web, needs only its Node entry and the one-thread SIMD WebAssembly
# (the files `earmark analyze --dialogue` reads, traced with strace); the browser and GPU builds
# beside them are 130 MB.
RUN find node_modules/onnxruntime-node/bin/napi-v6 -mindepth 1 -maxdepth 1 ! -name linux -exec rm -rf {} + \
 && find node_modules/onnxruntime-web/dist -type f ! -name package.json ! -name ort.node.min.mjs \
      ! -name ort-wasm-simd-threaded.mjs ! -name ort-wasm-simd-threaded.wasm -delete

FROM node:24-bookworm-slim AS runtime
ENV NODE_ENV=production
WORKDIR /app
COPY --from=deps /app/node_modules ./node_modules
COPY package.json ./
COPY bin ./bin
COPY src ./src
COPY workers ./workers
COPY openapi ./openapi
# The `earmark` command runs from plain-JavaScript bundles (faster start, less memory).
RUN node bin/build.js
RUN mkdir -p /data && chown node:node /data
USER node
ENV EARMARK_STORAGE_DIR=/data
EXPOSE 8080
# The API by default; the worker service in docker-compose.yml overrides the command.
CMD ["node", "bin/run.js", "workers/api.ts"]
