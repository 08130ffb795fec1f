# earshot image for docker-compose.yml (API and workers run the same image).
FROM node:20-bookworm-slim
WORKDIR /app
COPY package.json package-lock.json ./
RUN npm ci --no-audit --no-fund
COPY . .
RUN node scripts/prisma-generate.mjs && node scripts/build-server.mjs && if [ -f web/index.html ]; then (cd web && npx vite build --logLevel warn); fi
# MALLOC_ARENA_MAX=2: glibc's per-thread malloc arenas kept freed buffers resident (see
# server/report/README.md, report memory); npm start and npm run worker set it too.
ENV NODE_ENV=production HOST=0.0.0.0 PORT=8080 EARSHOT_DATA_DIR=/data MALLOC_ARENA_MAX=2
EXPOSE 8080
CMD ["npm", "start"]
