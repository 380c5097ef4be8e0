# One image for every Isentrope service; the command line chooses what a container runs.
FROM node:20-bookworm-slim
ENV NODE_ENV=production
WORKDIR /app
COPY package.json package-lock.json .npmrc ./
COPY packages ./packages
COPY services ./services
COPY migrations ./migrations
RUN npm ci --no-audit --no-fund && npm cache clean --force
USER node
EXPOSE 8080
ENTRYPOINT ["node", "services/cli/bin/isentrope.js"]
CMD ["start"]
