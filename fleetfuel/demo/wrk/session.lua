-- fleetfuel's load run (fleetfuel/demo/loadrun.py) hands wrk this script. Each request carries
-- the signed-in session's cookie; with FLEETFUEL_BODY set it is a POST (an htmx task save)
-- with the CSRF token. Paths rotate through FLEETFUEL_PATHS (space separated). At the end one
-- line "WRKJSON {...}" sums the run, answers other than 200 counted as errors.
local cookie = os.getenv("FLEETFUEL_COOKIE") or ""
local csrf = os.getenv("FLEETFUEL_CSRF") or ""
local body = os.getenv("FLEETFUEL_BODY")
local paths = {}
for p in string.gmatch(os.getenv("FLEETFUEL_PATHS") or "/", "%S+") do
  paths[#paths + 1] = p
end

local threads = {}
function setup(thread)
  thread:set("id", #threads)
  threads[#threads + 1] = thread
end

function init(args)
  n = id or 0
  not_ok = 0
end

function request()
  n = n + 1
  local path = paths[(n % #paths) + 1]
  local headers = { ["Cookie"] = cookie, ["Host"] = "127.0.0.1" }
  if body then
    headers["X-CSRFToken"] = csrf
    headers["HX-Request"] = "true"
    headers["Content-Type"] = "application/x-www-form-urlencoded"
    return wrk.format("POST", path, headers, body)
  end
  return wrk.format("GET", path, headers)
end

function response(status, headers, body)
  if status ~= 200 then
    not_ok = not_ok + 1
  end
end

function done(summary, latency, requests)
  local not_ok_total = 0
  for _, thread in ipairs(threads) do
    not_ok_total = not_ok_total + (thread:get("not_ok") or 0)
  end
  local e = summary.errors
  io.write(string.format(
    'WRKJSON {"requests": %d, "duration_us": %d, "p50_us": %d, "p99_us": %d, ' ..
    '"connect": %d, "read": %d, "write": %d, "timeout": %d, "not_200": %d}\n',
    summary.requests, summary.duration, latency:percentile(50), latency:percentile(99),
    e.connect, e.read, e.write, e.timeout, not_ok_total))
end
