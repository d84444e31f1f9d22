# streamfence monitor image. Build: docker build -t streamfence .   Run: see docker-compose.yml.

# --- build: compile TypeScript, then drop dev dependencies ---
FROM node:20-bookworm-slim AS build
WORKDIR /app
COPY package.json package-lock.json ./
# --ignore-scripts: the "prepare" build needs the sources, which are copied only after the (cached) install.
RUN npm ci --ignore-scripts
COPY tsconfig.json tsconfig.build.json ./
COPY libs ./libs
COPY services ./services
RUN npm run build && npm prune --omit=dev

# --- run: only package.json, production node_modules and the compiled output ---
FROM node:20-bookworm-slim
ENV NODE_ENV=production \
    STREAMFENCE_METRICS_PORT=9321
WORKDIR /app
COPY --from=build /app/package.json ./
COPY --from=build /app/node_modules ./node_modules
COPY --from=build /app/dist ./dist
USER node
EXPOSE 9321
ENTRYPOINT ["node", "dist/services/cli/main.js"]
CMD ["--help"]
