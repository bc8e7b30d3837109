# recallscape as a container image: the same package `npm pack` makes, with
# production dependencies only, run by an unprivileged user.
#
#   docker build -t recallscape .
#   docker run --rm recallscape --version
#   docker run --rm --user "$(id -u):$(id -g)" -v "$PWD:/work" recallscape run my-sweep.yaml
#
# /work is the working folder (mount yours there: sweep files in, results/ out);
# /results is where docker-compose.yml mounts its shared results volume.
#
# docker-compose.yml builds and uses this image.

# --- build: compile the TypeScript and pack it exactly as `npm pack` does ---
FROM node:20-bookworm-slim AS build
WORKDIR /src
COPY package.json package-lock.json ./
# No dependency needs its install script: the message-pack add-on ships prebuilt.
RUN npm ci --ignore-scripts --no-audit --no-fund
COPY tsconfig.json ./
COPY bin ./bin
COPY shared ./shared
COPY worker ./worker
COPY coordinator ./coordinator
COPY examples ./examples
# `npm pack` runs the prepack build; unpacking gives the files package.json lists, nothing else.
RUN npm pack --pack-destination /tmp \
  && mkdir -p /opt/recallscape \
  && tar -xzf /tmp/recallscape-*.tgz -C /opt/recallscape --strip-components=1 \
  && cp package-lock.json /opt/recallscape/

# --- production dependencies, from the lock file ---
FROM node:20-bookworm-slim AS deps
WORKDIR /opt/recallscape
COPY --from=build /opt/recallscape/package.json /opt/recallscape/package-lock.json ./
RUN npm ci --omit=dev --ignore-scripts --no-audit --no-fund

# --- runtime ---
FROM node:20-bookworm-slim
# PNG diagrams need one system font for their labels.
RUN apt-get update \
  && apt-get install -y --no-install-recommends fonts-dejavu-core \
  && rm -rf /var/lib/apt/lists/*
ENV NODE_ENV=production
WORKDIR /opt/recallscape
COPY --from=build /opt/recallscape ./
COPY --from=deps /opt/recallscape/node_modules ./node_modules
# The command on the PATH, as `npm install -g` would link it. /work and /results
# belong to the unprivileged user, so a fresh named volume mounted there is writable.
RUN ln -s /opt/recallscape/bin/recallscape.js /usr/local/bin/recallscape \
  && mkdir /work /results \
  && chown node:node /work /results
USER node
WORKDIR /work
ENTRYPOINT ["recallscape"]
CMD ["--help"]
