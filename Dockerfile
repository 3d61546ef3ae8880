# The vetscore binary alone on an empty image. Build the static binary first:
#   bash scripts/build_release.sh x86_64-unknown-linux-musl
#   docker build -t vetscore .
# Run: docker run --rm -v "$PWD:/work" -w /work vetscore check 'runs/*.yaml'
FROM scratch
COPY target/x86_64-unknown-linux-musl/dist/vetscore /vetscore
USER 65534:65534
ENTRYPOINT ["/vetscore"]
