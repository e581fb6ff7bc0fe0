# Build the service and run it against an external PostgreSQL (DATABASE_URL).
FROM golang:1.26-bookworm AS build
WORKDIR /src
COPY go.mod go.sum ./
RUN go mod download
COPY . .
RUN CGO_ENABLED=0 go build -trimpath -o /out/rotorwright ./cmd/rotorwright

FROM debian:bookworm-slim
RUN useradd --system --home /var/lib/rotorwright rotorwright
COPY --from=build /out/rotorwright /usr/local/bin/rotorwright
USER rotorwright
ENV ROTORWRIGHT_ADDR=0.0.0.0:8080
EXPOSE 8080
ENTRYPOINT ["rotorwright"]
CMD ["serve"]
