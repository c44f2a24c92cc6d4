-- wrk script for bench/serve_bench.py: at the end of a run, one line "WRKJSON {...}" with
-- wrk's own counts and latency percentiles (microseconds), so that p99.9 and the exact
-- figures need no parsing of wrk's rounded text. Defines no request() or response()
-- hook: wrk then sends its prebuilt request and never copies a body into Lua, so the
-- script costs nothing while the load runs.
done = function(summary, latency, requests)
  local e = summary.errors
  io.write(string.format(
    'WRKJSON {"requests":%d,"duration_us":%d,"bytes":%d,' ..
    '"errors_connect":%d,"errors_read":%d,"errors_write":%d,"errors_status":%d,"errors_timeout":%d,' ..
    '"latency_min_us":%d,"latency_mean_us":%.1f,"latency_stdev_us":%.1f,"latency_max_us":%d,' ..
    '"p50_us":%d,"p75_us":%d,"p90_us":%d,"p99_us":%d,"p999_us":%d}\n',
    summary.requests, summary.duration, summary.bytes,
    e.connect, e.read, e.write, e.status, e.timeout,
    latency.min, latency.mean, latency.stdev, latency.max,
    latency:percentile(50), latency:percentile(75), latency:percentile(90),
    latency:percentile(99), latency:percentile(99.9)))
end
