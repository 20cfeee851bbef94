#!/usr/bin/env python3
"""Serves a directory over HTTP with Python's standard-library server (http.server),
sending the precompressed sibling of a file when the browser accepts it: FILE.br with
`Content-Encoding: br`, else FILE.gz with `Content-Encoding: gzip`, else FILE itself.
The type is always that of FILE, responses vary on Accept-Encoding, and conditional
requests (If-Modified-Since) are answered with 304 as for plain files.

    static-server.py PORT DIR [--bind ADDRESS]    (ADDRESS defaults to 127.0.0.1)
"""

import argparse
import email.utils
import functools
import http.server
import os

# Content codings in order of preference, with the sibling's suffix.
CODINGS = (("br", ".br"), ("gzip", ".gz"))


def accepted_codings(header):
    """The content codings an Accept-Encoding header allows (q > 0), lower case."""
    out = set()
    for part in (header or "").split(","):
        fields = [f.strip() for f in part.split(";")]
        if not fields[0]:
            continue
        q = 1.0
        for f in fields[1:]:
            if f.lower().startswith("q="):
                try:
                    q = float(f[2:])
                except ValueError:
                    q = 0.0
        if q > 0:
            out.add(fields[0].lower())
    return out


class Handler(http.server.SimpleHTTPRequestHandler):
    def end_headers(self):
        self.send_header("Vary", "Accept-Encoding")
        super().end_headers()

    def send_head(self):
        path = self.translate_path(self.path)
        if os.path.isdir(path) and self.path.split("?", 1)[0].split("#", 1)[0].endswith("/"):
            path = os.path.join(path, "index.html")
        if not os.path.isfile(path):
            return super().send_head()
        accepted = accepted_codings(self.headers.get("Accept-Encoding"))
        for coding, suffix in CODINGS:
            if coding in accepted and os.path.isfile(path + suffix):
                return self.send_sibling(path, path + suffix, coding)
        return super().send_head()

    def send_sibling(self, path, sibling, coding):
        f = open(sibling, "rb")
        try:
            st = os.fstat(f.fileno())
            since = self.headers.get("If-Modified-Since")
            if since and "If-None-Match" not in self.headers:
                try:
                    when = email.utils.parsedate_to_datetime(since)
                except (TypeError, ValueError, IndexError, OverflowError):
                    when = None
                if when is not None and int(st.st_mtime) <= when.timestamp():
                    self.send_response(304)
                    self.end_headers()
                    f.close()
                    return None
            self.send_response(200)
            self.send_header("Content-Type", self.guess_type(path))
            self.send_header("Content-Encoding", coding)
            self.send_header("Content-Length", str(st.st_size))
            self.send_header("Last-Modified", self.date_time_string(st.st_mtime))
            self.end_headers()
            return f
        except BaseException:
            f.close()
            raise

    def log_message(self, format, *args):
        pass


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("port", type=int)
    parser.add_argument("directory")
    parser.add_argument("--bind", default="127.0.0.1")
    args = parser.parse_args()
    handler = functools.partial(Handler, directory=args.directory)
    with http.server.ThreadingHTTPServer((args.bind, args.port), handler) as server:
        server.serve_forever()


if __name__ == "__main__":
    main()
