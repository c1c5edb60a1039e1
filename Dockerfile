# Build: docker build -t ebb .
# Run:   docker run -p 8080:8080 -v ebb-data:/data ebb serve --demo
# Base images are pinned by digest, so a rebuild uses the same bytes. These
# digests were copied from public Dockerfiles on 2026-12-02 (this build
# machine cannot reach the registries to check them); refresh both with
# `docker buildx imagetools inspect IMAGE:TAG` when upgrading.
FROM golang:1.26-bookworm@sha256:9fdc884aacc3bec89b20ffc69f4bb369c78210e3e4f600387b5128b12c199f81 AS build
WORKDIR /src
COPY go.mod go.sum ./
RUN go mod download
COPY . .
RUN CGO_ENABLED=0 go build -trimpath -ldflags="-s -w" -o /out/ebb ./cmd/ebb && mkdir -p /out/data

FROM gcr.io/distroless/static-debian12:nonroot@sha256:afa5c872c891853ca7fcf1f12c3edb23f7eeef36189728842dd51042ff57f7ab
COPY --from=build /out/ebb /usr/local/bin/ebb
COPY --from=build --chown=65532:65532 /out/data /data
# The database lives on a volume; the image runs as the distroless nonroot user.
VOLUME /data
ENV EBB_DB=/data/ebb.db \
    EBB_ADDR=0.0.0.0:8080
EXPOSE 8080
USER nonroot:nonroot
HEALTHCHECK --interval=30s --timeout=3s --start-period=20s CMD ["/usr/local/bin/ebb", "health"]
ENTRYPOINT ["/usr/local/bin/ebb"]
CMD ["serve"]
