# Build: a static binary (the SQLite driver is pure Go, so no C toolchain is
# needed). deploy/verify runs this stage's go build with the same flags and
# checks that the result is static, stripped and free of build paths.
FROM golang:1.26-bookworm AS build
WORKDIR /src
COPY go.mod go.sum ./
RUN go mod download
COPY . .
RUN CGO_ENABLED=0 go build -trimpath -ldflags='-s -w' -o /out/veneer ./cmd/veneer

# Run: no shell, no package manager, a non-root user. The user is given by
# number (65532, the image's "nonroot" user) so that Kubernetes can check
# runAsNonRoot without looking inside the image.
FROM gcr.io/distroless/static-debian12:nonroot
COPY --from=build /out/veneer /usr/local/bin/veneer
USER 65532:65532
EXPOSE 7531
ENTRYPOINT ["/usr/local/bin/veneer", "serve"]
CMD ["--listen", "0.0.0.0:7531"]
