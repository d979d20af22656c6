-- Closed-loop load for wrk (Debian's package), driven by tests/bench/wrk_load.py.
--
-- One connection per wrk thread (-t N -c N), so each thread is one client that
-- waits for its answer before the next request, as in tests/bench/loadgen.py.
-- The run lasts wrk's -d; at the end at most one request per client is in
-- flight, and the readings it carried are reported as in_flight_fields.
--
-- Arguments after `--`: mode (verify|readings|bare), path, body file
-- (verify/bare), comma-separated job ids (readings), round (interleaved runs).
-- Readings bodies: 1 to 10 lines of one board, values unique to (round, client, n),
-- two readings per line; a post that gets a 200 counts its readings in fields_sent.

local threads = {}

function setup(thread)
  thread:set("index", #threads)
  table.insert(threads, thread)
end

function init(args)
  mode = args[1]
  path = args[2]
  local body_file = args[3] or ""
  jobs = {}
  for job in string.gmatch(args[4] or "", "[^,]+") do
    table.insert(jobs, job)
  end
  if body_file ~= "" then
    local f = assert(io.open(body_file, "rb"))
    static_body = f:read("*a")
    f:close()
  end
  local round = tonumber(args[5] or "0") or 0
  sent, ok, fields_sent, pending = 100000 * round, 0, 0, 0
  statuses = {}
  math.randomseed(index + 1 + 1000 * round)
end

function request()
  sent = sent + 1
  if mode == "readings" then
    local lines = {}
    local count = math.random(1, 10)
    for i = 1, count do
      local zs = 0.3 + ((index * 7919 + sent * 13 + i) % 997) / 1000
      lines[i] = string.format("board=DB%d circuit=%d zs=%.3fΩ r1r2=%.4f",
                               index % 4 + 1, math.random(1, 48), zs, zs / 3)
    end
    pending = 2 * count
    local job = jobs[(index % #jobs) + 1]
    return wrk.format("POST", "/v1/jobs/" .. job .. "/readings",
                      {["Content-Type"] = "text/plain; charset=utf-8"}, table.concat(lines, "\n") .. "\n")
  end
  pending = 0
  return wrk.format("POST", path, {["Content-Type"] = "application/json"}, static_body)
end

function response(status, headers, body)
  local key = tostring(status)
  statuses[key] = (statuses[key] or 0) + 1
  if status == 200 then
    ok = ok + 1
    fields_sent = fields_sent + pending
  end
  pending = 0
end

function done(summary, latency, requests)
  local total_ok, fields, in_flight, merged = 0, 0, 0, {}
  for _, thread in ipairs(threads) do
    total_ok = total_ok + thread:get("ok")
    fields = fields + thread:get("fields_sent")
    in_flight = in_flight + thread:get("pending")
    for key, count in pairs(thread:get("statuses")) do
      merged[key] = (merged[key] or 0) + count
    end
  end
  local parts = {}
  for key, count in pairs(merged) do
    table.insert(parts, string.format('"%s": %d', key, count))
  end
  local errors = summary.errors
  io.write(string.format(
    'OHMTALLY-REPORT {"requests": %d, "ok": %d, "fields_sent": %d, "in_flight_fields": %d, '
    .. '"duration_us": %d, "p50_us": %d, "p99_us": %d, "socket_errors": %d, "statuses": {%s}}\n',
    summary.requests, total_ok, fields, in_flight, summary.duration, latency:percentile(50), latency:percentile(99),
    errors.connect + errors.read + errors.write + errors.timeout, table.concat(parts, ", ")))
end
