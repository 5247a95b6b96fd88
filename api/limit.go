package api

import (
	"net/http"
	"strconv"
	"sync"

	"github.com/labstack/echo/v4"
)

// DefaultPerUser is how many requests one user may have running at once.
const DefaultPerUser = 8

// userLimiter counts each user's requests in flight.
type userLimiter struct {
	max     int
	mu      sync.Mutex
	running map[string]int
}

func newUserLimiter(max int) *userLimiter {
	return &userLimiter{max: max, running: map[string]int{}}
}

// acquire admits one more request of user, or reports false at the limit.
func (l *userLimiter) acquire(user string) (release func(), ok bool) {
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.running[user] >= l.max {
		return nil, false
	}
	l.running[user]++
	return func() {
		l.mu.Lock()
		defer l.mu.Unlock()
		if l.running[user]--; l.running[user] == 0 {
			delete(l.running, user)
		}
	}, true
}

// tooMany is the 429 for a user at the limit; errorHandler adds Retry-After.
func (l *userLimiter) tooMany() error {
	return echo.NewHTTPError(http.StatusTooManyRequests,
		"this user already has "+strconv.Itoa(l.max)+" requests running; wait for one to finish")
}
